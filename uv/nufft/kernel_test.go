package nufft

import (
	"fmt"
	"math"
	"testing"
)

// The kernel width rule of Barnett, Magland & af Klinteberg (2019, §3.1.1)
// for 2× oversampling: w = ⌈log10(1/ε)⌉ + 1.
func TestWidthForTol(t *testing.T) {
	for _, tc := range []struct {
		tol  float64
		want int
	}{
		{1e-3, 4}, {1e-6, 7}, {2e-7, 8}, {1e-9, 10}, {1e-12, 13}, {1e-14, 15}, {1e-20, 15}, {0.5, 2},
	} {
		if got := widthForTol(tc.tol); got != tc.want {
			t.Errorf("widthForTol(%g) = %d, want %d", tc.tol, got, tc.want)
		}
	}
}

// The piecewise polynomial must reproduce the exact kernel to well below the
// tolerance it serves, and the tap weights must equal ψ(l0 + a − t).
func TestKernelPolynomial(t *testing.T) {
	for _, tol := range []float64{1e-3, 1e-6, 1e-9, 1e-12} {
		t.Run(fmt.Sprint(tol), func(t *testing.T) {
			w := widthForTol(tol)
			k := newESKernel(w, tol/20)
			if e := k.maxPolyError(); e > tol/20 {
				t.Fatalf("w=%d deg=%d: max polynomial error %g > %g", w, k.deg, e, tol/20)
			}
			t.Logf("w=%d β=%.2f deg=%d max error %.2g", w, k.beta, k.deg, k.maxPolyError())
			ker := make([]float64, w)
			for _, tt := range []float64{0, 0.25, 3.5, 10.999, 7.0000001, -2.3} {
				l0 := k.weights(ker, tt)
				if d := tt - float64(l0); d > float64(w)/2 || d <= float64(w)/2-1 {
					t.Errorf("t=%g: l0=%d not ⌈t − w/2⌉", tt, l0)
				}
				for a, v := range ker {
					if e := math.Abs(v - k.exact(float64(l0+a)-tt)); e > tol/20 {
						t.Errorf("t=%g tap %d: %g vs exact %g", tt, a, v, k.exact(float64(l0+a)-tt))
					}
				}
			}
		})
	}
}

// Deapodisation: the Gauss–Legendre Fourier transform of the kernel must agree
// with an independent composite Simpson rule on 2·10⁵ panels in the original
// variable u (reference: direct numerical integration of ∫ψ(u)cos(ξu)du;
// tolerance 1e-9 relative, Simpson's error at the square-root end points of ψ
// being about h^1.5·β·e^−β ≈ 1e-10).
func TestKernelFourier(t *testing.T) {
	for _, w := range []int{4, 7, 10, 13} {
		k := newESKernel(w, 1e-14)
		xi := []float64{0, 0.3, 1, math.Pi / 2, 2}
		got := k.fourier(xi)
		for i, x := range xi {
			const panels = 200000
			hw := float64(w) / 2
			h := 2 * hw / panels
			var s float64
			for p := 0; p <= panels; p++ {
				u := -hw + float64(p)*h
				c := 2.0
				if p == 0 || p == panels {
					c = 1
				} else if p%2 == 1 {
					c = 4
				}
				s += c * k.exact(u) * math.Cos(x*u)
			}
			s *= h / 3
			if math.Abs(got[i]-s) > 1e-9*math.Abs(s) {
				t.Errorf("w=%d ξ=%g: ψ̂ = %.15g, Simpson %.15g", w, x, got[i], s)
			}
		}
	}
}
