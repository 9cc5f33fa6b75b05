package plots

import (
	"fmt"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Prediction holds the inputs of PredictFigure: what a lens model predicts
// before any data are involved.
type Prediction struct {
	// Lensed is the image-plane surface brightness and Source the
	// unlensed source, each on its own grid; either may be the zero value
	// to draw curves and points only.
	Lensed, Source SkyImage
	// Unit labels both colour bars (e.g. "mJy/pixel"); Scale multiplies
	// values for display (0 means 1).
	Unit  string
	Scale float64
	// Critical curves (image plane) and caustics (source plane).
	Critical, Caustics []Polyline
	// Images are predicted image positions; Sources the source centres.
	Images, Sources []Point
}

// PredictFigure draws the lens plane (lensed image, critical curves, image
// positions) and the source plane (source, caustics, source positions)
// side by side at page width, both east left and north up at equal aspect.
func PredictFigure(pr Prediction) (*Figure, error) {
	scale := pr.Scale
	if scale == 0 {
		scale = 1
	}
	f := &Figure{Width: PageWidth, Height: 3.2 * vg.Inch}
	type side struct {
		im     SkyImage
		curves []Polyline
		pts    []Point
		title  string
		xl, yl string
		glyph  draw.GlyphStyle
	}
	sides := []side{
		{pr.Lensed, pr.Critical, pr.Images, "lens plane: image, critical curves", eastLbl, nrthLbl,
			draw.GlyphStyle{Color: qualitative[1], Radius: 2.5, Shape: draw.CrossGlyph{}}},
		{pr.Source, pr.Caustics, pr.Sources, "source plane: source, caustics", srcXLbl, srcYLbl,
			draw.GlyphStyle{Color: qualitative[1], Radius: 2.5, Shape: draw.PlusGlyph{}}},
	}
	var row skyRow
	for _, s := range sides {
		var p *plot.Plot
		var bar *colorBar
		curveCol := black
		var view *skyView
		if s.im.N > 0 {
			if err := s.im.check(s.title); err != nil {
				return nil, err
			}
			if pr.Unit == "" {
				return nil, fmt.Errorf("plots: prediction: empty Unit; the colour bars need units")
			}
			v, _ := newView(s.im, nil)
			lo, hi := v.minMax(scale)
			p = skyPlot(v, Viridis, lo, hi, scale, s.xl, s.yl)
			bar = &colorBar{cm: Viridis, lo: lo, hi: hi, label: pr.Unit}
			curveCol = white
			view = &v
		} else {
			p = newPlot(s.xl, s.yl)
			p.X.Scale = plot.InvertedScale{Normalizer: plot.LinearScale{}}
		}
		p.Title.Text = s.title
		if err := addCurves(p, s.curves, draw.LineStyle{Color: curveCol, Width: lineWidth}); err != nil {
			return nil, err
		}
		if err := addMarks(p, s.pts, s.glyph); err != nil {
			return nil, err
		}
		if view != nil {
			freezeRange(p, *view)
		} else {
			if err := squareRange(p, s.curves, s.pts); err != nil {
				return nil, fmt.Errorf("plots: %s: %w", s.title, err)
			}
		}
		row = append(row, imagePanel{p: p, bar: bar})
	}
	f.Add(0, 0, 1, 1, row)
	return f, nil
}

// squareRange sets p's axes to a square region 10% larger than the extent
// of the curves and points.
func squareRange(p *plot.Plot, curves []Polyline, pts []Point) error {
	x0, x1, y0, y1 := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	add := func(q Point) {
		x0, x1 = math.Min(x0, q.X), math.Max(x1, q.X)
		y0, y1 = math.Min(y0, q.Y), math.Max(y1, q.Y)
	}
	for _, c := range curves {
		for _, q := range c {
			add(q)
		}
	}
	for _, q := range pts {
		add(q)
	}
	if x0 > x1 {
		return fmt.Errorf("nothing to draw: no image, curve or point")
	}
	cx, cy := (x0+x1)/2, (y0+y1)/2
	h := 0.55 * math.Max(math.Max(x1-x0, y1-y0), 1e-3)
	p.X.Min, p.X.Max = cx-h, cx+h
	p.Y.Min, p.Y.Max = cy-h, cy+h
	return nil
}
