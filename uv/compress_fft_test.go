package uv

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"
)

// naiveDFT is Σ_t x_t exp(sign·2πi k t/n), the definition.
func naiveDFT(x []complex128, sign float64) []complex128 {
	n := len(x)
	out := make([]complex128, n)
	for k := range n {
		for t, v := range x {
			out[k] += v * cmplx.Exp(complex(0, sign*2*math.Pi*float64(k*t%n)/float64(n)))
		}
	}
	return out
}

// The power-of-two FFT against the definition of the DFT, to 1e-12.
func TestFFTPow2(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 9))
	for _, n := range []int{2, 4, 6, 8, 12, 16, 24, 32, 48, 64, 96, 128, 192, 256, 384} {
		f := newFFTPlan(n)
		for _, half := range []bool{false, true} {
			x := make([]complex128, n)
			for i := range x {
				if !half || i < n/2 {
					x[i] = complex(rnd.NormFloat64(), rnd.NormFloat64())
				}
			}
			want := naiveDFT(x, -1)
			y := append([]complex128(nil), x...)
			f.forward(y, half)
			for q := range y {
				// Coefficient q lies at rev[q].
				if cmplx.Abs(y[f.rev[q]]-want[q]) > 1e-12*float64(n) {
					t.Fatalf("n=%d half=%v: coefficient %d = %v, want %v", n, half, q, y[f.rev[q]], want[q])
				}
			}
			f.inverse(y)
			for i := range y {
				if cmplx.Abs(y[i]/complex(float64(n), 0)-x[i]) > 1e-12 {
					t.Fatalf("n=%d: inverse(forward(x))/n differs at %d", n, i)
				}
			}
			a, b := make([]float64, n), make([]float64, n)
			for i := range a {
				a[i], b[i] = real(x[i]), imag(x[i])
			}
			ca, cb := make([]complex128, n/2+1), make([]complex128, n/2+1)
			f.realPair(ca, cb, a, b, make([]complex128, n), half)
			ra := make([]complex128, n)
			rb := make([]complex128, n)
			for i := range a {
				ra[i], rb[i] = complex(a[i], 0), complex(b[i], 0)
			}
			wa, wb := naiveDFT(ra, -1), naiveDFT(rb, -1)
			for k := range ca {
				if cmplx.Abs(ca[k]-wa[k]) > 1e-12*float64(n) || cmplx.Abs(cb[k]-wb[k]) > 1e-12*float64(n) {
					t.Fatalf("n=%d: real pair coefficient %d: %v %v, want %v %v", n, k, ca[k], cb[k], wa[k], wb[k])
				}
			}
			a2, b2 := make([]float64, n), make([]float64, n)
			f.realPairInverse(a2, b2, ca, cb, make([]complex128, n))
			for i := range a2 {
				if math.Abs(a2[i]/float64(n)-a[i]) > 1e-12 || math.Abs(b2[i]/float64(n)-b[i]) > 1e-12 {
					t.Fatalf("n=%d: real pair inverse differs at %d", n, i)
				}
			}
		}
	}
}
