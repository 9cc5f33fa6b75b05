package lensmodel

import "math"

// SIE is the isothermal ellipsoid, singular or with a core: convergence
//
//	κ(x', y') = θ_E / (2 √(q (x'² + s²) + y'²/q)),
//
// with x' along the major axis at position angle PA (degrees east of north)
// and y' along the minor axis, both about the centre (X, Y) in arcsec, axis
// ratio q = Q in (0, 1], Einstein radius θ_E = ThetaE in arcsec and core
// radius s = Core in arcsec (0 for the singular ellipsoid). In this
// normalisation the mean convergence inside the iso-density ellipse of
// semi-axes (θ_E/√q, θ_E√q) of the singular ellipsoid is 1, whatever q. Q = 1
// is the isothermal sphere, singular (SIS, α = θ_E r̂) or cored.
//
// Writing b = θ_E √q, e = √(1 − q²) and ξ = √(q² (s² + x'²) + y'²), so that
// κ = b/(2ξ), the deflection and potential are
//
//	α_x' = (b/e) atan(e x' / (ξ + s)),
//	α_y' = (b/e) atanh(e y' / (ξ + q² s)),
//	ψ    = x' α_x' + y' α_y' − (b s / 2) ln(((ξ + s)² + e² x'²) / ((1 + q)² s²)),
//
// the potential fixed to vanish at the centre. At q = 1 the limits
// α = b (x', y')/(ξ + s) are used. At the centre of the singular ellipsoid
// the deflection is returned as zero (its value by symmetry), κ and the
// diagonal of the Hessian as +Inf, so that the magnification there is 0.
// On amd64 processors with AVX2 and FMA the deflection (point by point and
// in batches) of an ellipsoid with e ≥ 0.05 comes from the vector kernel of
// fast.go, which evaluates these formulas to within
// 4e-15 |α| + 1e-15 max(b/e, θ_E) of their portable evaluation (tested).
//
// References:
//   - Kormann R., Schneider P., Bartelmann M., 1994, A&A 284, 285
//     (singular isothermal ellipsoid; its closed-form deflection in terms of
//     the polar angle, from memory, is the independent check in the tests).
//   - Keeton C. R., Kochanek C. S., 1998, ApJ 495, 157, and Keeton C. R.,
//     2001, arXiv:astro-ph/0102341, sect. 3 (the non-singular isothermal
//     ellipsoid: α and ψ above, there with κ = b_K/(2 √(s² + x² + y²/q²)),
//     i.e. b_K q = b; from memory, equation numbers not checked; the
//     normalisation is pinned by the mean-κ test and κ = ½∇·α). The Hessian used here is the analytic derivative of
//     that α, derived for this package and checked by finite differences.
type SIE struct {
	X, Y   float64 // centre, arcsec
	ThetaE float64 // Einstein radius θ_E, arcsec
	Q      float64 // axis ratio b/a in (0, 1]
	PA     float64 // position angle of the major axis, degrees east of north
	Core   float64 // core radius s, arcsec; 0 for the singular ellipsoid
}

var (
	_ Mass      = SIE{}
	_ Validator = SIE{}
)

// Validate reports an SIE parameter outside its domain: a non-finite value,
// θ_E < 0, q outside (0, 1] or a negative core.
func (m SIE) Validate() error {
	const kind = "sie"
	return checkAll(
		checkFinite(kind, "x", m.X), checkFinite(kind, "y", m.Y),
		checkNonNegative(kind, "theta_e", m.ThetaE),
		checkAxisRatio(kind, m.Q),
		checkFinite(kind, "pa", m.PA),
		checkNonNegative(kind, "core", m.Core),
	)
}

// Deflect returns the deflection (α_x, α_y) in arcsec at (x, y) in arcsec.
func (m SIE) Deflect(x, y float64) (ax, ay float64) {
	e := m.eval()
	return e.deflect(x, y)
}

// Kappa returns the convergence at (x, y) in arcsec.
func (m SIE) Kappa(x, y float64) float64 {
	e := m.eval()
	return e.kappa(x, y)
}

// Hessian returns ψ_xx, ψ_xy and ψ_yy at (x, y) in arcsec.
func (m SIE) Hessian(x, y float64) (hxx, hxy, hyy float64) {
	e := m.eval()
	return e.hessian(x, y)
}

// Potential returns the lensing potential in arcsec² at (x, y) in arcsec,
// zero at the centre.
func (m SIE) Potential(x, y float64) float64 {
	e := m.eval()
	return e.potential(x, y)
}

func (m SIE) prepare() evaluator {
	e := m.eval()
	return &e
}

