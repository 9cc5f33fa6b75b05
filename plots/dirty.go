package plots

import (
	"fmt"
	"math"
	"slices"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// DirtyImages holds the inputs of the data–model–residual figure. The
// three images share one grid; values are in Jy/beam and are drawn in
// mJy/beam.
type DirtyImages struct {
	Data, Model, Residual SkyImage
	// Sigma is the residual rms in Jy/beam. When ≤ 0 it is estimated from
	// the residual image as 1.4826·MAD (RobustSigma).
	Sigma float64
	// Beam is drawn in the lower-left corner of every panel when its
	// axes are positive.
	Beam Beam
	// Critical curves, if any, are overlaid on all three panels.
	Critical []Polyline
	// Zoom, when set, shows only the pixels whose centres lie in the box.
	Zoom *Box
}

// maxSigmaLevels caps the residual contours at ±(2 … 2+maxSigmaLevels−1)σ.
const maxSigmaLevels = 10

// DirtyFigure draws the data, model and residual dirty images side by side
// at page width, east left and north up. Data and model share one viridis
// scale in mJy/beam, spanning both images' range inside the view; the
// residual is drawn in units of σ on the Diverging map, symmetric about
// zero and saturating beyond ±6σ (or the residual's peak |r|/σ when that
// is between 3 and 6), with contours at ±2, 3, 4, … σ (negative dashed, at
// most ten of each sign).
func DirtyFigure(d DirtyImages) (*Figure, error) {
	for _, c := range []struct {
		name string
		im   SkyImage
	}{{"data image", d.Data}, {"model image", d.Model}, {"residual image", d.Residual}} {
		if err := c.im.check(c.name); err != nil {
			return nil, err
		}
	}
	same := func(a, b SkyImage) bool { return a.N == b.N && a.Pixel == b.Pixel && a.X0 == b.X0 && a.Y0 == b.Y0 }
	if !same(d.Model, d.Data) || !same(d.Residual, d.Data) {
		return nil, fmt.Errorf("plots: dirty images: data, model and residual grids differ (N %d, %d, %d; pixel %g, %g, %g arcsec; centres (%g, %g), (%g, %g), (%g, %g) arcsec)",
			d.Data.N, d.Model.N, d.Residual.N, d.Data.Pixel, d.Model.Pixel, d.Residual.Pixel,
			d.Data.X0, d.Data.Y0, d.Model.X0, d.Model.Y0, d.Residual.X0, d.Residual.Y0)
	}
	sigma := d.Sigma
	if !(sigma > 0) {
		sigma = RobustSigma(d.Residual.Values)
		if !(sigma > 0) {
			return nil, fmt.Errorf("plots: dirty images: residual rms is %g (flat residual image?); give Sigma", sigma)
		}
	}
	views := make([]skyView, 3)
	for k, im := range []SkyImage{d.Data, d.Model, d.Residual} {
		v, err := newView(im, d.Zoom)
		if err != nil {
			return nil, err
		}
		views[k] = v
	}
	const mJy = 1e3
	lo0, hi0 := views[0].minMax(mJy)
	lo1, hi1 := views[1].minMax(mJy)
	lo, hi := math.Min(lo0, lo1), math.Max(hi0, hi1)
	rlo, rhi := views[2].minMax(1 / sigma)
	// Residual colours span ±max(3, min(peak |r|/σ, 6))σ and saturate
	// beyond, so noise-level structure stays visible next to a bright
	// residual; the contours carry the rest.
	lim := math.Max(3, math.Min(6, math.Max(-rlo, rhi)))

	f := &Figure{Width: PageWidth, Height: 2.3 * vg.Inch}
	row := make(skyRow, 3)
	titles := []string{"data", "model", fmt.Sprintf("residual (σ = %s mJy/beam)", fmtG(sigma*mJy))}
	for k, v := range views {
		var p *plot.Plot
		var bar *colorBar
		ylabel := nrthLbl
		if k > 0 {
			ylabel = " " // keeps the three image panels the same size
		}
		if k < 2 {
			p = skyPlot(v, Viridis, lo, hi, mJy, eastLbl, ylabel)
			bar = &colorBar{cm: Viridis, lo: lo, hi: hi, label: "mJy/beam"}
			if err := addCurves(p, d.Critical, draw.LineStyle{Color: white, Width: lineWidth}); err != nil {
				return nil, err
			}
		} else {
			p = skyPlot(v, Diverging, -lim, lim, 1/sigma, eastLbl, ylabel)
			bar = &colorBar{cm: Diverging, lo: -lim, hi: lim, label: "residual (σ)"}
			addSigmaContours(p, v, sigma)
			if err := addCurves(p, d.Critical, draw.LineStyle{Color: qualitative[2], Width: lineWidth, Dashes: dotted}); err != nil {
				return nil, err
			}
		}
		p.Title.Text = titles[k]
		p.Add(beamMark{d.Beam})
		freezeRange(p, v)
		row[k] = imagePanel{p: p, bar: bar}
	}
	f.Add(0, 0, 1, 1, row)
	return f, nil
}

// sigmaLevels returns the positive contour levels 2, 3, … σ up to the
// largest |value| m (at most maxSigmaLevels of them).
func sigmaLevels(m float64) []float64 {
	var lv []float64
	for s := 2.0; s <= m && len(lv) < maxSigmaLevels; s++ {
		lv = append(lv, s)
	}
	return lv
}

func addSigmaContours(p *plot.Plot, v skyView, sigma float64) {
	g := viewGrid{v: v, scale: 1 / sigma}
	if v.cols() < 2 || v.rows() < 2 {
		return
	}
	lo, hi := g.Min(), g.Max()
	if pos := sigmaLevels(hi); len(pos) > 0 {
		c := plotter.NewContour(g, pos, nil)
		c.LineStyles = []draw.LineStyle{{Color: black, Width: axisWidth}}
		p.Add(bareContour{c})
	}
	if neg := sigmaLevels(-lo); len(neg) > 0 {
		for k := range neg {
			neg[k] = -neg[k]
		}
		c := plotter.NewContour(g, neg, nil)
		c.LineStyles = []draw.LineStyle{{Color: black, Width: axisWidth, Dashes: dashed}}
		p.Add(bareContour{c})
	}
}

// RobustSigma returns 1.4826 times the median absolute deviation of the
// finite values: the rms of Gaussian noise, insensitive to a few bright
// pixels (common practice; 1.4826 = 1/Φ⁻¹(3/4)). It returns NaN when no
// value is finite.
func RobustSigma(vals []float64) float64 {
	xs := make([]float64, 0, len(vals))
	for _, x := range vals {
		if !math.IsNaN(x) && !math.IsInf(x, 0) {
			xs = append(xs, x)
		}
	}
	if len(xs) == 0 {
		return math.NaN()
	}
	med := median(xs)
	for k, x := range xs {
		xs[k] = math.Abs(x - med)
	}
	return 1.4826 * median(xs)
}

// median sorts xs in place and returns its median.
func median(xs []float64) float64 {
	slices.Sort(xs)
	n := len(xs)
	if n%2 == 1 {
		return xs[n/2]
	}
	return (xs[n/2-1] + xs[n/2]) / 2
}

// fmtG formats a number to three significant figures for labels.
func fmtG(x float64) string { return fmt.Sprintf("%.3g", x) }
