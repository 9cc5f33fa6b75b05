package lensmodel

import "math"

// PointMass is a point lens of Einstein radius θ_E = ThetaE (arcsec) at
// (X, Y) in arcsec:
//
//	ψ = θ_E² ln r,   α = θ_E² r⃗ / r²,   κ = π θ_E² δ²(r⃗),
//
// r⃗ the offset from the centre. Kappa returns 0 away from the centre and +Inf
// at it. At the centre itself the deflection is returned as zero (its value
// by symmetry), the potential as −Inf and the Hessian as ψ_xx = +Inf,
// ψ_yy = −Inf, ψ_xy = 0, so that the magnification there is 0, its limit.
//
// References:
//   - Schneider P., Ehlers J., Falco E. E., 1992, Gravitational Lenses
//     (Springer), sect. 8.1.2.
type PointMass struct {
	X, Y   float64 // position, arcsec
	ThetaE float64 // Einstein radius θ_E, arcsec
}

var (
	_ Mass      = PointMass{}
	_ Validator = PointMass{}
)

// Validate reports a non-finite position or a negative or non-finite
// Einstein radius.
func (m PointMass) Validate() error {
	const kind = "point"
	return checkAll(
		checkFinite(kind, "x", m.X), checkFinite(kind, "y", m.Y),
		checkNonNegative(kind, "theta_e", m.ThetaE),
	)
}

// Deflect returns the deflection (α_x, α_y) in arcsec at (x, y) in arcsec.
func (m PointMass) Deflect(x, y float64) (ax, ay float64) {
	e := m.eval()
	return e.deflect(x, y)
}

// Kappa returns 0, or +Inf at the centre.
func (m PointMass) Kappa(x, y float64) float64 {
	e := m.eval()
	return e.kappa(x, y)
}

// Hessian returns ψ_xx, ψ_xy and ψ_yy at (x, y) in arcsec.
func (m PointMass) Hessian(x, y float64) (hxx, hxy, hyy float64) {
	e := m.eval()
	return e.hessian(x, y)
}

// Potential returns θ_E² ln r in arcsec², r in arcsec.
func (m PointMass) Potential(x, y float64) float64 {
	e := m.eval()
	return e.potential(x, y)
}

func (m PointMass) prepare() evaluator {
	e := m.eval()
	return &e
}

type pointEval struct {
	x0, y0 float64
	b2     float64 // θ_E²
}

func (m PointMass) eval() pointEval {
	return pointEval{x0: m.X, y0: m.Y, b2: m.ThetaE * m.ThetaE}
}

func (e *pointEval) deflect(x, y float64) (ax, ay float64) {
	dx, dy := x-e.x0, y-e.y0
	r2 := dx*dx + dy*dy
	if r2 == 0 {
		return 0, 0
	}
	f := e.b2 / r2
	return f * dx, f * dy
}

func (e *pointEval) kappa(x, y float64) float64 {
	if x == e.x0 && y == e.y0 && e.b2 > 0 {
		return math.Inf(1)
	}
	return 0
}

func (e *pointEval) hessian(x, y float64) (hxx, hxy, hyy float64) {
	dx, dy := x-e.x0, y-e.y0
	r2 := dx*dx + dy*dy
	if r2 == 0 {
		if e.b2 == 0 {
			return 0, 0, 0
		}
		return math.Inf(1), 0, math.Inf(-1)
	}
	f := e.b2 / (r2 * r2)
	return f * (dy*dy - dx*dx), -2 * f * dx * dy, f * (dx*dx - dy*dy)
}

func (e *pointEval) potential(x, y float64) float64 {
	dx, dy := x-e.x0, y-e.y0
	if e.b2 == 0 {
		return 0
	}
	return e.b2 / 2 * math.Log(dx*dx+dy*dy)
}

func (e *pointEval) addDeflect(ax, ay, x, y []float64) {
	ax, ay, y = ax[:len(x)], ay[:len(x)], y[:len(x)]
	for i := range x {
		dx, dy := e.deflect(x[i], y[i])
		ax[i] += dx
		ay[i] += dy
	}
}
