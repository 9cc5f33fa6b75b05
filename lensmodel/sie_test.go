package lensmodel

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
)

// Kormann, Schneider & Bartelmann 1994 (A&A 284, 285): the deflection of
// the singular isothermal ellipsoid in terms of the polar angle φ of the
// point in the axes frame (from memory; their x2 is our major axis x'):
//
//	α_x' = θ_E (√q/e) arcsin(e sin φ),  α_y' = θ_E (√q/e) arsinh((e/q) cos φ),
//
// sin φ = x'/r, cos φ = y'/r, e = √(1−q²). Written out here independently of
// sie.go, with the frame rotation x' = Δx sin PA + Δy cos PA,
// y' = −Δx cos PA + Δy sin PA (PA east of north, conventions.md).
func ksbDeflection(m SIE, x, y float64) (ax, ay float64) {
	pa := m.PA * math.Pi / 180
	dx, dy := x-m.X, y-m.Y
	xp := dx*math.Sin(pa) + dy*math.Cos(pa)
	yp := -dx*math.Cos(pa) + dy*math.Sin(pa)
	r := math.Hypot(xp, yp)
	e := math.Sqrt(1 - m.Q*m.Q)
	f := m.ThetaE * math.Sqrt(m.Q) / e
	a1 := f * math.Asin(e*xp/r)
	a2 := f * math.Asinh(e/m.Q*yp/r)
	return a1*math.Sin(pa) - a2*math.Cos(pa), a1*math.Cos(pa) + a2*math.Sin(pa)
}

func TestSIEKormann(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	for _, m := range []SIE{
		{X: 0.1, Y: -0.2, ThetaE: 1.3, Q: 0.7, PA: 30},
		{X: 0, Y: 0, ThetaE: 0.8, Q: 0.3, PA: -75},
		{X: -1, Y: 2, ThetaE: 2, Q: 0.95, PA: 170},
	} {
		for range 20 {
			x, y := 4*rnd.Float64()-2, 4*rnd.Float64()-2
			gx, gy := m.Deflect(x, y)
			wx, wy := ksbDeflection(m, x, y)
			// Tolerance: rounding of the two closed forms.
			checkClose(t, "α_x", gx, wx, 1e-13, 1e-12)
			checkClose(t, "α_y", gy, wy, 1e-13, 1e-12)
		}
	}
}

func TestSIESphere(t *testing.T) {
	// q = 1, s = 0: the SIS, α = θ_E r̂ (SEF 1992, sect. 8.1.4), exactly.
	m := SIE{X: 0.3, Y: -0.4, ThetaE: 1.7, Q: 1, PA: 12}
	for _, p := range [][2]float64{{1, 2}, {-3, 0.1}, {0.3, 0.6}, {1e-12, -0.4}} {
		ax, ay := m.Deflect(p[0], p[1])
		dx, dy := p[0]-m.X, p[1]-m.Y
		r := math.Hypot(dx, dy)
		checkClose(t, "SIS α_x", ax, m.ThetaE*dx/r, 1e-15, 1e-14)
		checkClose(t, "SIS α_y", ay, m.ThetaE*dy/r, 1e-15, 1e-14)
		checkClose(t, "SIS κ", m.Kappa(p[0], p[1]), m.ThetaE/(2*r), 0, 1e-14)
		checkClose(t, "SIS ψ", m.Potential(p[0], p[1]), m.ThetaE*r, 0, 1e-14)
	}
	// q → 1 is continuous: q = 1 − 1e-9 differs from the SIS by O(1 − q).
	n := m
	n.Q = 1 - 1e-9
	ax, ay := m.Deflect(1.1, 0.7)
	bx, by := n.Deflect(1.1, 0.7)
	checkClose(t, "q→1 α_x", bx, ax, 1e-8, 0)
	checkClose(t, "q→1 α_y", by, ay, 1e-8, 0)

	// Cored sphere: α = θ_E r/(s + √(s² + r²)) (from memory; the q = 1
	// limit of Keeton & Kochanek 1998).
	c := SIE{ThetaE: 1.2, Q: 1, Core: 0.3}
	for _, r := range []float64{0, 0.01, 0.3, 1, 5} {
		ax, ay := c.Deflect(r, 0)
		checkClose(t, "cored α_x", ax, 1.2*r/(0.3+math.Hypot(0.3, r)), 1e-15, 1e-14)
		checkClose(t, "cored α_y", ay, 0, 1e-15, 0)
	}
}

func TestSIEMeanKappa(t *testing.T) {
	// conventions.md: the mean convergence inside the ellipse of semi-axes
	// (θ_E/√q, θ_E√q) is 1. Integrated over the ellipse in polar coordinates
	// (ρ, t) about the centre by Gauss–Legendre quadrature of the sky-frame
	// Kappa; tolerance 1e-10 (quadrature).
	for _, m := range []SIE{
		{X: 0.2, Y: 0.1, ThetaE: 1.1, Q: 0.6, PA: 40},
		{ThetaE: 0.7, Q: 0.25, PA: -10},
		{ThetaE: 2, Q: 1},
	} {
		sq := math.Sqrt(m.Q)
		a, b := m.ThetaE/sq, m.ThetaE*sq
		pa := m.PA * math.Pi / 180
		e1x, e1y := math.Sin(pa), math.Cos(pa) // major axis
		e2x, e2y := -math.Cos(pa), math.Sin(pa)
		inner := func(t float64) float64 {
			ct, st := math.Cos(t), math.Sin(t)
			rmax := 1 / math.Sqrt(ct*ct/(a*a)+st*st/(b*b))
			return quad.Fixed(func(rho float64) float64 {
				xp, yp := rho*ct, rho*st
				x := m.X + xp*e1x + yp*e2x
				y := m.Y + xp*e1y + yp*e2y
				return m.Kappa(x, y) * rho
			}, 0, rmax, 16, nil, 0)
		}
		mass := quad.Fixed(inner, 0, 2*math.Pi, 400, nil, 0)
		checkClose(t, "mean κ", mass/(math.Pi*a*b), 1, 0, 1e-10)
	}
}

