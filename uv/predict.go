package uv

import (
	"fmt"
	"math"

	"deflect/internal/par"
	"deflect/uv/nufft"
)

// nufftPoints sets x, y to the NUFFT points of the baselines (u, v)
// wavelengths for a grid of pixel arcsec, so that for pixel (i, j) of a grid
// centred on the phase centre
//
//	2π(u l_ij + v m_ij) = m1 x + m2 y,  m1 = i − N/2, m2 = j − N/2,
//
// with l = −m1·pixel/ArcsecPerRadian (x decreases with i) and
// m = m2·pixel/ArcsecPerRadian. Any grid offset enters as a phase, see
// offsetPhase.
func nufftPoints(x, y, u, v []float64, pixel float64) {
	p := 2 * math.Pi * pixel / ArcsecPerRadian
	for k := range u {
		x[k] = -p * u[k]
		y[k] = p * v[k]
	}
}

// offsetPhase returns φ = 2π(u X0 + v Y0)/ArcsecPerRadian, the phase of a
// visibility at (u, v) due to the grid centre's offset (X0, Y0) arcsec.
func offsetPhase(g Grid, u, v float64) float64 {
	return 2 * math.Pi * (u*g.X0 + v*g.Y0) / ArcsecPerRadian
}

// Predictor computes model visibilities of sky images on a grid at a fixed
// set of baselines with the non-uniform FFT:
//
//	V_k = Σ_j A_j I_j exp(−2πi (u_k l_j + v_k m_j)),
//
// I in Jy per pixel, A the primary beam, V in Jy (../shared/conventions.md).
// A Predictor holds scratch space and is not safe for concurrent use.
type Predictor struct {
	grid  Grid
	gain  []float64
	plan  *nufft.Plan
	shift []complex128 // exp(−iφ_k) for an offset grid, nil otherwise
	buf   []float64
}

// NewPredictor returns a Predictor for images on g with primary beam beam
// (the zero PrimaryBeam for none) at the baselines u, v in wavelengths, to
// relative ℓ2 tolerance tol (see nufft.NewPlan).
func NewPredictor(g Grid, beam PrimaryBeam, u, v []float64, tol float64) (*Predictor, error) {
	if len(u) != len(v) {
		panic("uv: NewPredictor with len(u) ≠ len(v)")
	}
	plan, err := nufft.NewPlan(g.N, tol)
	if err != nil {
		return nil, err
	}
	x, y := make([]float64, len(u)), make([]float64, len(u))
	nufftPoints(x, y, u, v, g.Pixel)
	plan.SetPoints(x, y)
	p := &Predictor{grid: g, plan: plan, buf: make([]float64, g.Len())}
	if !beam.None() {
		p.gain = beam.Gains(nil, g)
	}
	if g.X0 != 0 || g.Y0 != 0 {
		p.shift = make([]complex128, len(u))
		for k := range u {
			s, c := math.Sincos(-offsetPhase(g, u[k], v[k]))
			p.shift[k] = complex(c, s)
		}
	}
	return p, nil
}

// Predict sets dst to the model visibilities of img (Jy per pixel, FITS
// order on the Predictor's grid) and returns it; dst is allocated when nil.
func (p *Predictor) Predict(dst []complex128, img []float64) []complex128 {
	if len(img) != p.grid.Len() {
		panic(fmt.Sprintf("uv: image of %d pixels, grid has %d", len(img), p.grid.Len()))
	}
	src := img
	if p.gain != nil {
		for k, a := range p.gain {
			p.buf[k] = a * img[k]
		}
		src = p.buf
	}
	dst = p.plan.Type2Real(dst, src, -1)
	for k, s := range p.shift {
		dst[k] *= s
	}
	return dst
}

// PredictDFT is Predict by the direct Fourier sum, exact to rounding and
// parallel across cores; it costs N² complex multiply–adds per baseline.
func PredictDFT(dst []complex128, g Grid, beam PrimaryBeam, img, u, v []float64) []complex128 {
	if len(img) != g.Len() {
		panic(fmt.Sprintf("uv: image of %d pixels, grid has %d", len(img), g.Len()))
	}
	src := img
	if !beam.None() {
		src = beam.Gains(nil, g)
		for k := range src {
			src[k] *= img[k]
		}
	}
	x, y := make([]float64, len(u)), make([]float64, len(u))
	nufftPoints(x, y, u, v, g.Pixel)
	dst = nufft.DFT2Real(dst, src, g.N, x, y, -1)
	if g.X0 != 0 || g.Y0 != 0 {
		for k := range dst {
			s, c := math.Sincos(-offsetPhase(g, u[k], v[k]))
			dst[k] *= complex(c, s)
		}
	}
	return dst
}

// PredictPoints sets dst to the visibilities of point sources at sky offsets
// (x[p], y[p]) arcsec with fluxes flux[p] Jy, attenuated by the primary beam,
//
//	V_k = Σ_p A(x_p, y_p) S_p exp(−2πi (u_k l_p + v_k m_p)),  l = x/ArcsecPerRadian, m = y/ArcsecPerRadian,
//
// exactly (no grid). dst is allocated when nil. It runs in parallel over the
// baselines.
func PredictPoints(dst []complex128, u, v []float64, beam PrimaryBeam, x, y, flux []float64) []complex128 {
	if len(u) != len(v) || len(x) != len(y) || len(x) != len(flux) {
		panic("uv: PredictPoints with mismatched lengths")
	}
	if dst == nil {
		dst = make([]complex128, len(u))
	} else if len(dst) != len(u) {
		panic("uv: PredictPoints destination length differs from the baselines")
	}
	s := make([]float64, len(flux))
	for p := range flux {
		s[p] = beam.At(x[p], y[p]) * flux[p]
	}
	parallelFor(len(u), func(lo, hi int) {
		for k := lo; k < hi; k++ {
			var re, im float64
			for p := range s {
				ph := -2 * math.Pi * (u[k]*x[p] + v[k]*y[p]) / ArcsecPerRadian
				sn, cs := math.Sincos(ph)
				re += s[p] * cs
				im += s[p] * sn
			}
			dst[k] = complex(re, im)
		}
	})
	return dst
}

// Chi2Visibilities returns Σ_k w_k |d_k − m_k|² over the unflagged rows of
// d, model[k] the model visibility of row k in Jy.
func Chi2Visibilities(d *Dataset, model []complex128) float64 {
	if len(model) != d.Len() {
		panic("uv: Chi2Visibilities with a model of the wrong length")
	}
	var chi2 float64
	for k, m := range model {
		if d.Flagged(k) {
			continue
		}
		dr, di := d.Re[k]-real(m), d.Im[k]-imag(m)
		chi2 += d.Weight[k] * (dr*dr + di*di)
	}
	return chi2
}

// parallelFor splits [0, n) into contiguous ranges of at least 256 items
// run on up to runtime.GOMAXPROCS(0) goroutines.
func parallelFor(n int, fn func(lo, hi int)) {
	par.Ranges(n, 256, func(_, lo, hi int) { fn(lo, hi) })
}
