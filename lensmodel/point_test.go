package lensmodel

import (
	"math"
	"testing"
)

func TestPointMassImages(t *testing.T) {
	// Schneider, Ehlers & Falco 1992, sect. 8.1.2: a source at distance β
	// from a point lens has images at θ± = (β ± √(β² + 4θ_E²))/2 on the line
	// through lens and source, with μ± = ±[(u² + 2)/(2u√(u² + 4)) ± ½],
	// u = β/θ_E; the minus image has negative parity. Tolerance: rounding.
	m := PointMass{X: 0.2, Y: -0.1, ThetaE: 1.2}
	l := Lens{m}
	for _, tc := range []struct {
		name   string
		beta   float64
		dirDeg float64 // direction of the source from the lens, east of north
	}{
		{"near axis", 0.05, 30},
		{"inside", 0.6, 200},
		{"outside", 3, -80},
	} {
		t.Run(tc.name, func(t *testing.T) {
			ex, ey := math.Sincos(tc.dirDeg * math.Pi / 180)
			u := tc.beta / m.ThetaE
			root := math.Sqrt(tc.beta*tc.beta + 4*m.ThetaE*m.ThetaE)
			a := (u*u + 2) / (2 * u * math.Sqrt(u*u+4))
			for _, im := range []struct {
				theta, mu float64
			}{
				{(tc.beta + root) / 2, a + 0.5},
				{(tc.beta - root) / 2, -(a - 0.5)},
			} {
				x, y := m.X+im.theta*ex, m.Y+im.theta*ey
				bx, by := l.TraceRay(x, y)
				checkClose(t, "β_x", bx, m.X+tc.beta*ex, 1e-14, 0)
				checkClose(t, "β_y", by, m.Y+tc.beta*ey, 1e-14, 0)
				checkClose(t, "μ", l.Magnification(x, y), im.mu, 0, 1e-12)
			}
		})
	}
}

func TestPointMassDerivatives(t *testing.T) {
	m := PointMass{X: 0.1, Y: 0.3, ThetaE: 0.9}
	pts := []fdCase{{1, 1}, {-0.5, 0.2}, {0.3, -2}, {2.5, 0.3}}
	checkMassDerivatives(t, m, pts, 1e-3, 1e-9, 1e-7)
}

func TestPointMassCentre(t *testing.T) {
	m := PointMass{X: 1, Y: 1, ThetaE: 1}
	if ax, ay := m.Deflect(1, 1); ax != 0 || ay != 0 {
		t.Errorf("α at the centre = (%g, %g), want (0, 0)", ax, ay)
	}
	if mu := (Lens{m}).Magnification(1, 1); mu != 0 {
		t.Errorf("μ at the centre = %g, want 0 (the limit)", mu)
	}
	if k := m.Kappa(1.5, 1); k != 0 {
		t.Errorf("κ off the centre = %g, want 0", k)
	}
	if err := (PointMass{ThetaE: -1}).Validate(); err == nil {
		t.Error("Validate accepted θ_E < 0")
	}
}
