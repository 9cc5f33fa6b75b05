package lensmodel

import (
	"fmt"
	"math"
	"testing"
)

// curveSpacing returns the largest distance between successive points of p,
// including the closing step when closed.
func curveSpacing(p Polyline, closed bool) float64 {
	var d float64
	n := p.Len()
	for k := 1; k < n; k++ {
		d = math.Max(d, math.Hypot(p.X[k]-p.X[k-1], p.Y[k]-p.Y[k-1]))
	}
	if closed && n > 1 {
		d = math.Max(d, math.Hypot(p.X[0]-p.X[n-1], p.Y[0]-p.Y[n-1]))
	}
	return d
}

func curvesOfKind(cs []Curve, k CurveKind) []Curve {
	var out []Curve
	for _, c := range cs {
		if c.Kind == k {
			out = append(out, c)
		}
	}
	return out
}

// checkOnCurve checks det A = 0 at every point, closure and point spacing.
func checkCurve(t *testing.T, m Mass, c Curve, h float64) {
	t.Helper()
	if !c.Closed {
		t.Errorf("%v curve of %d points is not closed", c.Kind, c.Image.Len())
	}
	for k := range c.Image.X {
		x, y := c.Image.X[k], c.Image.Y[k]
		if d := detA(m, x, y); math.Abs(d) > 1e-9 {
			t.Fatalf("%v curve point %d (%g, %g): det A = %g, want 0 within 1e-9", c.Kind, k, x, y, d)
		}
		ax, ay := m.Deflect(x, y)
		if math.Abs(c.Source.X[k]-(x-ax)) > 1e-12 || math.Abs(c.Source.Y[k]-(y-ay)) > 1e-12 {
			t.Fatalf("caustic point %d is not the ray-traced critical point", k)
		}
	}
	// Successive crossings lie on neighbouring cell edges.
	if d := curveSpacing(c.Image, c.Closed); d > 1.5*h {
		t.Errorf("%v curve: largest step %g, want ≤ 1.5 × cell %g (curve not ordered)", c.Kind, d, h)
	}
}

func polylineLength(p Polyline, closed bool) float64 {
	var l float64
	n := p.Len()
	for k := 1; k < n; k++ {
		l += math.Hypot(p.X[k]-p.X[k-1], p.Y[k]-p.Y[k-1])
	}
	if closed {
		l += math.Hypot(p.X[0]-p.X[n-1], p.Y[0]-p.Y[n-1])
	}
	return l
}

// TestCriticalCurvesSIS: the singular isothermal sphere has the Einstein
// ring r = θ_E as its only critical curve, its caustic degenerates to the
// point β = 0, and its cut is the circle |β| = θ_E (Schneider, Ehlers &
// Falco 1992, sect. 8.1.4).
func TestCriticalCurvesSIS(t *testing.T) {
	const thetaE = 1.3
	m := SIE{X: 0.2, Y: -0.1, ThetaE: thetaE, Q: 1}
	opt := CurveOptions{CentreX: 0.2, CentreY: -0.1, HalfWidth: 2, Grid: 32, Depth: 5}
	cs, err := CriticalCurves(m, opt)
	if err != nil {
		t.Fatal(err)
	}
	tan := curvesOfKind(cs, Tangential)
	if len(tan) != 1 || len(curvesOfKind(cs, Radial)) != 0 {
		t.Fatalf("got %d tangential and %d radial curves, want 1 and 0", len(tan), len(curvesOfKind(cs, Radial)))
	}
	h := 2 * opt.HalfWidth / float64(opt.Grid<<opt.Depth)
	c := tan[0]
	checkCurve(t, m, c, h)
	for k := range c.Image.X {
		if r := math.Hypot(c.Image.X[k]-0.2, c.Image.Y[k]+0.1); math.Abs(r-thetaE) > 1e-9 {
			t.Fatalf("critical point at r = %.12g, want θ_E = %g within 1e-9", r, thetaE)
		}
		if b := math.Hypot(c.Source.X[k]-0.2, c.Source.Y[k]+0.1); b > 1e-9 {
			t.Fatalf("caustic point at |β| = %g, want 0 within 1e-9", b)
		}
	}
	// A curve of length L crosses between L/h and √2 L/h lattice edges.
	l := 2 * math.Pi * thetaE
	if n := float64(c.Image.Len()); n < l/h || n > math.Sqrt2*l/h {
		t.Errorf("%d points on the critical curve, want between %.0f and %.0f", c.Image.Len(), l/h, math.Sqrt2*l/h)
	}
	cut := curvesOfKind(cs, Cut)
	if len(cut) != 1 {
		t.Fatalf("%d cuts, want 1", len(cut))
	}
	for k := range cut[0].Source.X {
		if b := math.Hypot(cut[0].Source.X[k]-0.2, cut[0].Source.Y[k]+0.1); math.Abs(b-thetaE) > 1e-6 {
			t.Fatalf("cut point at |β| = %g, want θ_E = %g", b, thetaE)
		}
	}
}

