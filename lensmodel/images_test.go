package lensmodel

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
)

// checkLensEquation checks that every image solves β = θ − α(θ).
func checkLensEquation(t *testing.T, m Mass, bx, by float64, ims []Image) {
	t.Helper()
	for _, im := range ims {
		ax, ay := m.Deflect(im.X, im.Y)
		if r := math.Hypot(im.X-ax-bx, im.Y-ay-by); r > 1e-9 {
			t.Errorf("image at (%g, %g): lens-equation residual %g", im.X, im.Y, r)
		}
	}
}

// TestFindImagesSIS: a singular isothermal sphere images a source at
// distance β < θ_E from the centre at θ± = β ± θ_E along the source
// direction, with μ± = 1 ± θ_E/β: |μ₊| = 1 + θ_E/β (minimum) and
// |μ₋| = θ_E/β − 1 (saddle) (Schneider, Ehlers & Falco 1992, sect. 8.1.4).
// Its Fermat potential difference is ½(θ₊² − θ₋²) = 2 β θ_E (ibid., with
// ψ = θ_E |θ|). The central image is infinitely demagnified. Tolerance 1e-9.
func TestFindImagesSIS(t *testing.T) {
	const thetaE = 1.2
	m := SIE{X: 0.1, Y: 0.05, ThetaE: thetaE, Q: 1}
	for _, beta := range []float64{0.02, 0.3, 0.9, 1.1} {
		t.Run(fmt.Sprint(beta), func(t *testing.T) {
			phi := 0.7
			ux, uy := math.Cos(phi), math.Sin(phi)
			bx, by := 0.1+beta*ux, 0.05+beta*uy
			res, err := FindImages(m, bx, by, ImageOptions{DelayScale: 10})
			if err != nil {
				t.Fatal(err)
			}
			if len(res.Images) != 2 {
				t.Fatalf("%d images (%+v), want 2", len(res.Images), res.Images)
			}
			if len(res.SingularCentres) != 1 || res.CentralNote() == "" {
				t.Errorf("singular centres %v, want the lens centre flagged", res.SingularCentres)
			}
			checkLensEquation(t, m, bx, by, res.Images)
			want := []struct{ r, mu float64 }{{beta + thetaE, 1 + thetaE/beta}, {beta - thetaE, 1 - thetaE/beta}}
			for k, im := range res.Images {
				r := (im.X-0.1)*ux + (im.Y-0.05)*uy
				if math.Abs(r-want[k].r) > 1e-9 || math.Abs(im.Mu-want[k].mu) > 1e-9*math.Abs(want[k].mu) {
					t.Errorf("image %d at r = %.12g with μ = %.12g, want r = %g, μ = %g", k, r, im.Mu, want[k].r, want[k].mu)
				}
			}
			if res.Images[0].Kind != Minimum || res.Images[1].Kind != Saddle || res.Images[1].Parity != -1 {
				t.Errorf("kinds %v, %v, want minimum then saddle", res.Images[0].Kind, res.Images[1].Kind)
			}
			if d := res.Images[1].Delay; math.Abs(d-10*2*beta*thetaE) > 1e-9 {
				t.Errorf("delay %g days, want 10 × 2βθ_E = %g", d, 20*beta*thetaE)
			}
		})
	}
}

