package main

// predictPlot draws with gonum/plot directly for now; the lead will switch
// it to package plots.

import (
	"fmt"
	"image/color"
	"io"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"

	"deflect/lensmodel"
)

var (
	predictCriticalColour = color.RGBA{R: 0x1b, G: 0x4f, B: 0x8a, A: 0xff} // deep blue
	predictCausticColour  = color.RGBA{R: 0xb3, G: 0x47, B: 0x1d, A: 0xff} // brick
	predictImageColour    = color.RGBA{R: 0x2a, G: 0x2a, B: 0x2a, A: 0xff}
	predictSourceColour   = color.RGBA{R: 0xc8, G: 0x1d, B: 0x6e, A: 0xff} // magenta
)

// predictPlot writes a PNG of the critical curves (solid), caustics
// (dashed), the source (star) and the images (filled circles for positive
// parity, open for saddles), in arcsec with east to the left and north up
// at equal aspect.
func predictPlot(w io.Writer, curves []lensmodel.Curve, r *predictResult) error {
	p, err := predictPlotMake(curves, r)
	if err != nil {
		return err
	}
	const side = 5 * vg.Inch
	c := vgimg.NewWith(vgimg.UseWH(side, side), vgimg.UseDPI(144))
	p.Draw(draw.New(c))
	_, err = vgimg.PngCanvas{Canvas: c}.WriteTo(w)
	return err
}

// predictPlotMake builds the figure of predictPlot.
func predictPlotMake(curves []lensmodel.Curve, r *predictResult) (*plot.Plot, error) {
	p := plot.New()
	p.Title.Text = fmt.Sprintf("source (%.3g, %.3g)″: %d images", r.SourceX, r.SourceY, len(r.Images))
	p.X.Label.Text = "x (arcsec, east ←)"
	p.Y.Label.Text = "y (arcsec, north ↑)"
	p.X.Scale = plot.InvertedScale{Normalizer: plot.LinearScale{}}

	lo, hi := math.Inf(1), math.Inf(-1)
	grow := func(x, y float64) {
		lo, hi = math.Min(lo, math.Min(x, y)), math.Max(hi, math.Max(x, y))
	}
	var cx, cy []float64
	grow(r.SourceX, r.SourceY)
	cx, cy = append(cx, r.SourceX), append(cy, r.SourceY)
	first := [2]bool{true, true}
	for _, c := range curves {
		for k, pl := range []lensmodel.Polyline{c.Image, c.Source} {
			if pl.Len() < 2 {
				continue
			}
			xy := make(plotter.XYs, 0, pl.Len()+1)
			for i := range pl.X {
				xy = append(xy, plotter.XY{X: pl.X[i], Y: pl.Y[i]})
				grow(pl.X[i], pl.Y[i])
			}
			if c.Closed {
				xy = append(xy, xy[0])
			}
			l, err := plotter.NewLine(xy)
			if err != nil {
				return nil, err
			}
			l.Width = vg.Points(1)
			l.Color = predictCriticalColour
			if k == 1 {
				l.Color = predictCausticColour
				l.Dashes = []vg.Length{vg.Points(4), vg.Points(2)}
			}
			p.Add(l)
			if first[k] {
				p.Legend.Add([]string{"critical curves", "caustics"}[k], l)
				first[k] = false
			}
		}
	}
	for _, parity := range []int{1, -1} {
		var xy plotter.XYs
		for _, im := range r.Images {
			if im.Parity == parity {
				xy = append(xy, plotter.XY{X: im.X, Y: im.Y})
				grow(im.X, im.Y)
			}
		}
		if len(xy) == 0 {
			continue
		}
		s, err := plotter.NewScatter(xy)
		if err != nil {
			return nil, err
		}
		s.GlyphStyle = draw.GlyphStyle{Color: predictImageColour, Radius: vg.Points(3.5), Shape: draw.CircleGlyph{}}
		label := "images, μ > 0"
		if parity < 0 {
			s.GlyphStyle.Shape = draw.RingGlyph{}
			label = "images, μ < 0"
		}
		p.Add(s)
		p.Legend.Add(label, s)
	}
	src, err := plotter.NewScatter(plotter.XYs{{X: cx[0], Y: cy[0]}})
	if err != nil {
		return nil, err
	}
	src.GlyphStyle = draw.GlyphStyle{Color: predictSourceColour, Radius: vg.Points(4), Shape: draw.CrossGlyph{}}
	p.Add(src)
	p.Legend.Add("source", src)
	p.Legend.Top = true
	p.Legend.TextStyle.Font.Size = vg.Points(8)

	// Equal aspect: the same span on both axes on a square canvas, centred
	// on the drawn content.
	if !(hi > lo) {
		lo, hi = lo-1, hi+1
	}
	var xmin, xmax, ymin, ymax = math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	for _, c := range curves {
		for _, pl := range []lensmodel.Polyline{c.Image, c.Source} {
			for i := range pl.X {
				xmin, xmax = math.Min(xmin, pl.X[i]), math.Max(xmax, pl.X[i])
				ymin, ymax = math.Min(ymin, pl.Y[i]), math.Max(ymax, pl.Y[i])
			}
		}
	}
	for _, im := range r.Images {
		xmin, xmax = math.Min(xmin, im.X), math.Max(xmax, im.X)
		ymin, ymax = math.Min(ymin, im.Y), math.Max(ymax, im.Y)
	}
	xmin, xmax = math.Min(xmin, r.SourceX), math.Max(xmax, r.SourceX)
	ymin, ymax = math.Min(ymin, r.SourceY), math.Max(ymax, r.SourceY)
	half := 0.6 * math.Max(xmax-xmin, ymax-ymin)
	if !(half > 0) {
		half = 1
	}
	mx, my := (xmin+xmax)/2, (ymin+ymax)/2
	p.X.Min, p.X.Max = mx-half, mx+half
	p.Y.Min, p.Y.Max = my-half, my+half
	p.Add(plotter.NewGrid())
	return p, nil
}
