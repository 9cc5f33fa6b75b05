package source

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
)

func within(t *testing.T, name string, got, want, tol float64) {
	t.Helper()
	if d := math.Abs(got - want); !(d <= tol*math.Max(1, math.Abs(want))) {
		t.Errorf("%s = %.12g, want %.12g (diff %.3g, tol %.3g)", name, got, want, d, tol)
	}
}

// ciottiBertin2 is the asymptotic expansion of b_n of Ciotti & Bertin 1999,
// A&A 352, 447, eq. 18, through its n⁻² term.
func ciottiBertin2(n float64) float64 {
	return 2*n - 1.0/3 + 4/(405*n) + 46/(25515*n*n)
}

func TestSersicBKnown(t *testing.T) {
	for _, tc := range []struct {
		name string
		n    float64
		want float64
		tol  float64
	}{
		// γ(1, b) = 1 − e^{−b} = ½ gives b = ln 2 exactly.
		{"n=0.5 exact ln2", 0.5, math.Ln2, 1e-13},
		// From memory (exponential disc and de Vaucouleurs values).
		{"n=1 from memory", 1, 1.678346990016, 1e-11},
		{"n=4 from memory", 4, 7.669249442500, 1e-10},
	} {
		t.Run(tc.name, func(t *testing.T) {
			within(t, "b_n", SersicB(tc.n), tc.want, tc.tol)
		})
	}
}

func TestSersicBCiottiBertin(t *testing.T) {
	// The expansion of Ciotti & Bertin 1999 eq. 18 through n⁻² leaves an
	// error of order n⁻³ with a coefficient near 1e-4 (its next term), so
	// |b_n − expansion| ≤ 1e-4/n³ for n ≥ 1, 1e-3 at n = 0.5.
	for _, tc := range []struct {
		n, tol float64
	}{
		{0.5, 1e-3}, {1, 1e-4}, {2, 1e-4 / 8}, {4, 1e-4 / 64}, {8, 1e-4 / 512}, {10, 1e-4 / 1000},
	} {
		t.Run(fmt.Sprint("n=", tc.n), func(t *testing.T) {
			b := SersicB(tc.n)
			if d := math.Abs(b - ciottiBertin2(tc.n)); d > tc.tol {
				t.Errorf("b_%v = %.12g, CB99 eq. 18 %.12g, diff %.3g > %.3g", tc.n, b, ciottiBertin2(tc.n), d, tc.tol)
			}
		})
	}
}

// ellipseIntegral integrates f over the ellipse of semi-major axis rmax,
// axis ratio q and major axis at pa degrees about (x0, y0), in coordinates
// x' = ρ cos t, y' = q ρ sin t (Jacobian q ρ), ρ = e^u, Simpson's rule in u
// and the periodic trapezoid in t.
func ellipseIntegral(f func(x, y float64) float64, x0, y0, pa, q, rmin, rmax float64, nu, nt int) float64 {
	sp, cp := math.Sincos(pa * math.Pi / 180)
	u0, u1 := math.Log(rmin), math.Log(rmax)
	h := (u1 - u0) / float64(nu)
	var sum float64
	for i := 0; i <= nu; i++ {
		w := 2.0
		switch {
		case i == 0 || i == nu:
			w = 1
		case i%2 == 1:
			w = 4
		}
		r := math.Exp(u0 + float64(i)*h)
		var ring float64
		for k := range nt {
			s, c := math.Sincos(2 * math.Pi * (float64(k) + 0.5) / float64(nt))
			xp, yp := r*c, q*r*s
			// major axis (sin PA, cos PA), minor axis (−cos PA, sin PA)
			ring += f(x0+xp*sp-yp*cp, y0+xp*cp+yp*sp)
		}
		sum += w * ring * q * r * r
	}
	return sum * h / 3 * 2 * math.Pi / float64(nt)
}