// TestFindImagesPointMass: a point lens images a source at u = β/θ_E at
// θ± = (β ± √(β² + 4θ_E²))/2 with μ± = ±[(u² + 2)/(2u√(u² + 4)) ± ½]
// (Schneider, Ehlers & Falco 1992, sect. 8.1.2; Paczyński 1986,
// ApJ 304, 1), the inner image a saddle. Tolerance 1e-9 relative.
func TestFindImagesPointMass(t *testing.T) {
	const thetaE = 0.7
	m := PointMass{X: -0.2, ThetaE: thetaE}
	for _, beta := range []float64{0.05, 0.5, 2} {
		t.Run(fmt.Sprint(beta), func(t *testing.T) {
			bx, by := -0.2+beta*0.6, beta*0.8
			res, err := FindImages(m, bx, by, ImageOptions{})
			if err != nil {
				t.Fatal(err)
			}
			if len(res.Images) != 2 {
				t.Fatalf("%d images, want 2", len(res.Images))
			}
			if len(res.SingularCentres) != 1 {
				t.Errorf("singular centres %v, want the point mass", res.SingularCentres)
			}
			checkLensEquation(t, m, bx, by, res.Images)
			u := beta / thetaE
			a := (u*u + 2) / (2 * u * math.Sqrt(u*u+4))
			sq := math.Sqrt(beta*beta + 4*thetaE*thetaE)
			want := []struct{ r, mu float64 }{{(beta + sq) / 2, a + 0.5}, {(beta - sq) / 2, -(a - 0.5)}}
			for k, im := range res.Images {
				r := (im.X+0.2)*0.6 + im.Y*0.8
				if math.Abs(r-want[k].r) > 1e-9 || math.Abs(im.Mu-want[k].mu) > 1e-9*math.Abs(want[k].mu) {
					t.Errorf("image %d at r = %.12g with μ = %.12g, want r = %.12g, μ = %.12g", k, r, im.Mu, want[k].r, want[k].mu)
				}
			}
		})
	}
}

// distanceToCurves returns the distance from (x, y) to the nearest caustic
// vertex.
func distanceToCurves(cs []Curve, x, y float64) float64 {
	d := math.Inf(1)
	for _, c := range cs {
		for k := range c.Source.X {
			d = math.Min(d, math.Hypot(c.Source.X[k]-x, c.Source.Y[k]-y))
		}
	}
	return d
}

// TestFindImagesOddNumber: a non-singular lens images a source off its
// caustics an odd number of times (Burke 1981, ApJ 244, L1). Random
// sources behind cored ellipsoids with shear and a cored pair of galaxies
// (which also makes 7- and 9-image configurations); sources within 1 mas of
// a caustic vertex are skipped.
func TestFindImagesOddNumber(t *testing.T) {
	lenses := []struct {
		name string
		m    Lens
	}{
		{"SIE+shear", Lens{SIE{ThetaE: 1, Q: 0.65, PA: 25, Core: 0.08}, Shear{Gamma: 0.07, Angle: -50}}},
		{"flat SIE+strong shear", Lens{SIE{ThetaE: 1, Q: 0.4, PA: 70, Core: 0.02}, Shear{Gamma: 0.12, Angle: 10}}},
		{"pair", Lens{SIE{ThetaE: 1, Q: 0.8, Core: 0.01}, SIE{X: 1.3, Y: 0.4, ThetaE: 0.3, Q: 0.9, Core: 0.05}}},
	}
	n := 100
	if testing.Short() {
		n = 30
	}
	for _, tc := range lenses {
		t.Run(tc.name, func(t *testing.T) {
			cs, err := CriticalCurves(tc.m, CurveOptions{})
			if err != nil {
				t.Fatal(err)
			}
			rnd := rand.New(rand.NewPCG(1, 1))
			counts := map[int]int{}
			for k := 0; k < n; k++ {
				bx, by := 0.6*(2*rnd.Float64()-1), 0.6*(2*rnd.Float64()-1)
				if distanceToCurves(cs, bx, by) < 1e-3 {
					continue
				}
				res, err := FindImages(tc.m, bx, by, ImageOptions{})
				if err != nil {
					t.Fatal(err)
				}
				if len(res.SingularCentres) != 0 {
					t.Fatalf("cored lens flagged singular at %v", res.SingularCentres)
				}
				counts[len(res.Images)]++
				if len(res.Images)%2 == 0 {
					t.Errorf("source (%.6f, %.6f): %d images, want an odd number", bx, by, len(res.Images))
				}
				checkLensEquation(t, tc.m, bx, by, res.Images)
			}
			// Five or more images need the source inside the small inner
			// caustics, which the short run may miss.
			var three, five int
			for k, c := range counts {
				if k >= 5 {
					five += c
				} else if k == 3 {
					three += c
				}
			}
			if three == 0 || (five == 0 && !testing.Short()) {
				t.Errorf("image multiplicities %v: want sources with 3 and with 5 or more images", counts)
			}
			t.Logf("image multiplicities over %d sources: %v", n, counts)
		})
	}
}

