package plots

import (
	"fmt"
	"math"

	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// MagnificationMap holds the inputs of MagnificationFigure.
type MagnificationMap struct {
	// Mu is the signed magnification μ = 1/det(∂β/∂θ) on an image-plane
	// grid (dimensionless); non-finite values saturate the scale.
	Mu SkyImage
	// Critical curves are overlaid in white.
	Critical []Polyline
	// Max is the top of the colour scale in log10 |μ|; 0 means 2 (|μ| =
	// 100), since |μ| diverges on the critical curves.
	Max float64
	// Zoom, when set, shows only the pixels whose centres lie in the box.
	Zoom *Box
}

// MagnificationFigure draws log10 |μ| on the sequential viridis map with
// the critical curves, east left and north up, at column width. The scale
// runs from max(min log10 |μ|, −1) to min(max log10 |μ|, Max).
func MagnificationFigure(m MagnificationMap) (*Figure, error) {
	if err := m.Mu.check("magnification map"); err != nil {
		return nil, err
	}
	top := m.Max
	if top == 0 {
		top = 2
	}
	lg := m.Mu
	lg.Values = make([]float64, len(m.Mu.Values))
	for k, mu := range m.Mu.Values {
		switch {
		case math.IsNaN(mu), math.IsInf(mu, 0):
			lg.Values[k] = math.Inf(1)
		default:
			lg.Values[k] = math.Log10(math.Abs(mu))
		}
	}
	v, err := newView(lg, m.Zoom)
	if err != nil {
		return nil, err
	}
	lo, hi := v.minMax(1)
	lo, hi = math.Max(lo, -1), math.Min(hi, top)
	if !(hi > lo) {
		return nil, fmt.Errorf("plots: magnification map: empty scale log10|μ| %g…%g", lo, hi)
	}
	p := skyPlot(v, Viridis, lo, hi, 1, eastLbl, nrthLbl)
	p.Title.Text = "magnification"
	if err := addCurves(p, m.Critical, draw.LineStyle{Color: white, Width: lineWidth}); err != nil {
		return nil, fmt.Errorf("plots: critical curves: %w", err)
	}
	freezeRange(p, v)
	f := &Figure{Width: ColumnWidth, Height: 2.9 * vg.Inch}
	f.Add(0, 0, 1, 1, imagePanel{p: p, bar: &colorBar{cm: Viridis, lo: lo, hi: hi, label: "log10 |μ|"}})
	return f, nil
}
