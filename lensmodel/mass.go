package lensmodel

// Mass is a projected mass distribution evaluated at an image-plane position
// (x, y) in arcsec. Every component and every Lens implements it.
type Mass interface {
	// Deflect returns the deflection α = ∇ψ in arcsec.
	Deflect(x, y float64) (ax, ay float64)
	// Kappa returns the convergence κ = Σ/Σ_cr (dimensionless).
	Kappa(x, y float64) float64
	// Hessian returns the second derivatives of the lensing potential,
	// ψ_xx, ψ_xy and ψ_yy (dimensionless).
	Hessian(x, y float64) (hxx, hxy, hyy float64)
	// Potential returns the lensing potential ψ in arcsec².
	Potential(x, y float64) float64
}
