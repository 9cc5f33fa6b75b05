package nufft

import (
	"fmt"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"
)

// FFT2 against the defining double sum, evaluated directly with math.Sincos
// (reference: the DFT definition; tolerance 1e-12 relative in ℓ2), for powers
// of two (own transform) and other even sizes (gonum's dsp/fourier).
func TestFFT2(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	for _, n := range []int{1, 2, 4, 8, 16, 32, 6, 12, 30} {
		for _, sign := range []int{-1, 1} {
			t.Run(fmt.Sprintf("n=%d/sign=%d", n, sign), func(t *testing.T) {
				a := randomComplex(rnd, n*n)
				want := make([]complex128, n*n)
				for q := range n {
					for p := range n {
						var s complex128
						for r := range n {
							for c := range n {
								ph := float64(sign) * 2 * math.Pi * float64((q*r+p*c)%n) / float64(n)
								sn, cs := math.Sincos(ph)
								s += a[r*n+c] * complex(cs, sn)
							}
						}
						want[q*n+p] = s
					}
				}
				f := NewFFT2(n)
				var got []complex128
				if sign < 0 {
					got = f.Forward(nil, a)
				} else {
					got = f.Inverse(nil, a)
				}
				if e := relErr(got, want); e > 1e-12 {
					t.Errorf("relative error %g", e)
				}
				// In place, and the round trip n²·a.
				b := append([]complex128(nil), a...)
				f.Forward(b, b)
				f.Inverse(b, b)
				for i := range b {
					b[i] /= complex(float64(n*n), 0)
				}
				if e := relErr(b, a); e > 1e-13 {
					t.Errorf("round trip error %g", e)
				}
			})
		}
	}
}

func randomComplex(rnd *rand.Rand, n int) []complex128 {
	a := make([]complex128, n)
	for i := range a {
		a[i] = complex(rnd.NormFloat64(), rnd.NormFloat64())
	}
	return a
}

// relErr returns ‖got − want‖₂ / ‖want‖₂.
func relErr(got, want []complex128) float64 {
	var num, den float64
	for i := range want {
		d := cmplx.Abs(got[i] - want[i])
		num += d * d
		w := cmplx.Abs(want[i])
		den += w * w
	}
	return math.Sqrt(num / den)
}
