package uv

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"
)

// directVis is the textbook sum V_k = Σ_j A_j I_j exp(−2πi(u_k l_j + v_k m_j))
// (Thompson, Moran & Swenson 2017, ch. 3) written out pixel by pixel from
// Grid.XY, independent of the NUFFT and its point mapping.
func directVis(g Grid, beam PrimaryBeam, img, u, v []float64) []complex128 {
	out := make([]complex128, len(u))
	for k := range u {
		var re, im float64
		for p, f := range img {
			if f == 0 {
				continue
			}
			x, y := g.Centre(p)
			ph := -2 * math.Pi * (u[k]*x + v[k]*y) / ArcsecPerRadian
			s, c := math.Sincos(ph)
			a := beam.At(x, y) * f
			re += a * c
			im += a * s
		}
		out[k] = complex(re, im)
	}
	return out
}

// randomCoverage returns n baselines with |u|, |v| up to the grid's Nyquist
// limit 1/(2·pixel), including points at the very edge.
func randomCoverage(rnd *rand.Rand, n int, g Grid) (u, v []float64) {
	umax := ArcsecPerRadian / (2 * g.Pixel)
	u, v = make([]float64, n), make([]float64, n)
	for k := range u {
		u[k] = umax * (2*rnd.Float64() - 1)
		v[k] = umax * (2*rnd.Float64() - 1)
	}
	if n >= 4 {
		u[0], v[0] = umax, -umax
		u[1], v[1] = -umax, umax*0.999999
	}
	return u, v
}

func randomImage(rnd *rand.Rand, g Grid) []float64 {
	img := make([]float64, g.Len())
	for k := range img {
		img[k] = rnd.NormFloat64()
	}
	return img
}

func relErrC(got, want []complex128) float64 {
	var num, den float64
	for k := range got {
		d := cmplx.Abs(got[k] - want[k])
		num += d * d
		den += cmplx.Abs(want[k]) * cmplx.Abs(want[k])
	}
	return math.Sqrt(num / den)
}

func TestPredict(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	for _, tc := range []struct {
		name string
		g    Grid
		beam PrimaryBeam
		tol  float64
	}{
		{"centred no beam 1e-12", Grid{N: 16, Pixel: 0.1}, PrimaryBeam{}, 1e-12},
		{"offset beam 1e-12", Grid{N: 24, Pixel: 0.2, X0: 0.7, Y0: -1.3}, PrimaryBeam{FWHM: 3}, 1e-12},
		{"offset beam 1e-6", Grid{N: 16, Pixel: 0.2, X0: -0.3, Y0: 0.5}, PrimaryBeam{FWHM: 2}, 1e-6},
	} {
		t.Run(tc.name, func(t *testing.T) {
			u, v := randomCoverage(rnd, 300, tc.g)
			img := randomImage(rnd, tc.g)
			want := directVis(tc.g, tc.beam, img, u, v)
			p, err := NewPredictor(tc.g, tc.beam, u, v, tc.tol)
			if err != nil {
				t.Fatal(err)
			}
			if e := relErrC(p.Predict(nil, img), want); e > 10*tc.tol {
				t.Errorf("NUFFT relative ℓ2 error %.3g, want ≤ %g", e, 10*tc.tol)
			}
			if e := relErrC(PredictDFT(nil, tc.g, tc.beam, img, u, v), want); e > 1e-13 {
				t.Errorf("DFT relative ℓ2 error %.3g, want ≤ 1e-13", e)
			}
		})
	}
}

// The sign convention of ../shared/conventions.md: a point east of the phase
// centre (x > 0) seen on a baseline with u > 0 has phase −2π u l < 0.
func TestPredictPointsSign(t *testing.T) {
	l := 0.1 / ArcsecPerRadian
	u := 1e5
	got := PredictPoints(nil, []float64{u}, []float64{0}, PrimaryBeam{}, []float64{0.1}, []float64{0}, []float64{2})
	want := 2 * cmplx.Exp(complex(0, -2*math.Pi*u*l))
	if cmplx.Abs(got[0]-want) > 1e-14 || cmplx.Phase(got[0]) >= 0 {
		t.Errorf("V = %v, want %v (negative phase)", got[0], want)
	}
}

// A point at a pixel centre has the visibilities of the one-pixel image.
func TestPredictPointsMatchesPixel(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 3))
	g := Grid{N: 16, Pixel: 0.1, X0: 0.2, Y0: 0.3}
	beam := PrimaryBeam{FWHM: 1.5}
	u, v := randomCoverage(rnd, 100, g)
	img := make([]float64, g.Len())
	img[5*16+3] = 0.7
	x, y := g.XY(3, 5)
	got := PredictPoints(nil, u, v, beam, []float64{x}, []float64{y}, []float64{0.7})
	if e := relErrC(got, directVis(g, beam, img, u, v)); e > 1e-13 {
		t.Errorf("relative error %.3g, want ≤ 1e-13", e)
	}
}
