package lensmodel

import (
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"gonum.org/v1/gonum/integrate/quad"
)

// directKappa returns κ/κ_s = 2 ∫_0^∞ ρ̃(√(x² + z²)) dz by the substitution
// z = tan θ and 4000-point Gauss–Legendre quadrature in θ, split at
// θ = atan(2) — a route independent of radial.go's.
func directKappa(rho func(float64) float64, x float64) float64 {
	f := func(th float64) float64 {
		z := math.Tan(th)
		c := math.Cos(th)
		return rho(math.Hypot(x, z)) / (c * c)
	}
	return 2 * (quad.Fixed(f, 0, math.Atan(2), 2000, nil, 0) + quad.Fixed(f, math.Atan(2), math.Pi/2, 2000, nil, 0))
}

func TestGNFWReducesToNFW(t *testing.T) {
	// γ = 1 is NFW: against the closed forms of nfw.go, themselves checked
	// against Wright & Brainerd 2000. Tolerance 1e-7 relative (the
	// table's interpolation).
	g := GNFW{X: 0.1, Y: 0.2, KappaS: 0.2, Rs: 3, Gamma: 1, Q: 1}
	n := NFW{X: 0.1, Y: 0.2, KappaS: 0.2, Rs: 3, Q: 1}
	for _, x := range []float64{1e-4, 1e-2, 0.1, 0.5, 0.99, 1, 1.7, 10, 300} {
		r := x * g.Rs
		px, py := g.X+0.8*r, g.Y+0.6*r
		gx, gy := g.Deflect(px, py)
		nx, ny := n.Deflect(px, py)
		checkClose(t, "α_x", gx, nx, 0, 1e-7)
		checkClose(t, "α_y", gy, ny, 0, 1e-7)
		checkClose(t, "κ", g.Kappa(px, py), n.Kappa(px, py), 0, 1e-7)
		checkClose(t, "ψ", g.Potential(px, py), n.Potential(px, py), 1e-9*g.Rs*g.Rs, 1e-7)
	}
}

func TestGNFWLineOfSight(t *testing.T) {
	// κ against an independent quadrature of the line-of-sight integral,
	// 1e-7 relative; central values: κ(0) = κ_s for γ = 0
	// (2 ∫_0^∞ (1+z)^−3 dz = 1) and κ(0) = (π/2) κ_s for Burkert
	// (2 ∫_0^∞ dz/((1+z)(1+z²)) = π/2), both by hand.
	for _, gam := range []float64{0, 0.5, 1.5, 1.9} {
		m := GNFW{KappaS: 1, Rs: 1, Gamma: gam, Q: 1}
		rho := func(r float64) float64 { return math.Pow(r, -gam) * math.Pow(1+r, gam-3) }
		for _, x := range []float64{1e-3, 0.2, 1, 5, 80} {
			checkClose(t, "GNFW κ", m.Kappa(x, 0), directKappa(rho, x), 0, 1e-7)
		}
	}
	checkClose(t, "GNFW γ=0 κ(0)", GNFW{KappaS: 0.3, Rs: 2, Q: 1}.Kappa(0, 0), 0.3, 0, 1e-7)
	b := Burkert{KappaS: 0.3, Rs: 2, Q: 1}
	checkClose(t, "Burkert κ(0)", b.Kappa(0, 0), 0.3*math.Pi/2, 0, 1e-7)
	// At the centre of an elliptical core the Hessian is κ̄(0) diag(1 − ε,
	// 1 + ε) in the axes frame (ψ ≈ κ̄(0) R²/2), here with the major axis
	// east–west (PA = 90°): ψ_xx = κ(0)(1 − ε), ψ_yy = κ(0)(1 + ε).
	be := Burkert{KappaS: 0.3, Rs: 2, Q: 0.9, PA: 90}
	eps := (1 - 0.81) / (1 + 0.81)
	hxx, hxy, hyy := be.Hessian(0, 0)
	checkClose(t, "elliptical core ψ_xx", hxx, 0.3*math.Pi/2*(1-eps), 0, 1e-7)
	checkClose(t, "elliptical core ψ_xy", hxy, 0, 1e-12, 0)
	checkClose(t, "elliptical core ψ_yy", hyy, 0.3*math.Pi/2*(1+eps), 0, 1e-7)
	rho := func(r float64) float64 { return 1 / ((1 + r) * (1 + r*r)) }
	for _, x := range []float64{1e-3, 0.2, 1, 5, 80} {
		checkClose(t, "Burkert κ", b.Kappa(x*b.Rs, 0), 0.3*directKappa(rho, x), 0, 1e-7)
	}
}

func TestTabulatedEnclosedMass(t *testing.T) {
	// ∫ κ dA over a disk (2-D Gauss–Legendre quadrature in polar
	// coordinates, in ln r) equals π R² κ̄(R) = π R |α(R)|. Tolerance 1e-7.
	for _, m := range []Mass{
		GNFW{KappaS: 0.2, Rs: 4, Gamma: 1.4, Q: 1},
		GNFW{KappaS: 0.2, Rs: 4, Gamma: 0.3, Q: 1},
		Burkert{KappaS: 0.2, Rs: 4, Q: 1},
	} {
		for _, R := range []float64{0.5, 4, 30} {
			mass := quad.Fixed(func(phi float64) float64 {
				s, c := math.Sincos(phi)
				return quad.Fixed(func(lr float64) float64 {
					r := math.Exp(lr)
					return m.Kappa(r*s, r*c) * r * r
				}, math.Log(R)-30, math.Log(R), 600, nil, 0)
			}, 0, 2*math.Pi, 8, nil, 0)
			ax, ay := m.Deflect(R, 0)
			checkClose(t, "enclosed mass", mass, math.Pi*R*math.Hypot(ax, ay), 0, 1e-7)
		}
	}
}

