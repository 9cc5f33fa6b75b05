package lensmodel

import (
	"math"
	"testing"
)

func TestShearStretch(t *testing.T) {
	// conventions.md: images are stretched along φ_γ. The magnification
	// matrix M = A⁻¹ of a shear alone has eigenvalues 1/(1 ± γ); the larger,
	// 1/(1 − γ), must have eigenvector (sin φ_γ, cos φ_γ).
	for _, angle := range []float64{0, 30, 90, -45, 135} {
		s := Shear{Gamma: 0.2, Angle: angle}
		l := Lens{s}
		a11, a12, a22 := l.Jacobian(0.3, -0.7)
		det := a11*a22 - a12*a12
		m11, m12, m22 := a22/det, -a12/det, a11/det
		ex, ey := math.Sincos(angle * math.Pi / 180)
		lam := 1 / (1 - s.Gamma)
		checkClose(t, "M e_x", m11*ex+m12*ey, lam*ex, 1e-14, 0)
		checkClose(t, "M e_y", m12*ex+m22*ey, lam*ey, 1e-14, 0)

		// The image of a circular source: trace a fine ring of image points
		// back is the same as mapping the source circle by M; find the image
		// point farthest from the centre by sampling the source circle.
		best, bestR := 0.0, 0.0
		for i := range 3600 {
			phi := float64(i) * math.Pi / 3600 // 0..180°
			bx, by := math.Sin(phi), math.Cos(phi)
			x, y := m11*bx+m12*by, m12*bx+m22*by
			if r := math.Hypot(x, y); r > bestR {
				best, bestR = math.Atan2(x, y), r
			}
		}
		got := math.Mod(best*180/math.Pi+360, 180)
		want := math.Mod(angle+360, 180)
		if d := math.Abs(got - want); math.Min(d, 180-d) > 0.1 {
			t.Errorf("angle %g: image elongated along %.2f°, want %.2f°", angle, got, want)
		}
	}
}

func TestShearPotential(t *testing.T) {
	// ψ = (γ/2) r² cos 2(φ − φ_γ) evaluated in polar form (conventions.md)
	// against the Cartesian form of shear.go.
	s := Shear{Gamma: 0.13, Angle: 25, X: 0.2, Y: -0.1}
	for _, p := range [][2]float64{{1, 0}, {0.3, 2}, {-1.5, -0.4}} {
		dx, dy := p[0]-s.X, p[1]-s.Y
		r2 := dx*dx + dy*dy
		phi := math.Atan2(dx, dy) // east of north
		want := s.Gamma / 2 * r2 * math.Cos(2*(phi-s.Angle*math.Pi/180))
		checkClose(t, "ψ", s.Potential(p[0], p[1]), want, 1e-15, 1e-13)
	}
	checkMassDerivatives(t, s, []fdCase{{1, 2}, {-0.3, 0.4}}, 1e-3, 1e-12, 1e-10)
	if err := (Shear{Gamma: -0.1}).Validate(); err == nil {
		t.Error("Validate accepted γ < 0")
	}
}

func TestSheet(t *testing.T) {
	// A sheet of κ: α = κ r⃗ and μ = 1/(1 − κ)² (SEF 1992, sect. 5.5).
	s := Sheet{KappaExt: 0.1, X: 0.5}
	ax, ay := s.Deflect(1.5, 2)
	checkClose(t, "α_x", ax, 0.1, 1e-16, 0)
	checkClose(t, "α_y", ay, 0.2, 1e-16, 0)
	checkClose(t, "μ", Lens{s}.Magnification(3, 4), 1/(0.9*0.9), 0, 1e-14)
	checkMassDerivatives(t, s, []fdCase{{1, 2}, {-0.3, 0.4}}, 1e-3, 1e-12, 1e-10)
	if err := (Sheet{KappaExt: math.Inf(1)}).Validate(); err == nil {
		t.Error("Validate accepted κ = Inf")
	}
}
