package lensmodel

import (
	"fmt"
	"math"
)

// PowerLaw is the elliptical power-law mass distribution of 3-D slope
// γ = Slope (ρ ∝ r^−γ; γ = 2 is isothermal):
//
//	κ(x', y') = ((3 − γ)/2) (θ_E/R)^(γ−1),   R² = q x'² + y'²/q,
//
// with x' along the major axis at PA (degrees east of north) about the
// centre (X, Y) in arcsec, q = Q in (0, 1] and θ_E = ThetaE in arcsec. R is
// the elliptical radius of the SIE's normalisation (conventions.md): the
// ellipse R = θ_E has semi-axes (θ_E/√q, θ_E√q) and mean convergence 1
// inside it for every γ, and γ = 2 is the singular SIE. Slope is limited to
// 1 < γ < 3 (a finite mass inside every ellipse and κ > 0).
//
// With t = γ − 1, b = θ_E √q, z = x' + i y', ρ e^{iφ} = q x' + i y' (the
// elliptical radius and angle of TM15, ρ = √q R) and f = (1 − q)/(1 + q),
// the deflection α = α_x' + i α_y' is the series
//
//	α = (2b/(1 + q)) (b/ρ)^(t−1) Σ_{n≥0} Ω_n,
//	Ω_0 = e^{iφ},   Ω_n = −f ((2n − (2 − t))/(2n + (2 − t))) e^{2iφ} Ω_{n−1},
//
// the hypergeometric function ₂F₁(1, t/2; 2 − t/2; −f e^{2iφ}) summed by its
// recurrence to the term n where f^n ≤ 1e-16 (|Ω_n| ≤ f^n, since the
// factors (2n − (2 − t))/(2n + (2 − t)) are below 1 in magnitude). α is homogeneous of degree 1 − t, so the potential is
// ψ = (x' α_x' + y' α_y')/(2 − t), and the shear γ₁ + iγ₂ = ∂α/∂z̄ follows
// from Euler's relation z ∂α/∂z + z̄ ∂α/∂z̄ = (1 − t) α with ∂α/∂z = κ:
//
//	γ₁ + iγ₂ = ((1 − t) α − κ z)/z̄,   ψ_11 = κ + γ₁, ψ_22 = κ − γ₁, ψ_12 = γ₂.
//
// At the centre the deflection is returned as zero (its value by symmetry,
// and its limit for γ < 2) and κ and the Hessian diagonal as +Inf.
//
// References:
//   - Tessore N., Metcalf R. B., 2015, A&A 580, A79, sect. 3 (the
//     deflection as ₂F₁(1, t/2; 2 − t/2; −f e^{2iφ}) and its recurrence;
//     written from memory, equation numbers not checked; verified in the
//     tests by κ = ½∇·α, ∇×α = 0, α = ∇ψ and against the SIE at γ = 2).
type PowerLaw struct {
	X, Y   float64 // centre, arcsec
	ThetaE float64 // Einstein radius θ_E, arcsec
	Q      float64 // axis ratio b/a in (0, 1]
	PA     float64 // position angle of the major axis, degrees east of north
	Slope  float64 // 3-D logarithmic slope γ in (1, 3); 2 is isothermal
}

var (
	_ Mass      = PowerLaw{}
	_ Validator = PowerLaw{}
)

// Validate reports a non-finite parameter, θ_E < 0, q outside (0, 1] or a
// slope outside (1, 3).
func (m PowerLaw) Validate() error {
	const kind = "powerlaw"
	if err := checkAll(
		checkFinite(kind, "x", m.X), checkFinite(kind, "y", m.Y),
		checkNonNegative(kind, "theta_e", m.ThetaE),
		checkAxisRatio(kind, m.Q),
		checkFinite(kind, "pa", m.PA),
	); err != nil {
		return err
	}
	if !(m.Slope > 1 && m.Slope < 3) {
		return fmt.Errorf("lensmodel: %s: slope = %v outside (1, 3)", kind, m.Slope)
	}
	return nil
}

// Deflect returns the deflection (α_x, α_y) in arcsec at (x, y) in arcsec.
func (m PowerLaw) Deflect(x, y float64) (ax, ay float64) {
	e := m.eval()
	return e.deflect(x, y)
}

// Kappa returns the convergence at (x, y) in arcsec.
func (m PowerLaw) Kappa(x, y float64) float64 {
	e := m.eval()
	return e.kappa(x, y)
}

// Hessian returns ψ_xx, ψ_xy and ψ_yy at (x, y) in arcsec.
func (m PowerLaw) Hessian(x, y float64) (hxx, hxy, hyy float64) {
	e := m.eval()
	return e.hessian(x, y)
}

