package lensmodel

import "math"

// Shear is an external shear of strength γ = Gamma at angle φ_γ = Angle
// (degrees east of north) about the centre (X, Y) in arcsec:
//
//	ψ = (γ/2) r² cos 2(φ − φ_γ),
//
// φ the position angle of the point (east of north) about the centre. In
// sky coordinates, with Δx, Δy the offsets from the centre,
//
//	ψ = (γ/2) [(Δy² − Δx²) cos 2φ_γ + 2 Δx Δy sin 2φ_γ],
//
// so the Hessian is constant: ψ_xx = −γ cos 2φ_γ, ψ_yy = γ cos 2φ_γ,
// ψ_xy = γ sin 2φ_γ, and κ = 0. Images are stretched along φ_γ. The centre
// only adds a constant deflection and potential gradient; it is usually left
// at the origin.
//
// References:
//   - Schneider P., Ehlers J., Falco E. E., 1992, Gravitational Lenses
//     (Springer), sect. 5.5 (the quadratic potential of an external shear;
//     section from memory). The angle convention is that of
//     conventions.md, pinned by the tests.
type Shear struct {
	Gamma float64 // shear strength γ (dimensionless)
	Angle float64 // shear angle φ_γ, degrees east of north
	X, Y  float64 // centre, arcsec
}

var (
	_ Mass      = Shear{}
	_ Validator = Shear{}
)

// Validate reports a non-finite parameter or γ < 0.
func (m Shear) Validate() error {
	const kind = "shear"
	return checkAll(
		checkNonNegative(kind, "gamma", m.Gamma),
		checkFinite(kind, "angle", m.Angle),
		checkFinite(kind, "x", m.X), checkFinite(kind, "y", m.Y),
	)
}

// Deflect returns the deflection (α_x, α_y) in arcsec at (x, y) in arcsec.
func (m Shear) Deflect(x, y float64) (ax, ay float64) {
	e := m.eval()
	return e.deflect(x, y)
}

// Kappa returns 0.
func (m Shear) Kappa(x, y float64) float64 { return 0 }

// Hessian returns the constant ψ_xx, ψ_xy and ψ_yy.
func (m Shear) Hessian(x, y float64) (hxx, hxy, hyy float64) {
	e := m.eval()
	return e.hessian(x, y)
}

// Potential returns the lensing potential in arcsec² at (x, y) in arcsec.
func (m Shear) Potential(x, y float64) float64 {
	e := m.eval()
	return e.potential(x, y)
}

func (m Shear) prepare() evaluator {
	e := m.eval()
	return &e
}

type shearEval struct {
	x0, y0 float64
	gc, gs float64 // γ cos 2φ_γ, γ sin 2φ_γ
}

func (m Shear) eval() shearEval {
	s, c := math.Sincos(2 * m.Angle * math.Pi / 180)
	return shearEval{x0: m.X, y0: m.Y, gc: m.Gamma * c, gs: m.Gamma * s}
}

func (e *shearEval) deflect(x, y float64) (ax, ay float64) {
	dx, dy := x-e.x0, y-e.y0
	return -e.gc*dx + e.gs*dy, e.gs*dx + e.gc*dy
}

func (e *shearEval) kappa(x, y float64) float64 { return 0 }

func (e *shearEval) hessian(x, y float64) (hxx, hxy, hyy float64) {
	return -e.gc, e.gs, e.gc
}

func (e *shearEval) potential(x, y float64) float64 {
	dx, dy := x-e.x0, y-e.y0
	return 0.5*e.gc*(dy*dy-dx*dx) + e.gs*dx*dy
}

func (e *shearEval) addDeflect(ax, ay, x, y []float64) {
	ax, ay, y = ax[:len(x)], ay[:len(x)], y[:len(x)]
	for i := range x {
		dx, dy := x[i]-e.x0, y[i]-e.y0
		ax[i] += -e.gc*dx + e.gs*dy
		ay[i] += e.gs*dx + e.gc*dy
	}
}