func TestTabulatedDerivatives(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	for _, m := range []Mass{
		GNFW{X: 0.1, Y: -0.2, KappaS: 0.3, Rs: 2, Gamma: 1.5, Q: 1},
		GNFW{X: 0.1, Y: -0.2, KappaS: 0.3, Rs: 2, Gamma: 0.2, Q: 0.85, PA: 35},
		Burkert{KappaS: 0.5, Rs: 1.5, Q: 1},
		Burkert{X: -0.3, KappaS: 0.5, Rs: 1.5, Q: 0.9, PA: 100},
	} {
		var pts []fdCase
		for range 15 {
			pts = append(pts, fdCase{6*rnd.Float64() - 3, 6*rnd.Float64() - 3})
		}
		// Interpolated tables: the Hessian is the derivative of the
		// interpolant, so finite differences agree to ~1e-8.
		checkMassDerivatives(t, m, pts, 1e-3, 1e-9, 1e-7)
	}
	// Inside the Burkert core.
	b := Burkert{KappaS: 0.5, Rs: 1.5, Q: 0.9, PA: 100}
	checkMassDerivatives(t, b, []fdCase{{0.01, 0.02}, {-0.2, 0.1}}, 1e-3, 1e-9, 1e-7)
	// Close to the centre of a cored (γ = 0) and a steep (γ = 1.7) inner
	// profile, with a step of 1/200 of the distance.
	for _, m := range []GNFW{
		{X: 0.1, Y: -0.2, KappaS: 0.3, Rs: 2, Gamma: 0, Q: 0.85, PA: 35},
		{X: 0.1, Y: -0.2, KappaS: 0.3, Rs: 2, Gamma: 1.7, Q: 0.85, PA: 35},
	} {
		for _, r := range []float64{1e-3, 1e-2, 0.1} {
			near := []fdCase{{m.X + 0.8*r, m.Y - 0.6*r}, {m.X - 0.3*r, m.Y + 0.95*r}}
			checkMassDerivatives(t, m, near, r/200, 1e-9, 1e-6)
		}
	}
}

func TestTabulatedEllipticityLimit(t *testing.T) {
	// As for NFW (nfw_test.go): at the ellipticity limit κ > 0 and the
	// iso-density contours are convex inside r_s (measured: up to 1.3 r_s
	// for γ = 1.5, 3.8 r_s for Burkert, 5.4 r_s for γ = 0). The check starts
	// at 0.02 r_s: inside, the contours of a core are ellipses (ψ is
	// quadratic in R² there) but κ is too flat for finite differences.
	qmin := math.Sqrt((1 - MaxPotentialEllipticity) / (1 + MaxPotentialEllipticity))
	for _, m := range []Mass{
		GNFW{KappaS: 0.1, Rs: 1, Gamma: 0, Q: qmin, PA: 20},
		GNFW{KappaS: 0.1, Rs: 1, Gamma: 1.5, Q: qmin, PA: 20},
		Burkert{KappaS: 0.1, Rs: 1, Q: qmin, PA: 20},
	} {
		checkConvexContours(t, m, 0.02, 1)
		checkPositive2D(t, m, 1e-3, 20)
	}
	if err := (GNFW{KappaS: 1, Rs: 1, Gamma: 2, Q: 1}).Validate(); err == nil {
		t.Error("Validate accepted γ = 2")
	}
	if err := (Burkert{KappaS: 1, Rs: 1, Q: 0.7}).Validate(); err == nil {
		t.Error("Validate accepted q = 0.7")
	}
	if err := (Burkert{KappaS: 1, Rs: 0, Q: 1}).Validate(); err == nil {
		t.Error("Validate accepted r_s = 0")
	}
}

func TestGNFWInterpolatedTable(t *testing.T) {
	// The table of a γ between nodes, interpolated in γ, against one built
	// by quadrature at that γ: 1e-7 relative in α and κ (the two
	// approximations' combined error).
	for _, g := range []float64{0.013, 0.61, 1.234, 1.987} {
		ti, tq := gnfwTable(g), gnfwQuadratureTable(g)
		for _, x := range []float64{1e-5, 1e-3, 0.1, 0.7, 1, 3, 50, 1e4} {
			ki, ci := ti.eval(x)
			kq, cq := tq.eval(x)
			checkClose(t, "κ̄", ki, kq, 0, 1e-7)
			checkClose(t, "κ", ci, cq, 0, 1e-7)
			checkClose(t, "ψ", ti.potential(x), tq.potential(x), 1e-12, 1e-7)
		}
	}
	// Not a timing test: it logs what a new γ costs, which a fit with a
	// free inner slope pays per step (BenchmarkGNFWTable measures it).
	start := time.Now()
	gnfwTable(1.2345)
	t.Logf("GNFW table of a new γ interpolated in %v", time.Since(start))
}

func BenchmarkGNFWTable(b *testing.B) {
	b.Run("quadrature", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			gnfwQuadratureTable(1.234)
		}
	})
	b.Run("interpolated", func(b *testing.B) {
		gnfwTable(1.234)
		b.ReportAllocs()
		for b.Loop() {
			gnfwTable(1.234)
		}
	})
}