// Potential returns the lensing potential in arcsec² at (x, y) in arcsec,
// zero at the centre.
func (m PowerLaw) Potential(x, y float64) float64 {
	e := m.eval()
	return e.potential(x, y)
}

func (m PowerLaw) prepare() evaluator {
	e := m.eval()
	return &e
}

type powerLawEval struct {
	fr   frame
	q    float64
	b    float64 // θ_E √q
	t    float64 // γ − 1
	f    float64 // (1 − q)/(1 + q)
	pre  float64 // 2b/(1 + q)
	kpre float64 // (2 − t)/2
	// terms is the number of series terms after Ω_0: |Ω_n| ≤ f^n, so
	// f^terms ≤ 1e-16.
	terms int
}

func (m PowerLaw) eval() powerLawEval {
	q := m.Q
	b := m.ThetaE * math.Sqrt(q)
	e := powerLawEval{
		fr:   newFrame(m.X, m.Y, m.PA),
		q:    q,
		b:    b,
		t:    m.Slope - 1,
		f:    (1 - q) / (1 + q),
		pre:  2 * b / (1 + q),
		kpre: (3 - m.Slope) / 2,
	}
	e.terms = powerLawTerms(e.f)
	return e
}

// powerLawTerms returns the number of terms after the first for which
// f^n ≤ 1e-16, at most maxPowerLawTerms.
func powerLawTerms(f float64) int {
	if f <= 0 {
		return 0
	}
	n := math.Ceil(math.Log(1e-16) / math.Log(f))
	if !(n < maxPowerLawTerms) {
		return maxPowerLawTerms
	}
	return int(n)
}

// maxPowerLawTerms caps the series; the terms fall as f^n, so it is reached
// only for q below ~0.02 (f^4000 ≤ 1e-16 needs f ≤ 0.991).
const maxPowerLawTerms = 4000

// local returns the deflection along the axes at (x', y') ≠ (0, 0) and the
// elliptical radius ρ = √(q² x'² + y'²).
func (e *powerLawEval) local(xp, yp float64) (alpha complex128, rho float64) {
	rho = math.Hypot(e.q*xp, yp)
	u := complex(e.q*xp/rho, yp/rho) // e^{iφ}
	u2 := -complex(e.f, 0) * u * u   // −f e^{2iφ}
	a := 2 - e.t
	term := u
	sum := u
	for n := 1; n <= e.terms; n++ {
		fn := float64(2 * n)
		term *= u2 * complex((fn-a)/(fn+a), 0)
		sum += term
	}
	scale := e.pre * math.Exp((e.t-1)*math.Log(e.b/rho))
	return complex(scale, 0) * sum, rho
}

func (e *powerLawEval) deflect(x, y float64) (ax, ay float64) {
	xp, yp := e.fr.local(x, y)
	if xp == 0 && yp == 0 {
		return 0, 0
	}
	a, _ := e.local(xp, yp)
	return e.fr.vector(real(a), imag(a))
}

// kappaLocal returns κ at elliptical radius ρ = √q R.
func (e *powerLawEval) kappaLocal(rho float64) float64 {
	return e.kpre * math.Exp(e.t*math.Log(e.b/rho))
}

func (e *powerLawEval) kappa(x, y float64) float64 {
	xp, yp := e.fr.local(x, y)
	rho := math.Hypot(e.q*xp, yp)
	if rho == 0 {
		return math.Inf(1)
	}
	return e.kappaLocal(rho)
}

func (e *powerLawEval) hessian(x, y float64) (hxx, hxy, hyy float64) {
	xp, yp := e.fr.local(x, y)
	if xp == 0 && yp == 0 {
		return math.Inf(1), 0, math.Inf(1)
	}
	a, rho := e.local(xp, yp)
	k := e.kappaLocal(rho)
	z := complex(xp, yp)
	g := (complex(1-e.t, 0)*a - complex(k, 0)*z) / complex(xp, -yp)
	return e.fr.tensor(k+real(g), imag(g), k-real(g))
}

func (e *powerLawEval) potential(x, y float64) float64 {
	xp, yp := e.fr.local(x, y)
	if xp == 0 && yp == 0 {
		return 0
	}
	a, _ := e.local(xp, yp)
	return (xp*real(a) + yp*imag(a)) / (2 - e.t)
}

func (e *powerLawEval) addDeflect(ax, ay, x, y []float64) {
	ax, ay, y = ax[:len(x)], ay[:len(x)], y[:len(x)]
	for i := range x {
		dx, dy := e.deflect(x[i], y[i])
		ax[i] += dx
		ay[i] += dy
	}
}
