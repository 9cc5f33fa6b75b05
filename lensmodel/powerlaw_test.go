package lensmodel

import (
	"math"
	"math/rand/v2"
	"testing"
)

func TestPowerLawIsothermal(t *testing.T) {
	// γ = 2 is the singular isothermal ellipsoid: the deflection equals the
	// SIE closed form (Kormann et al. 1994, via ksbDeflection) to rounding
	// and the series truncation (1e-13).
	rnd := rand.New(rand.NewPCG(1, 1))
	for _, q := range []float64{0.25, 0.6, 0.9, 1} {
		pl := PowerLaw{X: 0.1, Y: 0.2, ThetaE: 1.2, Q: q, PA: 50, Slope: 2}
		sie := SIE{X: 0.1, Y: 0.2, ThetaE: 1.2, Q: q, PA: 50}
		for range 10 {
			x, y := 4*rnd.Float64()-2, 4*rnd.Float64()-2
			px, py := pl.Deflect(x, y)
			sx, sy := sie.Deflect(x, y)
			checkClose(t, "α_x", px, sx, 1e-13, 1e-12)
			checkClose(t, "α_y", py, sy, 1e-13, 1e-12)
			if q < 1 {
				kx, ky := ksbDeflection(sie, x, y)
				checkClose(t, "α_x (KSB)", px, kx, 1e-13, 1e-12)
				checkClose(t, "α_y (KSB)", py, ky, 1e-13, 1e-12)
			}
			checkClose(t, "κ", pl.Kappa(x, y), sie.Kappa(x, y), 0, 1e-13)
			checkClose(t, "ψ", pl.Potential(x, y), sie.Potential(x, y), 1e-13, 1e-12)
		}
	}
}

func TestPowerLawSphere(t *testing.T) {
	// q = 1: κ = ((3−γ)/2)(θ_E/r)^(γ−1) has mean convergence (θ_E/r)^(γ−1)
	// inside r, so α = θ_E^(γ−1) r^(2−γ) r̂ (from the circular-lens relation
	// α = κ̄ r, SEF 1992 eq. 8.3).
	for _, g := range []float64{1.3, 1.8, 2.4, 2.9} {
		m := PowerLaw{ThetaE: 0.9, Q: 1, Slope: g}
		for _, r := range []float64{0.1, 0.9, 3} {
			ax, ay := m.Deflect(0.6*r, 0.8*r)
			want := math.Pow(0.9, g-1) * math.Pow(r, 2-g)
			checkClose(t, "α_x", ax, 0.6*want, 0, 1e-13)
			checkClose(t, "α_y", ay, 0.8*want, 0, 1e-13)
		}
	}
}

func TestPowerLawDerivatives(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	for _, m := range []PowerLaw{
		{X: 0.1, Y: -0.2, ThetaE: 1.3, Q: 0.7, PA: 30, Slope: 2.2},
		{ThetaE: 0.8, Q: 0.3, PA: -75, Slope: 1.6},
		{ThetaE: 1.0, Q: 1, Slope: 2.5},
		{ThetaE: 1.0, Q: 0.12, PA: 10, Slope: 1.9},
	} {
		var pts []fdCase
		for len(pts) < 15 {
			x, y := 3*rnd.Float64()-1.5, 3*rnd.Float64()-1.5
			if math.Hypot(x-m.X, y-m.Y) > 0.3 {
				pts = append(pts, fdCase{x, y})
			}
		}
		checkMassDerivatives(t, m, pts, 1e-3, 1e-9, 1e-7)
		// Close to the cusp, with a step of q/100 of the distance (the scale
		// of the profile along the minor axis); tolerances relative.
		for _, r := range []float64{1e-3, 0.05} {
			pt := []fdCase{{m.X + 0.8*r, m.Y - 0.6*r}}
			checkMassDerivatives(t, m, pt, m.Q*r/100, 1e-7, 1e-6)
		}
	}
}

func TestPowerLawValidate(t *testing.T) {
	for _, tc := range []struct {
		name string
		m    PowerLaw
		ok   bool
	}{
		{"good", PowerLaw{ThetaE: 1, Q: 0.5, Slope: 2.1}, true},
		{"slope 1", PowerLaw{ThetaE: 1, Q: 0.5, Slope: 1}, false},
		{"slope 3", PowerLaw{ThetaE: 1, Q: 0.5, Slope: 3}, false},
		{"q zero", PowerLaw{ThetaE: 1, Q: 0, Slope: 2}, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if err := tc.m.Validate(); (err == nil) != tc.ok {
				t.Errorf("Validate() = %v, want ok = %v", err, tc.ok)
			}
		})
	}
}
