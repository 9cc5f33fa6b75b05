package lensmodel

import "sync"

// Burkert is the cored dark-matter halo of Burkert (1995, ApJ 447, L25,
// eq. 2),
//
//	ρ(r) = ρ_0 / ((1 + r/r_0)(1 + (r/r_0)²)),   κ_s = ρ_0 r_0 / Σ_cr,
//
// centred on (X, Y) in arcsec with core radius r_0 = Rs in arcsec and
// KappaS = κ_s. Its density is flat inside r_0 and falls as r^−3 outside,
// like NFW, so it is the cored alternative to an NFW halo; the central
// convergence is κ(0) = (π/2) κ_s.
//
// The lensing functions are tabulated once by quadrature and interpolated
// as for GNFW (radialTable). Q and PA make the potential elliptical exactly
// as for NFW, with the same limit MaxPotentialEllipticity; at the limit the
// iso-density contours stay convex inside 3.8 r_0 (measured).
//
// References:
//   - Burkert A., 1995, ApJ 447, L25, eq. 2 (the density profile).
//   - Golse G., Kneib J.-P., 2002, A&A 390, 821 (the elliptical potential).
type Burkert struct {
	X, Y   float64 // centre, arcsec
	KappaS float64 // κ_s = ρ_0 r_0 / Σ_cr (dimensionless)
	Rs     float64 // core radius r_0, arcsec
	Q      float64 // axis ratio of the potential, in [0.8165, 1]
	PA     float64 // position angle of the major axis, degrees east of north
}

var (
	_ Mass      = Burkert{}
	_ Validator = Burkert{}
)

// Validate reports a non-finite parameter, κ_s < 0, r_0 ≤ 0 or a potential
// axis ratio outside the elliptical-potential limit.
func (m Burkert) Validate() error {
	const kind = "burkert"
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

var burkertTable = sync.OnceValue(func() *radialTable {
	return newRadialTable(func(r float64) float64 {
		return 1 / ((1 + r) * (1 + r*r))
	})
})

func (m Burkert) eval() tabEval {
	return newTabEval(burkertTable(), m.X, m.Y, m.KappaS, m.Rs, m.Q, m.PA)
}

func (m Burkert) prepare() evaluator {
	e := m.eval()
	return &e
}

// Deflect returns the deflection (α_x, α_y) in arcsec at (x, y) in arcsec.
func (m Burkert) Deflect(x, y float64) (ax, ay float64) {
	e := m.eval()
	return e.deflect(x, y)
}

// Kappa returns the convergence at (x, y) in arcsec.
func (m Burkert) Kappa(x, y float64) float64 {
	e := m.eval()
	return e.kappa(x, y)
}

// Hessian returns ψ_xx, ψ_xy and ψ_yy at (x, y) in arcsec.
func (m Burkert) Hessian(x, y float64) (hxx, hxy, hyy float64) {
	e := m.eval()
	return e.hessian(x, y)
}

// Potential returns the lensing potential in arcsec² at (x, y) in arcsec,
// zero at the centre.
func (m Burkert) Potential(x, y float64) float64 {
	e := m.eval()
	return e.potential(x, y)
}
