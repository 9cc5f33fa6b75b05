package main

import (
	"image/color"
	"io"
	"math"
	"strconv"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/palette/moreland"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	_ "gonum.org/v1/plot/vg/vgimg"
	_ "gonum.org/v1/plot/vg/vgpdf"
	_ "gonum.org/v1/plot/vg/vgsvg"

	"deflect/internal/atomicfile"
	"deflect/uv"
)

// This is a minimal figure of a sky image, drawn here until package plots
// provides the project's dirty-image figure.

// skyGrid presents an image on a uv.Grid to plotter.HeatMap in FITS column
// order, with the plot's x coordinate −Δx: increasing to the right, so east
// (positive Δx) is on the left; the tick labels undo the sign.
type skyGrid struct {
	g     uv.Grid
	data  []float64
	scale float64
}

func (s skyGrid) Dims() (c, r int) { return s.g.N, s.g.N }
func (s skyGrid) Z(c, r int) float64 {
	return s.scale * s.data[r*s.g.N+c]
}
func (s skyGrid) X(c int) float64 {
	x, _ := s.g.XY(c, 0)
	return -x
}
func (s skyGrid) Y(r int) float64 {
	_, y := s.g.XY(0, r)
	return y
}

// writeImageFigure draws data (times scale, in unit) on g with east left
// and north up, a colour bar and the clean-beam ellipse, and writes it to
// path in format.
func writeImageFigure(path string, force bool, format string, g uv.Grid, data []float64, scale float64,
	unit, title string, beam *uv.CleanBeam) error {
	lo, hi := minMax(data)
	lo, hi = lo*scale, hi*scale
	if hi <= lo {
		hi = lo + 1
	}
	cm := moreland.ExtendedBlackBody()
	cm.SetMin(lo)
	cm.SetMax(hi)
	sg := skyGrid{g: g, data: data, scale: scale}
	hm := plotter.NewHeatMap(sg, cm.Palette(255))
	hm.Min, hm.Max = lo, hi
	hm.Rasterized = true

	p := plot.New()
	p.Title.Text = title
	p.X.Label.Text = "Δx (arcsec, east ←)"
	p.Y.Label.Text = "Δy (arcsec, north ↑)"
	p.X.Tick.Marker = plot.TickerFunc(func(min, max float64) []plot.Tick {
		ticks := plot.DefaultTicks{}.Ticks(min, max)
		for i := range ticks {
			if ticks[i].Label != "" {
				ticks[i].Label = strconv.FormatFloat(-ticks[i].Value+0, 'g', 4, 64)
			}
		}
		return ticks
	})
	p.Add(hm)
	if beam != nil && beam.BMaj > 0 {
		// Bottom left of the displayed image (the east edge); plot x is −Δx.
		cx := sg.X(0) + 0.8*beam.BMaj + g.Pixel
		cy := sg.Y(0) + 0.8*beam.BMaj + g.Pixel
		pa := beam.BPA * math.Pi / 180
		var pts plotter.XYs
		for k := 0; k <= 64; k++ {
			t := 2 * math.Pi * float64(k) / 64
			a, b := beam.BMaj/2*math.Cos(t), beam.BMin/2*math.Sin(t)
			pts = append(pts, plotter.XY{X: cx - (a*math.Sin(pa) + b*math.Cos(pa)), Y: cy + a*math.Cos(pa) - b*math.Sin(pa)})
		}
		if l, err := plotter.NewLine(pts); err == nil {
			l.Color = color.White
			l.Width = vg.Points(1)
			p.Add(l)
		}
	}

	bar := plot.New()
	bar.Title.Text = unit
	bar.HideX()
	bar.Add(&plotter.ColorBar{ColorMap: cm, Vertical: true})
	bar.Y.Min, bar.Y.Max = lo, hi

	w, h := vg.Points(460), vg.Points(380)
	c, err := draw.NewFormattedCanvas(w, h, format)
	if err != nil {
		return err
	}
	dc := draw.New(c)
	p.Draw(draw.Crop(dc, 0, -vg.Points(80), 0, 0))
	bar.Draw(draw.Crop(dc, w-vg.Points(75), 0, vg.Points(30), -vg.Points(10)))
	return atomicfile.Write(path, force, func(out io.Writer) error {
		_, err := c.WriteTo(out)
		return err
	})
}
