package source

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"
)

const arcsecPerRad = 180 * 3600 / math.Pi

// visData is a test-only Measurement built by direct sums from synthetic
// visibilities: D_j = Re Σ_k w_k d_k e^{+2πi(u_k x_j + v_k y_j)},
// B(Δ) = Σ_k w_k cos 2π(u_k Δx + v_k Δy), DataTerm = Σ_k w_k |d_k|², with a
// Gaussian primary beam A (conventions.md). It keeps the visibilities, so
// the direct χ² is available to check against.
type visData struct {
	g       testGrid
	u, v, w []float64 // wavelengths, Jy⁻²
	d       []complex128
	gain    []float64
	dirty   []float64
	beam    []float64
	data    float64
}

func (m *visData) Size() int                 { return m.g.n }
func (m *visData) DirtyAt(i, j int) float64  { return m.dirty[j*m.g.n+i] }
func (m *visData) GainAt(i, j int) float64   { return m.gain[j*m.g.n+i] }
func (m *visData) DataTerm() float64         { return m.data }
func (m *visData) BeamAt(di, dj int) float64 { return m.beam[(di+m.g.n-1)*(2*m.g.n-1)+dj+m.g.n-1] }

var _ Measurement = (*visData)(nil)

// newVisData compresses the visibilities for grid g with a primary beam of
// the given FWHM in arcsec.
func newVisData(g testGrid, u, v, w []float64, d []complex128, pbFWHM float64) *visData {
	n := g.n
	m := &visData{g: g, u: u, v: v, w: w, d: d, gain: make([]float64, n*n), dirty: make([]float64, n*n),
		beam: make([]float64, (2*n-1)*(2*n-1))}
	for k := range n * n {
		x, y := g.Centre(k)
		m.gain[k] = math.Exp(-4 * math.Ln2 * (x*x + y*y) / (pbFWHM * pbFWHM))
		var s float64
		for q := range u {
			ph := 2 * math.Pi * (u[q]*x + v[q]*y) / arcsecPerRad
			s += w[q] * real(d[q]*cmplx.Exp(complex(0, ph)))
		}
		m.dirty[k] = s
	}
	for di := -(n - 1); di < n; di++ {
		for dj := -(n - 1); dj < n; dj++ {
			dx, dy := -float64(di)*g.pixel, float64(dj)*g.pixel
			var s float64
			for q := range u {
				s += w[q] * math.Cos(2*math.Pi*(u[q]*dx+v[q]*dy)/arcsecPerRad)
			}
			m.beam[(di+n-1)*(2*n-1)+dj+n-1] = s
		}
	}
	for q := range d {
		m.data += w[q] * real(d[q]*cmplx.Conj(d[q]))
	}
	return m
}

// predict returns the model visibilities Σ_j A_j I_j e^{−2πi(u x_j + v y_j)}
// of the sky image img (Jy per pixel).
func (m *visData) predict(img []float64) []complex128 {
	out := make([]complex128, len(m.u))
	for k, f := range img {
		if f == 0 {
			continue
		}
		x, y := m.g.Centre(k)
		for q := range m.u {
			ph := -2 * math.Pi * (m.u[q]*x + m.v[q]*y) / arcsecPerRad
			out[q] += complex(m.gain[k]*f, 0) * cmplx.Exp(complex(0, ph))
		}
	}
	return out
}

// chi2Direct is Σ_k w_k |d_k − V_k|² with V predicted from img.
func (m *visData) chi2Direct(img []float64) float64 {
	var s float64
	for q, mv := range m.predict(img) {
		r := m.d[q] - mv
		s += m.w[q] * real(r*cmplx.Conj(r))
	}
	return s
}

// chi2Compressed evaluates the Measurement's χ² formula for img directly.
func chi2Compressed(m Measurement, img []float64) float64 {
	n := m.Size()
	c := m.DataTerm()
	for k, f := range img {
		if f == 0 {
			continue
		}
		i, j := k%n, k/n
		c -= 2 * m.GainAt(i, j) * f * m.DirtyAt(i, j)
		for k2, f2 := range img {
			if f2 == 0 {
				continue
			}
			i2, j2 := k2%n, k2/n
			c += m.GainAt(i, j) * f * m.BeamAt(i-i2, j-j2) * m.GainAt(i2, j2) * f2
		}
	}
	return c
}

// randomCoverage returns nv random (u, v) points in wavelengths uniform in a
// disc of radius umax, with weights 1/σ².
func randomCoverage(rng *rand.Rand, nv int, umax, sigma float64) (u, v, w []float64) {
	for range nv {
		r := umax * math.Sqrt(rng.Float64())
		s, c := math.Sincos(2 * math.Pi * rng.Float64())
		u = append(u, r*c)
		v = append(v, r*s)
		w = append(w, 1/(sigma*sigma)*(0.5+rng.Float64()))
	}
	return u, v, w
}

func TestVisDataCompressedChi2(t *testing.T) {
	// The test operator's compressed χ² equals the direct sum over
	// visibilities (the identity of the Measurement interface).
	rng := rand.New(rand.NewPCG(1, 1))
	g := testGrid{n: 16, pixel: 0.1}
	u, v, w := randomCoverage(rng, 60, 1e6, 0.01)
	d := make([]complex128, len(u))
	for q := range d {
		d[q] = complex(rng.NormFloat64(), rng.NormFloat64())
	}
	m := newVisData(g, u, v, w, d, 8)
	img := make([]float64, g.n*g.n)
	for k := range img {
		if rng.Float64() < 0.3 {
			img[k] = rng.NormFloat64()
		}
	}
	within(t, "χ²", chi2Compressed(m, img), m.chi2Direct(img), 1e-9)
}