// sieEval holds the SIE constants.
type sieEval struct {
	f      frame
	b      float64   // θ_E √q
	q2     float64   // q²
	e      float64   // √(1 − q²)
	be     float64   // b/e
	s, q2s float64   // s, q² s
	sphere bool      // q = 1
	logN   float64   // ln((1+q)² s²), the potential's constant
	fast   bool      // the assembly kernel applies (fast.go)
	kp     sieParams // its constants
}

func (m SIE) eval() sieEval {
	q := m.Q
	e := sieEval{
		f:  newFrame(m.X, m.Y, m.PA),
		b:  m.ThetaE * math.Sqrt(q),
		q2: q * q,
		s:  m.Core,
	}
	e.q2s = e.q2 * e.s
	e.e = math.Sqrt((1 - q) * (1 + q))
	e.sphere = e.e == 0
	if !e.sphere {
		e.be = e.b / e.e
	}
	if e.s > 0 {
		e.logN = 2 * math.Log((1+q)*e.s)
	}
	e.fastParams()
	return e
}

func (e *sieEval) xi(xp, yp float64) float64 {
	return math.Sqrt(e.q2*(e.s*e.s+xp*xp) + yp*yp)
}

// local returns the deflection along the axes at (x', y').
func (e *sieEval) local(xp, yp float64) (a1, a2 float64) {
	xi := e.xi(xp, yp)
	if xi+e.s == 0 {
		return 0, 0
	}
	if e.sphere {
		d := e.b / (xi + e.s)
		return d * xp, d * yp
	}
	a1 = e.be * math.Atan(e.e*xp/(xi+e.s))
	if e.e < sieLogE {
		a2 = e.be * math.Atanh(e.e*yp/(xi+e.q2s))
		return a1, a2
	}
	// atanh(e y'/(ξ + q² s)) = ½ ln((ξ + q² s + e y')/(ξ + q² s − e y')),
	// and (ξ + q² s)² − e² y'² = q² ((ξ + s)² + e² x'²): one logarithm of
	// a ratio free of cancellation, instead of math.Atanh's log1p. Its
	// absolute error is ~1e-16 (b/e); the relative error of α_y' near the
	// major axis grows, harmlessly, as 1e-16/y'.
	ps := xi + e.s
	num := xi + e.q2s + e.e*math.Abs(yp)
	l := 0.5 * e.be * math.Log(num*num/(e.q2*(ps*ps+e.e*e.e*xp*xp)))
	if yp < 0 {
		l = -l
	}
	return a1, l
}

// sieLogE is the value of e = √(1 − q²) below which math.Atanh is used for
// α_y', keeping the q → 1 limit exact.
const sieLogE = 0.05

func (e *sieEval) deflect(x, y float64) (ax, ay float64) {
	if e.fast && useAVX {
		return sieOne(e, x, y) // fast.go: the batch kernel's value
	}
	xp, yp := e.f.local(x, y)
	a1, a2 := e.local(xp, yp)
	return e.f.vector(a1, a2)
}

func (e *sieEval) kappa(x, y float64) float64 {
	xp, yp := e.f.local(x, y)
	xi := e.xi(xp, yp)
	if xi == 0 {
		return math.Inf(1)
	}
	return e.b / (2 * xi)
}

func (e *sieEval) hessian(x, y float64) (hxx, hxy, hyy float64) {
	xp, yp := e.f.local(x, y)
	xi := e.xi(xp, yp)
	if xi == 0 {
		return math.Inf(1), 0, math.Inf(1)
	}
	ps := xi + e.s
	d1 := ps*ps + e.e*e.e*xp*xp
	bd := e.b / (xi * d1)
	h11 := bd * (xi*ps - e.q2*xp*xp)
	h12 := -bd * xp * yp
	h22 := bd * (xi*(xi+e.q2s) - yp*yp) / e.q2
	return e.f.tensor(h11, h12, h22)
}

func (e *sieEval) potential(x, y float64) float64 {
	xp, yp := e.f.local(x, y)
	a1, a2 := e.local(xp, yp)
	psi := xp*a1 + yp*a2
	if e.s > 0 {
		xi := e.xi(xp, yp)
		ps := xi + e.s
		d1 := ps*ps + e.e*e.e*xp*xp
		psi -= e.b * e.s / 2 * (math.Log(d1) - e.logN)
	}
	return psi
}

func (e *sieEval) addDeflect(ax, ay, x, y []float64) {
	ax, ay, y = ax[:len(x)], ay[:len(x)], y[:len(x)]
	i := 0
	if e.fast && useAVX {
		i = sieFast(e, ax, ay, x, y) // fast.go
	}
	for ; i < len(x); i++ {
		dx, dy := e.deflect(x[i], y[i])
		ax[i] += dx
		ay[i] += dy
	}
}