// planeIntegral integrates f over the plane in polar coordinates about
// (x0, y0) with r = e^t, Simpson's rule in t and the periodic trapezoid in φ.
func planeIntegral(f func(x, y float64) float64, x0, y0, rmin, rmax float64, nt, nphi int) float64 {
	t0, t1 := math.Log(rmin), math.Log(rmax)
	h := (t1 - t0) / float64(nt)
	var sum float64
	for i := 0; i <= nt; i++ {
		w := 2.0
		switch {
		case i == 0 || i == nt:
			w = 1
		case i%2 == 1:
			w = 4
		}
		r := math.Exp(t0 + float64(i)*h)
		var ring float64
		for k := range nphi {
			s, c := math.Sincos(2 * math.Pi * (float64(k) + 0.5) / float64(nphi))
			ring += f(x0+r*c, y0+r*s)
		}
		sum += w * ring * r * r // r dr = r² dt
	}
	return sum * h / 3 * 2 * math.Pi / float64(nphi)
}

func TestSersicTotalFlux(t *testing.T) {
	for _, tc := range []struct {
		name string
		s    Sersic
	}{
		{"n=1 round", Sersic{X: 0.1, Y: -0.2, Flux: 2e-3, Reff: 0.3, N: 1, Q: 1, PA: 0}},
		{"n=4 flattened", Sersic{X: -0.3, Y: 0.4, Flux: 1, Reff: 0.2, N: 4, Q: 0.6, PA: 35}},
		{"n=0.5 flattened", Sersic{Flux: 5, Reff: 1.5, N: 0.5, Q: 0.3, PA: -70}},
		{"n=2.7", Sersic{Flux: 1, Reff: 0.5, N: 2.7, Q: 0.8, PA: 120}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			p := tc.s.Prepare()
			// The n = 4 profile has 0.1% of its flux beyond 100 R_e, so
			// integrate out to 10⁵ R_e.
			got := planeIntegral(p.Brightness, tc.s.X, tc.s.Y, 1e-9*tc.s.Reff, 1e5*tc.s.Reff, 4000, 720)
			within(t, "∫I dA", got, tc.s.Flux, 1e-6)
		})
	}
}

func TestSersicHalfLight(t *testing.T) {
	// Half the flux lies inside the ellipse of semi-major axis R_e
	// (definition of b_n, conventions.md).
	s := Sersic{X: 0.3, Y: -0.1, Flux: 1, Reff: 0.4, N: 3, Q: 0.5, PA: 20}
	got := ellipseIntegral(s.Prepare().Brightness, s.X, s.Y, s.PA, s.Q, 1e-10, s.Reff, 2000, 256)
	within(t, "flux inside R_e", got, 0.5, 1e-9)
}

func TestSersicConventions(t *testing.T) {
	// PA east of north: at PA = 0 the major axis points north (+y); at
	// PA = 90 it points east (+x). I(R_e) = I_e on the major axis and at
	// q R_e on the minor axis (conventions.md).
	for _, tc := range []struct {
		name       string
		pa         float64
		majX, majY float64
		minX, minY float64
	}{
		{"PA=0 north", 0, 0, 1, 1, 0},
		{"PA=90 east", 90, 1, 0, 0, 1},
		{"PA=45 north-east", 45, math.Sqrt2 / 2, math.Sqrt2 / 2, -math.Sqrt2 / 2, math.Sqrt2 / 2},
	} {
		t.Run(tc.name, func(t *testing.T) {
			s := Sersic{X: 1, Y: 2, Flux: 1, Reff: 0.5, N: 1.5, Q: 0.4, PA: tc.pa}
			ie := s.Ie()
			within(t, "I on major axis at R_e", s.Brightness(1+tc.majX*0.5, 2+tc.majY*0.5), ie, 1e-12)
			within(t, "I on minor axis at qR_e", s.Brightness(1+tc.minX*0.2, 2+tc.minY*0.2), ie, 1e-12)
			g := Gaussian{X: 1, Y: 2, Flux: 1, FWHM: 1, Q: 0.4, PA: tc.pa}
			peak := g.Brightness(1, 2)
			within(t, "Gaussian half maximum on major axis", g.Brightness(1+tc.majX*0.5, 2+tc.majY*0.5), peak/2, 1e-12)
			within(t, "Gaussian half maximum on minor axis", g.Brightness(1+tc.minX*0.2, 2+tc.minY*0.2), peak/2, 1e-12)
		})
	}
}

func TestGaussianTotalFlux(t *testing.T) {
	g := Gaussian{X: 0.2, Y: 0.1, Flux: 3e-3, FWHM: 0.4, Q: 0.35, PA: 60}
	got := planeIntegral(g.Brightness, g.X, g.Y, 1e-8, 10, 2000, 720)
	within(t, "∫I dA", got, g.Flux, 1e-8)
}

