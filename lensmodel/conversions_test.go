package lensmodel

import (
	"errors"
	"math"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
)

// TestThetaEFromSigma: θ_E = 1.15″ (σ/200 km/s)² D_ls/D_s for the singular
// isothermal sphere (common practice; 4π (200/299792.458)² rad =
// 1.1536″), to 1e-4; and the inverse round-trips to 1e-12.
func TestThetaEFromSigma(t *testing.T) {
	c := FlatLambdaCDM(70, 0.3)
	zl, zs := 0.5, 2.0
	_, ds, dls := c.LensDistances(zl, zs)
	got := c.ThetaEFromSigma(200, zl, zs)
	relClose(t, "θ_E(200 km/s)", got, 1.1536*dls/ds, 1e-4)
	relClose(t, "σ(θ_E)", c.SigmaFromThetaE(got, zl, zs), 200, 1e-12)
}

// TestMassInsideThetaE: the singular isothermal sphere has surface density
// Σ(ξ) = σ²/(2Gξ) (Schneider, Ehlers & Falco 1992, sect. 8.1.4), so the
// projected mass inside R is π σ² R / G; at R = θ_E D_l it must equal
// π θ_E² Σ_cr, to 1e-10.
func TestMassInsideThetaE(t *testing.T) {
	c := Cosmology{H0: 67, Om: 0.25, Ode: 0.6}
	zl, zs := 0.4, 1.8
	sigma := 250.0
	thetaE := c.ThetaEFromSigma(sigma, zl, zs)
	r := thetaE / arcsecPerRadian * c.AngularDiameterDistance(zl) * mpcInMetres
	v := sigma * 1e3
	want := math.Pi * v * v * r / newtonG / solarMassKg
	relClose(t, "M(<θ_E)", c.MassInsideThetaE(thetaE, zl, zs), want, 1e-10)
}

// TestEnclosedConvergence compares the flux integral with closed forms:
// a point mass encloses π θ_E², a singular isothermal sphere π θ_E r
// (Schneider, Ehlers & Falco 1992, sect. 8.1), a sheet κ π r², and an
// external shear nothing; to 1e-10.
func TestEnclosedConvergence(t *testing.T) {
	tests := []struct {
		name   string
		m      Mass
		x0, y0 float64
		r      float64
		want   float64
	}{
		{"point inside", PointMass{X: 0.3, Y: -0.2, ThetaE: 0.9}, 0, 0, 1.5, math.Pi * 0.81},
		{"point outside", PointMass{X: 2, ThetaE: 0.9}, 0, 0, 1.5, 0},
		{"SIS", SIE{ThetaE: 1.2, Q: 1}, 0, 0, 0.7, math.Pi * 1.2 * 0.7},
		{"sheet+shear", Lens{Sheet{KappaExt: 0.2}, Shear{Gamma: 0.1, Angle: 30}}, 0.5, 0.5, 2, 0.2 * math.Pi * 4},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := EnclosedConvergence(tc.m, tc.x0, tc.y0, tc.r)
			if math.Abs(got-tc.want) > 1e-10*math.Max(1, tc.want) {
				t.Errorf("∫κ dA = %.15g, want %.15g", got, tc.want)
			}
		})
	}
}

// TestEinsteinRadius: for circular lenses the mean-κ = 1 radius is θ_E
// (point mass, SIS), for a cored isothermal sphere the tangential critical
// radius of cisRadii; an SIE has a mean-κ = 1 circle a little different
// from θ_E, and a sub-critical sheet has none.
func TestEinsteinRadius(t *testing.T) {
	for _, tc := range []struct {
		name string
		m    Mass
		want float64
	}{
		{"point", PointMass{ThetaE: 0.8}, 0.8},
		{"SIS", SIE{X: 0.1, ThetaE: 1.3, Q: 1}, 1.3},
		{"cored sphere", SIE{ThetaE: 1, Q: 1, Core: 0.1}, func() float64 { rt, _ := cisRadii(1, 0.1); return rt }()},
	} {
		t.Run(tc.name, func(t *testing.T) {
			x0, y0 := 0.0, 0.0
			if s, ok := tc.m.(SIE); ok {
				x0, y0 = s.X, s.Y
			}
			got, err := EinsteinRadius(tc.m, x0, y0)
			if err != nil {
				t.Fatal(err)
			}
			relClose(t, "θ_E", got, tc.want, 1e-9)
		})
	}
	r, err := EinsteinRadius(SIE{ThetaE: 1, Q: 0.6, PA: 20}, 0, 0)
	if err != nil || math.Abs(r-1) > 0.1 {
		t.Errorf("SIE q = 0.6: θ_E,eff = %g (%v), want within 10%% of 1", r, err)
	}
	if _, err := EinsteinRadius(Sheet{KappaExt: 0.5}, 0, 0); !errors.Is(err, ErrNoEinsteinRadius) {
		t.Errorf("sub-critical sheet: error %v, want ErrNoEinsteinRadius", err)
	}
}

