package plots

import (
	"fmt"
	"image"
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
		d := &dots{col: qualitative[k%len(qualitative)], side: 1.2, xy: make([]float64, 0, 4*len(s.U))}
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

// dots draws many points as small filled squares, which keeps figures of
// 10⁵–10⁶ visibilities fast: on a raster canvas the squares are written
// straight into the pixels; on vector canvases they are filled in paths of
// a few hundred squares (the rasterisers slow down badly on one huge path).
type dots struct {
	col  color.NRGBA // opaque
	side vg.Length   // square side
	xy   []float64   // x0, y0, x1, y1, …
}

const dotsPerPath = 512

func (d *dots) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	if dst, dpi, ok := bitmapOf(c); ok {
		d.blit(dst, dpi, c, trX, trY)
		return
	}
	h := d.side / 2
	var path vg.Path
	n := 0
	c.SetColor(d.col)
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
		if n++; n == dotsPerPath {
			c.Fill(path)
			path, n = nil, 0
		}
	}
	if n > 0 {
		c.Fill(path)
	}
}

// blit writes each square into the device pixels it covers (y up in vg
// units, rows down in the image), clipped to the data area.
func (d *dots) blit(dst *image.RGBA, dpi float64, c draw.Canvas, trX, trY func(float64) vg.Length) {
	s := dpi / vg.Inch.Points()
	H := float64(dst.Bounds().Dy())
	half := math.Max(0.5, d.side.Points()*s/2)
	x0, x1 := c.Min.X.Points()*s, c.Max.X.Points()*s
	y0, y1 := H-c.Max.Y.Points()*s, H-c.Min.Y.Points()*s
	for k := 0; k+1 < len(d.xy); k += 2 {
		px, py := trX(d.xy[k]).Points()*s, H-trY(d.xy[k+1]).Points()*s
		a, b := int(math.Round(math.Max(x0, px-half))), int(math.Round(math.Min(x1, px+half)))
		e, f := int(math.Round(math.Max(y0, py-half))), int(math.Round(math.Min(y1, py+half)))
		a, b = max(a, dst.Rect.Min.X), min(b, dst.Rect.Max.X)
		e, f = max(e, dst.Rect.Min.Y), min(f, dst.Rect.Max.Y)
		for y := e; y < f; y++ {
			off := dst.PixOffset(a, y)
			for x := a; x < b; x++ {
				dst.Pix[off], dst.Pix[off+1], dst.Pix[off+2], dst.Pix[off+3] = d.col.R, d.col.G, d.col.B, 0xff
				off += 4
			}
		}
	}
}

// Thumbnail implements plot.Thumbnailer for the legend.
func (d *dots) Thumbnail(c *draw.Canvas) {
	ctr := c.Center()
	h := 2 * d.side
	c.FillPolygon(d.col, []vg.Point{{X: ctr.X - h, Y: ctr.Y - h}, {X: ctr.X + h, Y: ctr.Y - h}, {X: ctr.X + h, Y: ctr.Y + h}, {X: ctr.X - h, Y: ctr.Y + h}})
}
