package lensmodel

import "math"

// NFW is the Navarro, Frenk & White (1997, ApJ 490, 493) halo,
//
//	ρ(r) = ρ_s / ((r/r_s)(1 + r/r_s)²),   κ_s = ρ_s r_s / Σ_cr,
//
// centred on (X, Y) in arcsec with scale radius r_s = Rs in arcsec and
// KappaS = κ_s (dimensionless). For Q = 1 it is spherical, with, in
// x = r/r_s,
//
//	κ(x) = 2κ_s (1 − F(x))/(x² − 1),
//	κ̄(x) = 4κ_s (ln(x/2) + F(x))/x²          (mean convergence inside x),
//	α(x) = κ̄(x) r,
//	ψ(x) = 2κ_s r_s² (ln²(x/2) − (1 − x²) F(x)²),
//	F(x) = atanh(√(1 − x²))/√(1 − x²)   (x < 1),
//	       atan(√(x² − 1))/√(x² − 1)    (x > 1),   F(1) = 1,
//
// F evaluated near x = 1 by its series Σ_k (1 − x²)^k/(2k + 1) (which both
// branches share) and at small x in forms free of cancellation.
//
// For Q < 1 the potential, not the density, is elliptical (Golse & Kneib
// 2002): ψ(x', y') = ψ_sph(R), R² = (1 − ε) x'² + (1 + ε) y'², with x' along
// the major axis at PA (degrees east of north), Q the axis ratio of the
// iso-potential contours and ε = (1 − Q²)/(1 + Q²) ≤ MaxPotentialEllipticity
// (Q ≥ 0.8165), enforced by Validate; κ is then ½ tr ∇∇ψ, consistent with
// α and the Hessian. The iso-density contours are flatter than Q.
//
// At the centre the deflection is zero and κ and the Hessian diagonal are
// +Inf (the cusp). On amd64 processors with AVX2 and FMA the deflection
// inside R < 0.8 r_s comes from the vector kernel of fast.go, within
// 4e-15 |α| + 1e-15 κ_s r_s of the portable evaluation (tested).
//
// References:
//   - Bartelmann M., 1996, A&A 313, 697 (κ, α and ψ of the NFW lens; the
//     forms above are from memory, equation numbers not checked, and are
//     verified in the tests by α = ∇ψ, κ = ½∇·α and against WB00).
//   - Wright C. O., Brainerd T. G., 2000, ApJ 534, 34, eqs. 11 and 13 as we
//     recall the numbering (Σ(x) and the mean Σ̄(x) inside x; written out
//     independently in the tests as the reference).
//   - Golse G., Kneib J.-P., 2002, A&A 390, 821 (the elliptical potential).
type NFW struct {
	X, Y   float64 // centre, arcsec
	KappaS float64 // κ_s = ρ_s r_s / Σ_cr (dimensionless)
	Rs     float64 // scale radius r_s, arcsec
	Q      float64 // axis ratio of the potential, in [0.8165, 1]
	PA     float64 // position angle of the major axis, degrees east of north
}

var (
	_ Mass      = NFW{}
	_ Validator = NFW{}
)

// Validate reports a non-finite parameter, κ_s < 0, r_s ≤ 0, or a potential
// axis ratio outside [√((1 − ε_max)/(1 + ε_max)), 1].
func (m NFW) Validate() error {
	const kind = "nfw"
	if err := checkAll(
		checkFinite(kind, "x", m.X), checkFinite(kind, "y", m.Y),
		checkNonNegative(kind, "kappa_s", m.KappaS),
		checkPositive(kind, "r_s", m.Rs),
		checkFinite(kind, "pa", m.PA),
	); err != nil {
		return err
	}
	_, err := potentialEllipticity(kind, m.Q)
	return err
}

// Deflect returns the deflection (α_x, α_y) in arcsec at (x, y) in arcsec.
func (m NFW) Deflect(x, y float64) (ax, ay float64) {
	e := m.eval()
	return e.deflect(x, y)
}

// Kappa returns the convergence at (x, y) in arcsec.
func (m NFW) Kappa(x, y float64) float64 {
	e := m.eval()
	return e.kappa(x, y)
}

// Hessian returns ψ_xx, ψ_xy and ψ_yy at (x, y) in arcsec.
func (m NFW) Hessian(x, y float64) (hxx, hxy, hyy float64) {
	e := m.eval()
	return e.hessian(x, y)
}

// Potential returns the lensing potential in arcsec² at (x, y) in arcsec,
// zero at the centre.
func (m NFW) Potential(x, y float64) float64 {
	e := m.eval()
	return e.potential(x, y)
}

func (m NFW) prepare() evaluator {
	e := m.eval()
	return &e
}

type nfwEval struct {
	g      ellPot
	ks     float64
	invRs  float64
	psiFac float64   // 2 κ_s r_s²
	kp     nfwParams // constants of the assembly kernel (fast.go)
}

func (m NFW) eval() nfwEval {
	e := nfwEval{
		g:      newEllPot(m.X, m.Y, m.Q, m.PA),
		ks:     m.KappaS,
		invRs:  1 / m.Rs,
		psiFac: 2 * m.KappaS * m.Rs * m.Rs,
	}
	e.fastParams()
	return e
}