// TestFindImagesCentral: behind a cored isothermal ellipsoid a source inside
// the astroid caustic has five images, the fifth a maximum of the Fermat
// potential near the centre whose |μ| falls toward zero as the core shrinks;
// the singular ellipsoid has four, and the missing fifth is reported
// (Kormann, Schneider & Bartelmann 1994, A&A 284, 285). The bound on the
// central μ is from the expansion at the centre (derived here): there
// κ ≈ θ_E/(2s√q) ≫ 1 and γ is of the same order, so det A ≈ κ² − γ² and
// μ ≈ 4 q s²/θ_E² up to the ellipticity factor; tolerance a factor of 10
// either way of s².
func TestFindImagesCentral(t *testing.T) {
	const bx, by = 0.03, -0.02
	prev := math.Inf(1)
	for _, s := range []float64{0.1, 0.03, 0.01, 0.003, 0.001} {
		m := SIE{ThetaE: 1, Q: 0.7, PA: 10, Core: s}
		res, err := FindImages(m, bx, by, ImageOptions{})
		if err != nil {
			t.Fatal(err)
		}
		if len(res.Images) != 5 {
			t.Fatalf("core %g: %d images, want 5", s, len(res.Images))
		}
		checkLensEquation(t, m, bx, by, res.Images)
		var c Image
		found := 0
		for _, im := range res.Images {
			if im.Kind == Maximum {
				c = im
				found++
			}
		}
		if found != 1 {
			t.Fatalf("core %g: %d maxima, want 1", s, found)
		}
		if r := math.Hypot(c.X, c.Y); r > 3*s {
			t.Errorf("core %g: central image at r = %g, want within 3 core radii", s, r)
		}
		if !(c.Mu > 0 && c.Mu < prev) {
			t.Errorf("core %g: central μ = %g, want positive and below %g (the larger core's)", s, c.Mu, prev)
		}
		if c.Mu > 10*s*s || c.Mu < 0.1*s*s {
			t.Errorf("core %g: central μ = %g, want of order s² = %g", s, c.Mu, s*s)
		}
		prev = c.Mu
	}
	m := SIE{ThetaE: 1, Q: 0.7, PA: 10}
	res, err := FindImages(m, bx, by, ImageOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Images) != 4 || len(res.SingularCentres) != 1 {
		t.Fatalf("singular SIE: %d images and %d singular centres, want 4 and 1", len(res.Images), len(res.SingularCentres))
	}
	kinds := map[ImageKind]int{}
	for _, im := range res.Images {
		kinds[im.Kind]++
	}
	if kinds[Minimum] != 2 || kinds[Saddle] != 2 {
		t.Errorf("singular SIE image kinds %v, want 2 minima and 2 saddles", kinds)
	}
}