func TestSIEPositionAngle(t *testing.T) {
	// conventions.md: PA east of north; PA = 90° is elongated east–west,
	// PA = 0° north–south.
	ew := SIE{ThetaE: 1, Q: 0.5, PA: 90}
	if ew.Kappa(1, 0) <= ew.Kappa(0, 1) {
		t.Errorf("PA 90: κ(1,0) = %g ≤ κ(0,1) = %g; want elongated east–west", ew.Kappa(1, 0), ew.Kappa(0, 1))
	}
	ns := SIE{ThetaE: 1, Q: 0.5, PA: 0}
	if ns.Kappa(0, 1) <= ns.Kappa(1, 0) {
		t.Errorf("PA 0: κ(0,1) = %g ≤ κ(1,0) = %g; want elongated north–south", ns.Kappa(0, 1), ns.Kappa(1, 0))
	}
	// PA = 30°: the iso-κ contour through the major-axis point
	// r (sin 30°, cos 30°) with r = 1/√q, the same κ as the minor-axis
	// point √q (−cos 30°, sin 30°).
	m := SIE{ThetaE: 1, Q: 0.5, PA: 30}
	s, c := math.Sincos(math.Pi / 6)
	a, b := 1/math.Sqrt(m.Q), math.Sqrt(m.Q)
	checkClose(t, "κ on the ellipse", m.Kappa(a*s, a*c), m.Kappa(-b*c, b*s), 0, 1e-14)
	checkClose(t, "κ on the ellipse", m.Kappa(a*s, a*c), 0.5, 0, 1e-14)
}

func TestSIEDerivatives(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	for _, m := range []SIE{
		{X: 0.1, Y: -0.2, ThetaE: 1.3, Q: 0.7, PA: 30},
		{ThetaE: 0.8, Q: 0.3, PA: -75},
		{ThetaE: 1.0, Q: 1, PA: 0},
		{X: 0.1, Y: 0.2, ThetaE: 1.3, Q: 0.6, PA: 110, Core: 0.2},
		{ThetaE: 1.0, Q: 1, Core: 0.1},
		{ThetaE: 1.0, Q: 0.999999, Core: 0.05},
		{ThetaE: 1.0, Q: 0.15, PA: 45, Core: 0.5},
	} {
		var pts []fdCase
		for range 15 {
			pts = append(pts, fdCase{3*rnd.Float64() - 1.5, 3*rnd.Float64() - 1.5})
		}
		// Step and tolerances: five-point differences, h = 1e-3 arcsec.
		checkMassDerivatives(t, m, pts, 1e-3, 1e-9, 1e-7)
		if m.Core > 0 {
			// Inside the core, including the centre, with a step q s/100 (the
			// scale of the core along the minor axis is q s).
			core := []fdCase{{m.X, m.Y}, {m.X + m.Core/3, m.Y - m.Core/4}, {m.X - m.Core, m.Y + m.Core/2}}
			checkMassDerivatives(t, m, core, m.Q*m.Core/100, 1e-9, 1e-7)
		}
	}
}

func TestSIECentre(t *testing.T) {
	m := SIE{X: 0.5, Y: 0.5, ThetaE: 1, Q: 0.7, PA: 20}
	ax, ay := m.Deflect(0.5, 0.5)
	if ax != 0 || ay != 0 {
		t.Errorf("α at the centre = (%g, %g), want (0, 0)", ax, ay)
	}
	if p := m.Potential(0.5, 0.5); p != 0 {
		t.Errorf("ψ at the centre = %g, want 0", p)
	}
	l := Lens{m}
	if mu := l.Magnification(0.5, 0.5); mu != 0 {
		t.Errorf("μ at the singular centre = %g, want 0", mu)
	}
	// A cored ellipsoid has finite values at the centre: κ = θ_E/(2 √q s).
	c := SIE{ThetaE: 1, Q: 0.64, Core: 0.1}
	checkClose(t, "cored central κ", c.Kappa(0, 0), 1/(2*0.8*0.1), 0, 1e-14)
	if p := c.Potential(0, 0); p != 0 {
		t.Errorf("cored ψ at the centre = %g, want 0", p)
	}
}

func TestSIEValidate(t *testing.T) {
	for _, tc := range []struct {
		name string
		m    SIE
		ok   bool
	}{
		{"good", SIE{ThetaE: 1, Q: 0.5}, true},
		{"sphere", SIE{ThetaE: 1, Q: 1}, true},
		{"q zero", SIE{ThetaE: 1, Q: 0}, false},
		{"q above one", SIE{ThetaE: 1, Q: 1.2}, false},
		{"negative theta_e", SIE{ThetaE: -1, Q: 0.5}, false},
		{"negative core", SIE{ThetaE: 1, Q: 0.5, Core: -0.1}, false},
		{"NaN x", SIE{X: math.NaN(), ThetaE: 1, Q: 0.5}, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			err := tc.m.Validate()
			if (err == nil) != tc.ok {
				t.Errorf("Validate() = %v, want ok = %v", err, tc.ok)
			}
		})
	}
}
