package nufft

import (
	"math"

	"gonum.org/v1/gonum/integrate/quad"
)

// Kernel widths allowed: w = ⌈log10(1/ε)⌉ + 1 clamped to [minWidth, maxWidth].
const (
	minWidth = 2
	maxWidth = 16
	maxDeg   = 24
)

// esKernel is the "exponential of semicircle" kernel of Barnett, Magland &
// af Klinteberg (2019, eq. 1.8) in fine-grid units,
//
//	ψ(u) = φ(2u/w),   φ(z) = exp(β(√(1 − z²) − 1)),   |u| ≤ w/2,
//
// with its piecewise-polynomial approximation: on each of the w unit intervals
// of [−w/2, w/2] a polynomial of degree deg in the local variable z ∈ [−1, 1).
type esKernel struct {
	w    int
	beta float64
	deg  int
	// coef[d*w+a] is the coefficient of z^(deg−d) on interval a, highest
	// degree first, for Horner's rule.
	coef []float64
}

// widthForTol returns the kernel width w = ⌈log10(1/ε)⌉ + 1 for 2×
// oversampling (Barnett et al. 2019, §3.1.1).
func widthForTol(tol float64) int {
	w := int(math.Ceil(math.Log10(1/tol))) + 1
	return max(minWidth, min(maxWidth, w))
}

// newESKernel builds the kernel of width w with β = 2.30·w (Barnett et al.
// 2019, §3.1.1) and fits the lowest polynomial degree whose maximum error on
// every interval is at most polyTol (or the best reachable degree).
func newESKernel(w int, polyTol float64) esKernel {
	k := esKernel{w: w, beta: 2.30 * float64(w)}
	for deg := 2; deg <= maxDeg; deg++ {
		k.fit(deg)
		if k.maxPolyError() <= polyTol {
			return k
		}
	}
	return k
}

// exact returns ψ(u).
func (k *esKernel) exact(u float64) float64 {
	z := 2 * u / float64(k.w)
	if z < -1 || z > 1 {
		return 0
	}
	return math.Exp(k.beta * (math.Sqrt(1-z*z) - 1))
}

// fit sets coef to the degree-deg Chebyshev interpolant of ψ on each interval,
// rewritten in monomials. On interval a, u = a − w/2 + (z+1)/2.
func (k *esKernel) fit(deg int) {
	w := k.w
	nc := deg + 1
	k.deg = deg
	k.coef = make([]float64, nc*w)
	hw := float64(w) / 2
	// Monomial coefficients of the Chebyshev polynomials T_0 … T_deg.
	tmono := make([][]float64, nc)
	for d := range nc {
		tmono[d] = make([]float64, nc)
	}
	tmono[0][0] = 1
	if nc > 1 {
		tmono[1][1] = 1
	}
	for d := 2; d < nc; d++ {
		for p := range nc {
			v := -tmono[d-2][p]
			if p > 0 {
				v += 2 * tmono[d-1][p-1]
			}
			tmono[d][p] = v
		}
	}
	vals := make([]float64, nc)
	cheb := make([]float64, nc)
	for a := range w {
		for j := range nc {
			z := math.Cos(math.Pi * (float64(j) + 0.5) / float64(nc))
			vals[j] = k.exact(float64(a) - hw + (z+1)/2)
		}
		for d := range nc {
			var s float64
			for j := range nc {
				s += vals[j] * math.Cos(math.Pi*float64(d)*(float64(j)+0.5)/float64(nc))
			}
			cheb[d] = 2 * s / float64(nc)
		}
		cheb[0] /= 2
		for p := range nc {
			var s float64
			for d := range nc {
				s += cheb[d] * tmono[d][p]
			}
			k.coef[(deg-p)*w+a] = s
		}
	}
}

// maxPolyError returns the largest |poly − ψ| over a fine sampling of every
// interval.
func (k *esKernel) maxPolyError() float64 {
	const samples = 64
	ker := make([]float64, k.w)
	hw := float64(k.w) / 2
	var worst float64
	for s := 0; s <= samples; s++ {
		z := -1 + 2*float64(s)/samples
		k.horner(ker, z)
		for a, v := range ker {
			worst = math.Max(worst, math.Abs(v-k.exact(float64(a)-hw+(z+1)/2)))
		}
	}
	return worst
}

// horner sets ker[a] = poly_a(z) for a < w.
func (k *esKernel) horner(ker []float64, z float64) {
	w := k.w
	ker = ker[:w]
	copy(ker, k.coef[:w])
	for d := 1; d <= k.deg; d++ {
		c := k.coef[d*w : d*w+w]
		for a := range ker {
			ker[a] = ker[a]*z + c[a]
		}
	}
}

// weights sets ker[a] = ψ(l0 + a − t) for the w fine-grid nodes l0 … l0+w−1
// nearest the fine-grid coordinate t and returns l0 = ⌈t − w/2⌉.
func (k *esKernel) weights(ker []float64, t float64) int {
	hw := float64(k.w) / 2
	l0 := math.Ceil(t - hw)
	// x1 = l0 − t ∈ [−w/2, −w/2+1); z = 2(x1 + w/2) − 1 ∈ [−1, 1).
	z := 2*(l0-t+hw) - 1
	k.horner(ker, z)
	return int(l0)
}

// fourier returns ψ̂(ξ) = ∫ ψ(u) cos(ξu) du over [−w/2, w/2] for each ξ in xi,
// by Gauss–Legendre quadrature, as Barnett et al. (2019, §3.1.2) do for
// deapodisation. The substitution u = (w/2) sin θ removes the square-root
// behaviour of ψ at u = ±w/2, leaving the smooth integrand
//
//	ψ̂(ξ) = w ∫_0^{π/2} exp(β(cos θ − 1)) cos θ cos(ξ (w/2) sin θ) dθ,
//
// for which the rule converges exponentially.
func (k *esKernel) fourier(xi []float64) []float64 {
	nq := 2*k.w + 40
	nodes := make([]float64, nq)
	wts := make([]float64, nq)
	quad.Legendre{}.FixedLocations(nodes, wts, 0, math.Pi/2)
	hw := float64(k.w) / 2
	amp := make([]float64, nq)
	arg := make([]float64, nq)
	for q, th := range nodes {
		sn, cs := math.Sincos(th)
		amp[q] = wts[q] * math.Exp(k.beta*(cs-1)) * cs
		arg[q] = hw * sn
	}
	out := make([]float64, len(xi))
	for i, x := range xi {
		var s float64
		for q, a := range amp {
			s += a * math.Cos(x*arg[q])
		}
		out[i] = float64(k.w) * s
	}
	return out
}
