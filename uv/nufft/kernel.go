package nufft

import (
	"math"

	"gonum.org/v1/gonum/integrate/quad"
)

// Kernel widths allowed: w = ⌈log10(1/ε)⌉ + 1 clamped to [minWidth, maxWidth].
const (
	minWidth = 2
	maxWidth = 15
	maxDeg   = 24
)

// nsub is the number of sub-intervals of each unit grid interval on which
// the kernel gets its own polynomial: all w taps of a point share the same
// fractional offset, hence the same sub-interval, and shorter pieces need a
// lower degree.
const nsub = 8

// esKernel is the "exponential of semicircle" kernel of Barnett, Magland &
// af Klinteberg (2019, eq. 1.8) in fine-grid units,
//
//	ψ(u) = φ(2u/w),   φ(z) = exp(β(√(1 − z²) − 1)),   |u| ≤ w/2,
//
// with its piecewise-polynomial approximation: each of the w unit intervals of
// [−w/2, w/2] is cut into nsub pieces, and on each piece ψ is a polynomial of
// degree deg in a local variable z ∈ [−1, 1].
type esKernel struct {
	w    int
	beta float64
	deg  int
	// coef[(k*(deg+1)+d)*w+a] is the coefficient of z^(deg−d) for tap a on
	// sub-interval k, highest degree first, for Horner's rule.
	coef []float64
	// dup is coef laid out for the assembly kernels: per piece, deg+1 rows of
	// lanes = 4⌈w/2⌉ values, tap a's coefficient in lanes 2a and 2a+1, the
	// remaining lanes zero.
	dup   []float64
	lanes int
}

// widthForTol returns the kernel width w = ⌈log10(1/ε)⌉ + 1 for 2×
// oversampling (Barnett et al. 2019, §3.1.1).
func widthForTol(tol float64) int {
	w := int(math.Ceil(math.Log10(1/tol))) + 1
	return max(minWidth, min(maxWidth, w))
}

// newESKernel builds the kernel of width w with β = 2.30·w (Barnett et al.
// 2019, §3.1.1) and fits the lowest polynomial degree whose maximum error on
// every piece is at most polyTol, or, where rounding stops the error falling
// first (near 1e-15), the degree at which it stopped.
func newESKernel(w int, polyTol float64) esKernel {
	k := esKernel{w: w, beta: 2.30 * float64(w)}
	prev := math.Inf(1)
	for deg := 1; deg <= maxDeg; deg++ {
		k.fit(deg)
		e := k.maxPolyError()
		if e <= polyTol {
			break
		}
		if e > prev/2 && deg > 2 {
			k.fit(deg - 1)
			break
		}
		prev = e
	}
	k.lanes = 4 * ((w + 1) / 2)
	nc := k.deg + 1
	k.dup = make([]float64, nsub*nc*k.lanes)
	for j := range nsub {
		for d := range nc {
			for a := range w {
				v := k.coef[(j*nc+d)*w+a]
				k.dup[(j*nc+d)*k.lanes+2*a] = v
				k.dup[(j*nc+d)*k.lanes+2*a+1] = v
			}
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

// tapArg returns the kernel argument u of tap a for the fractional offset
// frac ∈ [0, 1] (see weights): u = a − w/2 + frac.
func (k *esKernel) tapArg(a int, frac float64) float64 {
	return float64(a) - float64(k.w)/2 + frac
}

// fit sets coef to the degree-deg Chebyshev interpolant of ψ on each piece,
// rewritten in monomials of the local variable z: on sub-interval j the
// fractional offset is frac = (j + (z+1)/2)/nsub.
func (k *esKernel) fit(deg int) {
	w := k.w
	nc := deg + 1
	k.deg = deg
	k.coef = make([]float64, nsub*nc*w)
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
	for j := range nsub {
		for a := range w {
			for q := range nc {
				z := math.Cos(math.Pi * (float64(q) + 0.5) / float64(nc))
				vals[q] = k.exact(k.tapArg(a, (float64(j)+(z+1)/2)/nsub))
			}
			for d := range nc {
				var s float64
				for q := range nc {
					s += vals[q] * math.Cos(math.Pi*float64(d)*(float64(q)+0.5)/float64(nc))
				}
				cheb[d] = 2 * s / float64(nc)
			}
			cheb[0] /= 2
			for p := range nc {
				var s float64
				for d := range nc {
					s += cheb[d] * tmono[d][p]
				}
				k.coef[(j*nc+deg-p)*w+a] = s
			}
		}
	}
}

// maxPolyError returns the largest |poly − ψ| over a fine sampling of every
// piece.
func (k *esKernel) maxPolyError() float64 {
	const samples = 16 * nsub
	ker := make([]float64, k.w)
	var worst float64
	for s := 0; s <= samples; s++ {
		frac := float64(s) / samples
		k.horner(ker, frac)
		for a, v := range ker {
			worst = math.Max(worst, math.Abs(v-k.exact(k.tapArg(a, frac))))
		}
	}
	return worst
}

// piece returns the sub-interval of frac ∈ [0, 1] and the local variable z.
func piece(frac float64) (int, float64) {
	f := frac * nsub
	j := min(int(f), nsub-1)
	return j, 2*(f-float64(j)) - 1
}

// horner sets ker[a] = poly(a − w/2 + frac) for a < w, frac ∈ [0, 1]. The
// hot loops use the generated, unrolled forms of this in kernels_gen.go.
func (k *esKernel) horner(ker []float64, frac float64) {
	w := k.w
	j, z := piece(frac)
	c := k.coef[j*(k.deg+1)*w:]
	ker = ker[:w]
	copy(ker, c[:w])
	for d := 1; d <= k.deg; d++ {
		cd := c[d*w : d*w+w]
		for a := range ker {
			ker[a] = ker[a]*z + cd[a]
		}
	}
}

// weights sets ker[a] = ψ(l0 + a − t) for the w fine-grid nodes l0 … l0+w−1
// nearest the fine-grid coordinate t and returns l0 = ⌈t − w/2⌉. The
// fractional offset is frac = l0 − t + w/2 ∈ [0, 1).
func (k *esKernel) weights(ker []float64, t float64) int {
	hw := float64(k.w) / 2
	l0 := math.Ceil(t - hw)
	k.horner(ker, l0-t+hw)
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