// TestCriticalCurvesPointMass: the Einstein ring r = θ_E is the critical
// curve of a point lens, its caustic the point β = 0 (Schneider, Ehlers &
// Falco 1992, sect. 8.1.2); the centre, where |α| → ∞, has no cut.
func TestCriticalCurvesPointMass(t *testing.T) {
	m := PointMass{ThetaE: 0.8}
	cs, err := CriticalCurves(m, CurveOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(cs) != 1 || cs[0].Kind != Tangential || !cs[0].Closed {
		t.Fatalf("got %d curves (%v), want one closed tangential curve", len(cs), cs)
	}
	for k := range cs[0].Image.X {
		if r := math.Hypot(cs[0].Image.X[k], cs[0].Image.Y[k]); math.Abs(r-0.8) > 1e-9 {
			t.Fatalf("critical point at r = %.12g, want 0.8", r)
		}
	}
}

// TestCriticalCurvesSIE: for a singular isothermal potential ψ = r F(φ),
// det A = 1 − 2κ, so the tangential critical curve is the isodensity
// contour κ = ½, here q x'² + y'²/q = θ_E² (Kormann, Schneider & Bartelmann
// 1994, A&A 284, 285, sect. 3). Its caustic is an astroid with four cusps
// on the symmetry axes, inside the cut for q = 0.7 (the astroid pokes out
// of the cut only for q < 0.394, ibid.); the radial caustic is the cut.
func TestCriticalCurvesSIE(t *testing.T) {
	const thetaE, q, pa = 1.1, 0.7, 30.0
	m := SIE{ThetaE: thetaE, Q: q, PA: pa}
	opt := CurveOptions{HalfWidth: 2.5, Grid: 40, Depth: 6}
	cs, err := CriticalCurves(m, opt)
	if err != nil {
		t.Fatal(err)
	}
	tan := curvesOfKind(cs, Tangential)
	cut := curvesOfKind(cs, Cut)
	if len(tan) != 1 || len(cut) != 1 || len(cs) != 2 {
		t.Fatalf("got %d curves, %d tangential and %d cuts; want exactly one of each", len(cs), len(tan), len(cut))
	}
	h := 2 * opt.HalfWidth / float64(opt.Grid<<opt.Depth)
	checkCurve(t, m, tan[0], h)
	f := newFrame(0, 0, pa)
	for k := range tan[0].Image.X {
		xp, yp := f.local(tan[0].Image.X[k], tan[0].Image.Y[k])
		if v := q*xp*xp + yp*yp/q; math.Abs(v-thetaE*thetaE) > 1e-8 {
			t.Fatalf("critical point %d: q x'² + y'²/q = %.12g, want θ_E² = %g", k, v, thetaE*thetaE)
		}
	}
	// Cusps: points where the caustic's direction of travel reverses.
	src := tan[0].Source
	n := src.Len()
	var cusps [][2]float64
	for k := 0; k < n; k++ {
		a, b, c := (k+n-3)%n, k, (k+3)%n
		ux, uy := src.X[b]-src.X[a], src.Y[b]-src.Y[a]
		vx, vy := src.X[c]-src.X[b], src.Y[c]-src.Y[b]
		if ux*vx+uy*vy < 0 {
			xp, yp := f.local(src.X[b], src.Y[b])
			if len(cusps) == 0 || math.Hypot(xp-cusps[len(cusps)-1][0], yp-cusps[len(cusps)-1][1]) > 0.05 {
				cusps = append(cusps, [2]float64{xp, yp})
			}
		}
	}
	if len(cusps) > 1 && math.Hypot(cusps[0][0]-cusps[len(cusps)-1][0], cusps[0][1]-cusps[len(cusps)-1][1]) < 0.05 {
		cusps = cusps[1:]
	}
	if len(cusps) != 4 {
		t.Fatalf("tangential caustic has %d cusps (%v), want 4", len(cusps), cusps)
	}
	for _, c := range cusps {
		// Each cusp lies on the major (y' = 0) or minor (x' = 0) axis.
		if math.Min(math.Abs(c[0]), math.Abs(c[1])) > 1e-3 {
			t.Errorf("cusp at (x', y') = (%.4g, %.4g) is off the symmetry axes", c[0], c[1])
		}
	}
	// The astroid lies inside the cut: compare radii along each direction.
	cr := make([]float64, 0, cut[0].Source.Len())
	cphi := make([]float64, 0, cut[0].Source.Len())
	for k := range cut[0].Source.X {
		cr = append(cr, math.Hypot(cut[0].Source.X[k], cut[0].Source.Y[k]))
		cphi = append(cphi, math.Atan2(cut[0].Source.Y[k], cut[0].Source.X[k]))
	}
	for k := range src.X {
		r, phi := math.Hypot(src.X[k], src.Y[k]), math.Atan2(src.Y[k], src.X[k])
		best, rc := math.Inf(1), 0.0
		for l := range cr {
			if d := math.Abs(math.Remainder(cphi[l]-phi, 2*math.Pi)); d < best {
				best, rc = d, cr[l]
			}
		}
		if r > rc*1.01 {
			t.Fatalf("astroid point at r = %g outside the cut (r = %g) at φ = %g", r, rc, phi)
		}
	}
}

// cisRadii returns the tangential and radial critical radii of the cored
// isothermal sphere, κ = θ_E/(2√(r² + s²)), whose deflection is
// α(r) = θ_E (√(r² + s²) − s)/r (Hinshaw & Krauss 1987, ApJ 320, 468):
// tangential where α = r, radial where dα/dr = 1. Found by bisection.
func cisRadii(thetaE, s float64) (rt, rr float64) {
	// Written without the cancellation of √(r² + s²) − s at small r.
	alpha := func(r float64) float64 { return thetaE * r / (math.Sqrt(r*r+s*s) + s) }
	dalpha := func(r float64) float64 {
		q := math.Sqrt(r*r + s*s)
		return thetaE * s / (q * (q + s))
	}
	bisect := func(f func(float64) float64, a, b float64) float64 {
		for it := 0; it < 200; it++ {
			c := (a + b) / 2
			if (f(c) > 0) == (f(a) > 0) {
				a = c
			} else {
				b = c
			}
		}
		return (a + b) / 2
	}
	rt = bisect(func(r float64) float64 { return alpha(r) - r }, 1e-9, 10*thetaE)
	// dα/dr falls from θ_E/(2s) at the centre; the radial curve is at dα/dr = 1.
	rr = bisect(func(r float64) float64 { return dalpha(r) - 1 }, 1e-9, rt)
	return rt, rr
}

// TestCriticalCurvesCored: a cored isothermal sphere has a radial critical
// curve inside the tangential one, at the radii of cisRadii, and its radial
// caustic is a circle; cored ellipsoids keep the pair, for cores down to a
// few thousandths of θ_E found by the adaptive refinement.
func TestCriticalCurvesCored(t *testing.T) {
	for _, s := range []float64{0.2, 0.05, 0.01} {
		t.Run(fmt.Sprintf("sphere s=%g", s), func(t *testing.T) {
			const thetaE = 1.0
			m := SIE{ThetaE: thetaE, Q: 1, Core: s}
			opt := CurveOptions{HalfWidth: 2, Grid: 32, Depth: 7}
			cs, err := CriticalCurves(m, opt)
			if err != nil {
				t.Fatal(err)
			}
			tan, rad := curvesOfKind(cs, Tangential), curvesOfKind(cs, Radial)
			if len(tan) != 1 || len(rad) != 1 || len(cs) != 2 {
				t.Fatalf("got %d tangential, %d radial of %d curves; want 1, 1 of 2", len(tan), len(rad), len(cs))
			}
			rt, rr := cisRadii(thetaE, s)
			h := 2 * opt.HalfWidth / float64(opt.Grid<<opt.Depth)
			for _, c := range []struct {
				c Curve
				r float64
			}{{tan[0], rt}, {rad[0], rr}} {
				checkCurve(t, m, c.c, h)
				for k := range c.c.Image.X {
					if r := math.Hypot(c.c.Image.X[k], c.c.Image.Y[k]); math.Abs(r-c.r) > 1e-8 {
						t.Fatalf("%v critical point at r = %.12g, want %.12g", c.c.Kind, r, c.r)
					}
				}
			}
		})
	}
	for _, s := range []float64{0.1, 0.01, 0.003} {
		t.Run(fmt.Sprintf("ellipsoid s=%g", s), func(t *testing.T) {
			m := Lens{SIE{ThetaE: 1, Q: 0.6, PA: -20, Core: s}, Shear{Gamma: 0.05, Angle: 40}}
			cs, err := CriticalCurves(m, CurveOptions{})
			if err != nil {
				t.Fatal(err)
			}
			tan, rad := curvesOfKind(cs, Tangential), curvesOfKind(cs, Radial)
			if len(tan) != 1 || len(rad) != 1 {
				t.Fatalf("got %d tangential and %d radial curves, want 1 and 1", len(tan), len(rad))
			}
			if !tan[0].Closed || !rad[0].Closed {
				t.Fatal("curves not closed")
			}
			// The radial curve lies inside the tangential one.
			var rmax, tmin = 0.0, math.Inf(1)
			for k := range rad[0].Image.X {
				rmax = math.Max(rmax, math.Hypot(rad[0].Image.X[k], rad[0].Image.Y[k]))
			}
			for k := range tan[0].Image.X {
				tmin = math.Min(tmin, math.Hypot(tan[0].Image.X[k], tan[0].Image.Y[k]))
			}
			if rmax >= tmin {
				t.Errorf("radial curve reaches r = %g beyond the tangential curve's r = %g", rmax, tmin)
			}
		})
	}
}

// TestCriticalCurvesNone: a weak shear and a sub-critical sheet have no
// critical curves.
func TestCriticalCurvesNone(t *testing.T) {
	cs, err := CriticalCurves(Lens{Shear{Gamma: 0.1}, Sheet{KappaExt: 0.3}}, CurveOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(cs) != 0 {
		t.Fatalf("got %d curves, want none", len(cs))
	}
}

func TestCriticalCurvesOptions(t *testing.T) {
	m := SIE{ThetaE: 1, Q: 1}
	for _, o := range []CurveOptions{{Grid: 1}, {Depth: 20}, {HalfWidth: -1}, {HalfWidth: math.Inf(1)}, {VarTol: -1}} {
		if _, err := CriticalCurves(m, o); err == nil {
			t.Errorf("CriticalCurves with %+v: no error", o)
		}
	}
	if _, err := CriticalCurves(Sheet{KappaExt: 1.5}, CurveOptions{}); err == nil {
		t.Error("super-critical sheet: no error for the automatic search box")
	}
	if _, err := CriticalCurves(m, CurveOptions{HalfWidth: 2, MaxCells: 100}); err == nil {
		t.Error("no error when the cell budget is exceeded")
	}
}

func benchLens() Lens {
	return Lens{SIE{ThetaE: 1.2, Q: 0.75, PA: 30}, Shear{Gamma: 0.06, Angle: -20}}
}

// benchGroup is three galaxies (one cored), an NFW group halo and shear.
func benchGroup() Lens {
	return Lens{
		SIE{X: 0.3, Y: 0.2, ThetaE: 0.8, Q: 0.7, PA: 30, Core: 0.02},
		SIE{X: -0.9, Y: 0.5, ThetaE: 0.4, Q: 0.8, PA: -20},
		SIE{X: 0.5, Y: -1.1, ThetaE: 0.3, Q: 0.9},
		NFW{KappaS: 0.25, Rs: 8, Q: 1},
		Shear{Gamma: 0.04, Angle: 60},
	}
}

func BenchmarkCriticalCurves(b *testing.B) {
	for _, tc := range []struct {
		name  string
		m     Lens
		depth int
	}{{"SIE+shear/depth=4", benchLens(), 4}, {"SIE+shear/depth=5", benchLens(), 5}, {"SIE+shear/depth=6", benchLens(), 6}, {"group/depth=5", benchGroup(), 5}} {
		b.Run(tc.name, func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				if _, err := CriticalCurves(tc.m, CurveOptions{Depth: tc.depth}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
