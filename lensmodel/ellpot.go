package lensmodel

import (
	"fmt"
	"math"
)

// MaxPotentialEllipticity is the largest ellipticity ε of the potential
// accepted by the components made elliptical through their potential (NFW,
// GNFW, Burkert): ψ(x', y') = ψ_sph(R) with
//
//	R² = (1 − ε) x'² + (1 + ε) y'²,
//
// x' along the major axis. For an axis ratio q of the iso-potential contours,
// ε = (1 − q²)/(1 + q²); ε = 0.2 is q = √(2/3) ≈ 0.8165. Golse & Kneib (2002,
// A&A 390, 821, sect. 3) show that the surface density of an elliptical
// potential turns dumbbell-shaped, and eventually negative, as ε grows, and
// recommend the form for small ε only (of order 0.2 for NFW, from memory).
// Measured for NFW at ε = 0.2 (the tests check it): the iso-density
// contours are convex inside R ≈ 2.7 r_s and dumbbell-shaped beyond, and κ
// turns negative beyond R ≈ 31 r_s (at ε = 0.1: 12 r_s and 460 r_s), both
// outside the strong-lensing region of a halo whose r_s exceeds its
// Einstein radius; masses integrated far out are not meaningful. For
// flatter halos combine several components or use the SIE or PowerLaw,
// whose ellipticity is in the density.
const MaxPotentialEllipticity = 0.2

// potentialEllipticity returns ε for the axis ratio q of the potential and
// an error when q is outside [q(ε_max), 1].
func potentialEllipticity(kind string, q float64) (float64, error) {
	if err := checkAxisRatio(kind, q); err != nil {
		return 0, err
	}
	eps := (1 - q*q) / (1 + q*q)
	if eps > MaxPotentialEllipticity*(1+1e-12) {
		qmin := math.Sqrt((1 - MaxPotentialEllipticity) / (1 + MaxPotentialEllipticity))
		return 0, fmt.Errorf("lensmodel: %s: potential axis ratio q = %v below %.4f (ellipticity ε = %.3f above the limit %.2f of the elliptical-potential form)",
			kind, q, qmin, eps, MaxPotentialEllipticity)
	}
	return eps, nil
}

// ellPot is the geometry of an elliptical potential about a frame:
// R² = a1 x'² + a2 y'², a1 = 1 − ε, a2 = 1 + ε.
//
// For a spherical profile with mean convergence κ̄(R) inside R and
// convergence κ(R), ψ' = κ̄ R, ψ” = 2κ − κ̄, and with n = ∇R = (a1 x', a2 y')/R
//
//	α'    = κ̄(R) (a1 x', a2 y'),
//	ψ_ij  = 2 (κ − κ̄) n_i n_j + κ̄ a_i δ_ij,
//
// (the elliptical potential of Golse & Kneib 2002, A&A 390, 821, written in
// this form for the package and checked by finite differences), and the convergence of the elliptical potential is ½ tr ψ_ij.
type ellPot struct {
	f      frame
	a1, a2 float64
}

func newEllPot(x0, y0, q, paDeg float64) ellPot {
	// An invalid q gives NaN values; Validate reports it.
	eps := (1 - q*q) / (1 + q*q)
	return ellPot{f: newFrame(x0, y0, paDeg), a1: 1 - eps, a2: 1 + eps}
}

// radius returns the local coordinates and the elliptical radius R.
func (g *ellPot) radius(x, y float64) (xp, yp, r float64) {
	xp, yp = g.f.local(x, y)
	return xp, yp, math.Sqrt(g.a1*xp*xp + g.a2*yp*yp)
}

// deflect returns the sky deflection for the mean convergence kbar at R.
func (g *ellPot) deflect(xp, yp, kbar float64) (ax, ay float64) {
	return g.f.vector(kbar*g.a1*xp, kbar*g.a2*yp)
}

// hessian returns the sky Hessian for κ̄ and κ of the spherical profile at R.
func (g *ellPot) hessian(xp, yp, r, kbar, k float64) (hxx, hxy, hyy float64) {
	n1, n2 := g.a1*xp/r, g.a2*yp/r
	d := 2 * (k - kbar)
	return g.f.tensor(d*n1*n1+kbar*g.a1, d*n1*n2, d*n2*n2+kbar*g.a2)
}

// kappa returns ½ tr ψ_ij.
func (g *ellPot) kappa(xp, yp, r, kbar, k float64) float64 {
	n1, n2 := g.a1*xp/r, g.a2*yp/r
	return (k-kbar)*(n1*n1+n2*n2) + kbar*(g.a1+g.a2)/2
}
