package plots

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// UVSet is one dataset's uv coverage: baseline coordinates in wavelengths
// (u toward east, v toward north) and the legend label.
type UVSet struct {
	Label string
	U, V  []float64 // wavelengths
}

// UVCoverageFigure draws every sample twice, at (u, v) and (−u, −v), in kλ,
// one colour per dataset, at column width and equal aspect. The u axis
// increases to the left, so that east is on the same side as on the sky
// images; the axis label says so.
func UVCoverageFigure(sets []UVSet) (*Figure, error) {
	if len(sets) == 0 {
		return nil, fmt.Errorf("plots: uv coverage: no datasets")
	}
	p := newPlot("u (kλ, east left)", "v (kλ)")
	p.X.Scale = plot.InvertedScale{Normalizer: plot.LinearScale{}}
	p.Legend.Top = true
	rmax := 0.0
	for k, s := range sets {
		if len(s.U) != len(s.V) {
			return nil, fmt.Errorf("plots: uv coverage: dataset %q has %d u and %d v values", s.Label, len(s.U), len(s.V))
		}
		d := &dots{col: qcolor(k), side: 1.2, xy: make([]float64, 0, 4*len(s.U))}
		for m := range s.U {
			u, v := s.U[m]/1e3, s.V[m]/1e3
			if math.IsNaN(u) || math.IsNaN(v) || math.IsInf(u, 0) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("plots: uv coverage: dataset %q row %d: u, v = %g, %g λ not finite", s.Label, m, s.U[m], s.V[m])
			}
			d.xy = append(d.xy, u, v, -u, -v)
			rmax = math.Max(rmax, math.Hypot(u, v))
		}
		p.Add(d)
		if s.Label != "" {
			p.Legend.Add(s.Label, d)
		}
	}
	if rmax == 0 {
		rmax = 1
	}
	r := 1.05 * rmax
	p.X.Min, p.X.Max, p.Y.Min, p.Y.Max = -r, r, -r, r
	f := &Figure{Width: ColumnWidth, Height: ColumnWidth}
	f.Add(0, 0, 1, 1, imagePanel{p: p})
	return f, nil
}

// dots draws many points as small filled squares in one path, which keeps
// figures of 10⁵–10⁶ visibilities fast to render.
type dots struct {
	col  color.Color
	side vg.Length // square side
	xy   []float64 // x0, y0, x1, y1, …
}

func (d *dots) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	h := d.side / 2
	var path vg.Path
	for k := 0; k+1 < len(d.xy); k += 2 {
		x, y := trX(d.xy[k]), trY(d.xy[k+1])
		if !c.Contains(vg.Point{X: x, Y: y}) {
			continue
		}
		path.Move(vg.Point{X: x - h, Y: y - h})
		path.Line(vg.Point{X: x + h, Y: y - h})
		path.Line(vg.Point{X: x + h, Y: y + h})
		path.Line(vg.Point{X: x - h, Y: y + h})
		path.Close()
	}
	c.SetColor(d.col)
	c.Fill(path)
}

// Thumbnail implements plot.Thumbnailer for the legend.
func (d *dots) Thumbnail(c *draw.Canvas) {
	ctr := c.Center()
	h := 2 * d.side
	c.FillPolygon(d.col, []vg.Point{{X: ctr.X - h, Y: ctr.Y - h}, {X: ctr.X + h, Y: ctr.Y - h}, {X: ctr.X + h, Y: ctr.Y + h}, {X: ctr.X - h, Y: ctr.Y + h}})
}