func TestSpectralScaling(t *testing.T) {
	src := Source{RefFreq: 300e9, Components: []Component{
		Sersic{Flux: 2, Reff: 0.2, N: 1, Q: 1, Alpha: 3},
		Point{Flux: 1, Alpha: -0.7},
	}}
	// S_ν = S_ν0 (ν/ν0)^α (conventions.md).
	want := 2*math.Pow(0.5, 3) + math.Pow(0.5, -0.7)
	within(t, "flux at ν0/2", src.Flux(150e9), want, 1e-14)
	within(t, "flux at ν0", src.Flux(0), 3, 1e-14)
	b0 := src.Brightness(0.05, 0, 0)
	within(t, "brightness at ν0/2", src.Brightness(0.05, 0, 150e9), b0/8, 1e-14)
}

func TestSersicScale(t *testing.T) {
	// 5% of the flux lies inside the ellipse of semi-minor axis Scale.
	for _, n := range []float64{1, 4} {
		s := Sersic{Flux: 1, Reff: 1, N: n, Q: 0.5, PA: 10}
		got := ellipseIntegral(s.Prepare().Brightness, 0, 0, s.PA, s.Q, 1e-12, s.Scale()/s.Q, 2000, 64)
		within(t, fmt.Sprint("flux inside Scale, n=", n), got, 0.05, 1e-9)
	}
}

func TestValidate(t *testing.T) {
	for _, tc := range []struct {
		name string
		src  Source
		want string // "" for valid
	}{
		{"valid", Source{RefFreq: 1e11, Components: []Component{Sersic{Flux: 1, Reff: 0.1, N: 1, Q: 1}, Gaussian{FWHM: 0.1, Q: 0.5}, Point{}}}, ""},
		{"Sérsic r_eff", Source{Components: []Component{Sersic{Reff: 0, N: 1, Q: 1}}}, "source component 0: sersic: r_eff = 0 arcsec, want > 0"},
		{"Sérsic n", Source{Components: []Component{Sersic{Reff: 1, N: -1, Q: 1}}}, "source component 0: sersic: n = -1, want in (0, 20]"},
		{"Gaussian q", Source{Components: []Component{Point{}, Gaussian{FWHM: 1, Q: 1.5}}}, "source component 1: gaussian: q = 1.5, want in (0, 1]"},
		{"point NaN", Source{Components: []Component{Point{X: math.NaN()}}}, "source component 0: point: x = NaN is not finite"},
		{"frequency", Source{RefFreq: -1}, "source: reference frequency -1 Hz, want ≥ 0 (0 disables spectral scaling)"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			err := tc.src.Validate()
			switch {
			case tc.want == "" && err != nil:
				t.Errorf("unexpected error %v", err)
			case tc.want != "" && (err == nil || err.Error() != tc.want):
				t.Errorf("error %v, want %q", err, tc.want)
			}
		})
	}
}

// TestSersicBatchBrightness checks that the batch form used by Render gives
// f·Brightness to within the few units in the last place of its vector
// exponential.
func TestSersicBatchBrightness(t *testing.T) {
	rnd := rand.New(rand.NewPCG(4, 4))
	for _, s := range []Sersic{
		{X: 0.1, Y: -0.2, Flux: 2e-3, Reff: 0.2, N: 1, Q: 0.6, PA: 35},
		{X: -0.3, Flux: 1, Reff: 0.05, N: 4, Q: 0.9, PA: -70},
		{Flux: 1, Reff: 0.3, N: 0.5, Q: 0.4, PA: 10},
	} {
		p := s.Prepare()
		n := 1031
		x, y, v := make([]float64, n), make([]float64, n), make([]float64, n)
		for i := range x {
			x[i], y[i] = 2*rnd.Float64()-1, 2*rnd.Float64()-1
		}
		const f = 0.7
		p.addBrightness(v, x, y, f)
		for i := range x {
			if want := f * p.Brightness(x[i], y[i]); math.Abs(v[i]-want) > 1e-15*want {
				t.Fatalf("%+v at (%g, %g): batch %v, Brightness %v", s, x[i], y[i], v[i], want)
			}
		}
	}
}