// TestNFWFromM200 checks the definitions recomputed here: the mean density
// inside r_200 = c r_s is 200 ρ_crit(z_l) (Navarro, Frenk & White 1997),
// the mass inside r_200 from ρ_s is M_200, and the inverse round-trips to
// 1e-9.
func TestNFWFromM200(t *testing.T) {
	c := FlatLambdaCDM(70, 0.3)
	zl, zs := 0.55, 3.0
	for _, tc := range []struct{ m200, conc float64 }{{1e12, 8}, {3e13, 5}, {1e15, 4}} {
		ks, rs := c.NFWFromM200(tc.m200, tc.conc, zl, zs)
		dl := c.AngularDiameterDistance(zl) * mpcInMetres
		rsm := rs / arcsecPerRadian * dl
		r200 := tc.conc * rsm
		rhos := ks * c.SigmaCritSI(zl, zs) / rsm
		// M(<r) = 4π ρ_s r_s³ [ln(1 + x) − x/(1 + x)], x = r/r_s (NFW 1997).
		x := tc.conc
		m := 4 * math.Pi * rhos * rsm * rsm * rsm * (math.Log(1+x) - x/(1+x))
		relClose(t, "M(<r200)", m/solarMassKg, tc.m200, 1e-10)
		relClose(t, "mean density / ρ_crit", m/(4*math.Pi/3*r200*r200*r200)/c.CriticalDensity(zl), 200, 1e-10)
		m2, c2, err := c.M200FromNFW(ks, rs, zl, zs)
		if err != nil {
			t.Fatal(err)
		}
		relClose(t, "M200 round trip", m2, tc.m200, 1e-9)
		relClose(t, "c round trip", c2, tc.conc, 1e-9)
	}
	if _, _, err := c.M200FromNFW(-1, 1, zl, zs); err == nil {
		t.Error("negative κ_s: no error")
	}
	if _, _, err := c.M200FromNFW(1e-12, 30, zl, zs); err == nil {
		t.Error("concentration below 10⁻³: no error")
	}
}

// TestEnclosedConvergenceQuadrature checks Gauss's theorem against direct
// integration of κ over the disk (Gauss–Legendre in r, trapezoid in φ) for
// smooth lenses: a cored isothermal ellipsoid off the disk centre and a
// cored halo, to 1e-10 relative (1e-6 for the Burkert halo, whose κ and α
// are interpolated from tables).
func TestEnclosedConvergenceQuadrature(t *testing.T) {
	for _, tc := range []struct {
		name string
		m    Mass
		tol  float64
	}{
		{"cored SIE", SIE{X: 0.2, Y: -0.1, ThetaE: 1.1, Q: 0.6, PA: 40, Core: 0.3}, 1e-10},
		{"Burkert", Burkert{KappaS: 0.4, Rs: 0.8, Q: 1}, 1e-6},
	} {
		t.Run(tc.name, func(t *testing.T) {
			const r = 1.3
			nr, nphi := 64, 512
			x := make([]float64, nr)
			w := make([]float64, nr)
			quadLegendre(x, w, 0, r)
			var direct float64
			for i := range x {
				var ring float64
				for k := 0; k < nphi; k++ {
					s, c := math.Sincos(2 * math.Pi * float64(k) / float64(nphi))
					ring += tc.m.Kappa(x[i]*c, x[i]*s)
				}
				direct += w[i] * x[i] * ring * 2 * math.Pi / float64(nphi)
			}
			relClose(t, "∫κ dA", EnclosedConvergence(tc.m, 0, 0, r), direct, tc.tol)
		})
	}
}

// quadLegendre fills the Gauss–Legendre nodes and weights on [a, b].
func quadLegendre(x, w []float64, a, b float64) {
	quad.Legendre{}.FixedLocations(x, w, a, b)
}
