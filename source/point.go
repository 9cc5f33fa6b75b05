package source

import (
	"fmt"

	"deflect/lensmodel"
)

// PointImage is one lensed image of a point source.
type PointImage struct {
	Component int     // index of the Point in Source.Components
	X, Y      float64 // image position, arcsec
	Mu        float64 // signed magnification (negative for saddle points)
	Parity    int     // +1 for minima and maxima, −1 for saddle points
	Flux      float64 // observed flux |μ| S_ν, Jy
	Delay     float64 // arrival time after the first image, days (0 unless ImageOptions.DelayScale is set)
}

// PointOptions are the settings of LensedPoint and LensedPoints. The zero
// value is the documented default for every field.
type PointOptions struct {
	// Freq is the observing frequency in Hz; 0 means the reference
	// frequency.
	Freq float64
	// RefFreq is the reference frequency of LensedPoint's flux in Hz (0
	// disables spectral scaling); LensedPoints uses the Source's RefFreq.
	RefFreq float64
	// Images are the settings of the image finder.
	Images lensmodel.ImageOptions
}

// LensedPoint returns the images of the point source p behind lens, with
// their positions, signed magnifications and fluxes |μ_i| S_ν, found by
// lensmodel.FindImages. The exact visibilities of the lensed point are
// Σ_i A(x_i, y_i) |μ_i| S_ν e^{−2πi(u x_i + v y_i)}, a sum over these
// images that needs no grid. A central image at a singular centre (e.g. of
// a singular isothermal ellipsoid) is infinitely demagnified and absent.
func LensedPoint(lens lensmodel.Mass, p Point, opt PointOptions) ([]PointImage, error) {
	s := Source{RefFreq: opt.RefFreq}
	f := p.Flux * s.SpectralFactor(p.Alpha, opt.Freq)
	if lens == nil {
		return []PointImage{{X: p.X, Y: p.Y, Mu: 1, Parity: 1, Flux: f}}, nil
	}
	res, err := lensmodel.FindImages(lens, p.X, p.Y, opt.Images)
	if err != nil {
		return nil, fmt.Errorf("source: images of the point at (%g, %g): %w", p.X, p.Y, err)
	}
	out := make([]PointImage, len(res.Images))
	for i, im := range res.Images {
		mu := im.Mu
		if mu < 0 {
			mu = -mu
		}
		out[i] = PointImage{X: im.X, Y: im.Y, Mu: im.Mu, Parity: im.Parity, Flux: mu * f, Delay: im.Delay}
	}
	return out, nil
}

// LensedPoints returns the images of every Point component of src, each
// tagged with its component index, at the frequency opt.Freq and the
// source's reference frequency.
func LensedPoints(lens lensmodel.Mass, src Source, opt PointOptions) ([]PointImage, error) {
	opt.RefFreq = src.RefFreq
	var out []PointImage
	for k, c := range src.Components {
		p, ok := c.(Point)
		if !ok {
			continue
		}
		ims, err := LensedPoint(lens, p, opt)
		if err != nil {
			return nil, fmt.Errorf("source component %d: %w", k, err)
		}
		for i := range ims {
			ims[i].Component = k
		}
		out = append(out, ims...)
	}
	return out, nil
}
