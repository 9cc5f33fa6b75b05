package main

import (
	"math"
	"path/filepath"

	"deflect/lensmodel"
	"deflect/plots"
)

// predictMapSize is the side, in pixels, of the magnification map.
const predictMapSize = 256

// writePredictFigures writes to dir, in format, predict.FORMAT (lens plane:
// critical curves and images; source plane: caustics and the source, by
// plots.PredictFigure) and magnification.FORMAT (log10 |μ| of the lens with
// its critical curves, by plots.MagnificationFigure), and returns the paths
// written.
func writePredictFigures(dir, format string, force bool, lens lensmodel.Lens, curves []lensmodel.Curve, r *predictResult) ([]string, error) {
	crit, caus := predictCurves(curves)
	pr := plots.Prediction{Critical: crit, Caustics: caus, Sources: []plots.Point{{X: r.SourceX, Y: r.SourceY}}}
	for _, im := range r.Images {
		pr.Images = append(pr.Images, plots.Point{X: im.X, Y: im.Y})
	}
	fig, err := plots.PredictFigure(pr)
	if err != nil {
		return nil, err
	}
	files := []string{filepath.Join(dir, "predict."+format), filepath.Join(dir, "magnification."+format)}
	if err := plots.Save(fig, 0, 0, files[0], format, force); err != nil {
		return nil, err
	}
	mu := predictMagnificationMap(lens, crit, r, predictMapSize)
	mfig, err := plots.MagnificationFigure(plots.MagnificationMap{Mu: mu, Critical: crit})
	if err != nil {
		return nil, err
	}
	if err := plots.Save(mfig, 0, 0, files[1], format, force); err != nil {
		return nil, err
	}
	return files, nil
}

// predictCurves converts the critical curves and caustics to the plots
// package's polylines, closing the closed ones.
func predictCurves(curves []lensmodel.Curve) (crit, caus []plots.Polyline) {
	conv := func(pl lensmodel.Polyline, closed bool) plots.Polyline {
		out := make(plots.Polyline, 0, pl.Len()+1)
		for i := range pl.X {
			out = append(out, plots.Point{X: pl.X[i], Y: pl.Y[i]})
		}
		if closed && len(out) > 0 {
			out = append(out, out[0])
		}
		return out
	}
	for _, c := range curves {
		if c.Image.Len() >= 2 {
			crit = append(crit, conv(c.Image, c.Closed))
		}
		if c.Source.Len() >= 2 {
			caus = append(caus, conv(c.Source, c.Closed))
		}
	}
	return crit, caus
}

// predictMagnificationMap returns the signed magnification μ on an n×n
// image-plane grid (n even) centred on the critical curves and images: a
// square 30% wider than their extent, or 2″ about the source without them.
func predictMagnificationMap(lens lensmodel.Lens, crit []plots.Polyline, r *predictResult, n int) plots.SkyImage {
	x0, x1, y0, y1 := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	add := func(x, y float64) {
		x0, x1 = math.Min(x0, x), math.Max(x1, x)
		y0, y1 = math.Min(y0, y), math.Max(y1, y)
	}
	for _, c := range crit {
		for _, p := range c {
			add(p.X, p.Y)
		}
	}
	for _, im := range r.Images {
		add(im.X, im.Y)
	}
	cx, cy, half := r.SourceX, r.SourceY, 1.0
	if x0 <= x1 {
		cx, cy = (x0+x1)/2, (y0+y1)/2
		half = math.Max(0.65*math.Max(x1-x0, y1-y0), 0.05)
	}
	im := plots.SkyImage{N: n, Pixel: 2 * half / float64(n), X0: cx, Y0: cy, Values: make([]float64, n*n)}
	xs, ys := make([]float64, n*n), make([]float64, n*n)
	for j := range n {
		for i := range n {
			xs[j*n+i], ys[j*n+i] = im.XY(i, j)
		}
	}
	lens.MagnificationPoints(im.Values, xs, ys)
	return im
}