// TestFindImagesFoldPair: a source just inside a fold caustic has two
// bright images of opposite parity close together, of nearly equal |μ|
// (Schneider, Ehlers & Falco 1992, sect. 6.2: μ ∝ d^−½ on both sides).
func TestFindImagesFoldPair(t *testing.T) {
	m := benchLens()
	cs, err := CriticalCurves(m, CurveOptions{})
	if err != nil {
		t.Fatal(err)
	}
	tan := curvesOfKind(cs, Tangential)[0]
	// Move a caustic point 1e-4 of its distance toward the lens centre.
	k := tan.Source.Len() / 7
	x, y := tan.Source.X[k], tan.Source.Y[k]
	res, err := FindImages(m, x*(1-1e-3), y*(1-1e-3), ImageOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if n := len(res.Images); n != 4 {
		t.Fatalf("%d images, want 4", n)
	}
	// The two largest |μ| are the fold pair.
	var big []Image
	for _, im := range res.Images {
		if math.Abs(im.Mu) > 20 {
			big = append(big, im)
		}
	}
	if len(big) != 2 || big[0].Parity == big[1].Parity {
		t.Fatalf("bright images %+v, want a pair of opposite parity", big)
	}
	if r := math.Abs(big[0].Mu) / math.Abs(big[1].Mu); r < 0.8 || r > 1.25 {
		t.Errorf("fold pair |μ| ratio %g, want ≈ 1", r)
	}
}

func TestFindImagesErrors(t *testing.T) {
	m := SIE{ThetaE: 1, Q: 1}
	if _, err := FindImages(m, math.NaN(), 0, ImageOptions{}); err == nil {
		t.Error("NaN source: no error")
	}
	if _, err := FindImages(m, 0, 0, ImageOptions{Tol: -1}); err == nil {
		t.Error("negative Tol: no error")
	}
	if _, err := FindImages(m, 0, 0, ImageOptions{DelayScale: math.Inf(1)}); err == nil {
		t.Error("infinite DelayScale: no error")
	}
}

func BenchmarkFindImages(b *testing.B) {
	for _, tc := range []struct {
		name   string
		m      Lens
		bx, by float64
	}{{"SIE+shear/quad", benchLens(), 0.05, 0.02}, {"SIE+shear/double", benchLens(), 0.5, 0.3}, {"group", benchGroup(), 0.2, 0.1}} {
		b.Run(tc.name, func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				if _, err := FindImages(tc.m, tc.bx, tc.by, ImageOptions{}); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// TestFindImagesRing: a source exactly behind the centre of a circular
// lens is imaged into the Einstein ring (Schneider, Ehlers & Falco 1992,
// sect. 8.1); the finder reports ErrRingSource instead of a list.
func TestFindImagesRing(t *testing.T) {
	for _, m := range []Mass{SIE{ThetaE: 1, Q: 1}, SIE{ThetaE: 1, Q: 1, Core: 0.1}, PointMass{ThetaE: 0.5}} {
		if _, err := FindImages(m, 0, 0, ImageOptions{}); !errors.Is(err, ErrRingSource) {
			t.Errorf("%+v: error %v, want ErrRingSource", m, err)
		}
	}
}

// TestFindImagesFarSource: far from a lens with a mass sheet there is one
// image, θ = β/(1 − κ) for a sheet alone, outside the automatic square
// (Schneider, Ehlers & Falco 1992, sect. 5.5: the mass sheet rescales the
// image plane).
func TestFindImagesFarSource(t *testing.T) {
	m := Lens{Sheet{KappaExt: 0.6}, SIE{ThetaE: 0.2, Q: 1, Core: 0.05}}
	bx, by := 8.0, -6.0
	res, err := FindImages(m, bx, by, ImageOptions{})
	if err != nil {
		t.Fatal(err)
	}
	checkLensEquation(t, m, bx, by, res.Images)
	if len(res.Images) != 1 {
		t.Fatalf("%d images, want 1", len(res.Images))
	}
	// The small cored SIE adds nearly θ_E r̂ there: r ≈ (|β| + θ_E)/(1 − κ)
	// to within θ_E s/r/(1 − κ) ≈ 0.001.
	if r := math.Hypot(res.Images[0].X, res.Images[0].Y); math.Abs(r-(10+0.2)/0.4) > 0.002 {
		t.Errorf("image at r = %g, want (|β| + θ_E)/(1 − κ) ≈ %g", r, (10+0.2)/0.4)
	}
}

// TestFindImagesPointMassDelay: the arrival-time difference of the two
// images of a point lens is, in units of θ_E²,
// Δφ = ½ u √(u² + 4) + ln[(√(u² + 4) + u)/(√(u² + 4) − u)], u = β/θ_E
// (Schneider, Ehlers & Falco 1992, sect. 8.1.2, from memory); tolerance
// 1e-9 relative.
func TestFindImagesPointMassDelay(t *testing.T) {
	const thetaE = 0.9
	m := PointMass{ThetaE: thetaE}
	for _, u := range []float64{0.1, 0.7, 2.5} {
		res, err := FindImages(m, u*thetaE, 0, ImageOptions{DelayScale: 1})
		if err != nil {
			t.Fatal(err)
		}
		if len(res.Images) != 2 {
			t.Fatalf("u = %g: %d images, want 2", u, len(res.Images))
		}
		s := math.Sqrt(u*u + 4)
		want := thetaE * thetaE * (0.5*u*s + math.Log((s+u)/(s-u)))
		if d := res.Images[1].Delay; math.Abs(d-want) > 1e-9*want {
			t.Errorf("u = %g: Δφ = %.12g, want %.12g", u, d, want)
		}
	}
}