// nfwSeriesU bounds |1 − x²| below which F and (F − 1)/(1 − x²) are summed
// from their series; 12 terms then reach 1e-17.
const nfwSeriesU = 0.03

// nfwF returns F(x) of the NFW lensing functions for x > 0.
func nfwF(x float64) float64 {
	u := (1 - x) * (1 + x)
	switch {
	case math.Abs(u) < nfwSeriesU:
		// F = Σ u^k/(2k+1).
		return 1 + u*nfwG(u)
	case x < 1:
		s := math.Sqrt(u)
		// atanh(s) = ln((1 + s)/x), free of the cancellation in 1 − s.
		return math.Log((1+s)/x) / s
	default:
		t := math.Sqrt(-u)
		return math.Atan(t) / t
	}
}

// nfwG returns (F − 1)/u = Σ_{k≥1} u^{k−1}/(2k+1) for |u| < nfwSeriesU.
func nfwG(u float64) float64 {
	g := 1.0 / 25
	for k := 11; k >= 1; k-- {
		g = 1/float64(2*k+1) + u*g
	}
	return g
}

// nfwKappa returns κ/κ_s = 2 (F − 1)/(1 − x²).
func nfwKappa(x float64) float64 {
	u := (1 - x) * (1 + x)
	if math.Abs(u) < nfwSeriesU {
		return 2 * nfwG(u)
	}
	return 2 * (nfwF(x) - 1) / u
}

// nfwH returns h(x) = ln(x/2) + F(x), so that κ̄/κ_s = 4h/x².
func nfwH(x float64) float64 {
	if x < 0.5 {
		// h = [ln(2/x) x²/(1+s) + ln1p(−x²/(2(1+s)))]/s, s = √(1 − x²),
		// without the cancellation of ln(x/2) + F at small x.
		x2 := x * x
		s := math.Sqrt(1 - x2)
		return (math.Log(2/x)*x2/(1+s) + math.Log1p(-x2/(2*(1+s)))) / s
	}
	return math.Log(x/2) + nfwF(x)
}

// nfwKbar returns κ̄/κ_s = 4h(x)/x².
func nfwKbar(x float64) float64 {
	return 4 * nfwH(x) / (x * x)
}

// nfwPsi returns ψ/(2κ_s r_s²) = ln²(x/2) − (1 − x²) F².
//
// For x < 1 the two squares cancel toward the centre (ψ ∝ x² ln² x while
// each term grows as ln² x). With s = √(1 − x²), (1 − x²) F² = ln²((1 + s)/x),
// and the difference of squares factors as
//
//	ψ/(2κ_s r_s²) = ln ε · ln(1 − ε),   ε = (1 − s)/2 = x²/(2(1 + s)),
//
// which is used below x = 0.5 (derived for this package; checked against
// the quadrature of α in the tests).
func nfwPsi(x float64) float64 {
	if x == 0 {
		return 0
	}
	if x < 0.5 {
		x2 := x * x
		eps := x2 / (2 * (1 + math.Sqrt(1-x2)))
		return math.Log(eps) * math.Log1p(-eps)
	}
	l := math.Log(x / 2)
	f := nfwF(x)
	return l*l - (1-x)*(1+x)*f*f
}

func (e *nfwEval) deflect(x, y float64) (ax, ay float64) {
	if useAVX {
		if ax, ay, ok := nfwOne(e, x, y); ok { // fast.go: the batch kernel's value
			return ax, ay
		}
	}
	xp, yp, r := e.g.radius(x, y)
	if r == 0 {
		return 0, 0
	}
	return e.g.deflect(xp, yp, e.ks*nfwKbar(r*e.invRs))
}

func (e *nfwEval) kappa(x, y float64) float64 {
	xp, yp, r := e.g.radius(x, y)
	if r == 0 {
		return math.Inf(1)
	}
	s := r * e.invRs
	return e.g.kappa(xp, yp, r, e.ks*nfwKbar(s), e.ks*nfwKappa(s))
}

func (e *nfwEval) hessian(x, y float64) (hxx, hxy, hyy float64) {
	xp, yp, r := e.g.radius(x, y)
	if r == 0 {
		return math.Inf(1), 0, math.Inf(1)
	}
	s := r * e.invRs
	return e.g.hessian(xp, yp, r, e.ks*nfwKbar(s), e.ks*nfwKappa(s))
}

func (e *nfwEval) potential(x, y float64) float64 {
	_, _, r := e.g.radius(x, y)
	return e.psiFac * nfwPsi(r*e.invRs)
}

func (e *nfwEval) addDeflect(ax, ay, x, y []float64) {
	ax, ay, y = ax[:len(x)], ay[:len(x)], y[:len(x)]
	i := 0
	if useAVX {
		i = nfwFast(e, ax, ay, x, y) // fast.go
	}
	for ; i < len(x); i++ {
		dx, dy := e.deflect(x[i], y[i])
		ax[i] += dx
		ay[i] += dy
	}
}
