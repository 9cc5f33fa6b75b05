package source

import (
	"math"
	"sort"
	"testing"

	"deflect/lensmodel"
)

func TestLensedPointSIS(t *testing.T) {
	// SIS: images at β + θ_E and β − θ_E along the source direction, with
	// |μ±| = |1 ± θ_E/β| (Schneider, Ehlers & Falco 1992, sect. 8.1.4);
	// the second image is a saddle.
	lens := lensmodel.SIE{ThetaE: 1.2, Q: 1}
	p := Point{X: 0.3, Y: 0.4, Flux: 2e-3}
	ims, err := LensedPoint(lens, p, PointOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(ims) != 2 {
		t.Fatalf("%d images, want 2", len(ims))
	}
	sort.Slice(ims, func(a, b int) bool { return ims[a].Flux > ims[b].Flux })
	b := 0.5
	within(t, "r+", math.Hypot(ims[0].X, ims[0].Y), b+1.2, 1e-8)
	within(t, "r−", math.Hypot(ims[1].X, ims[1].Y), 1.2-b, 1e-8)
	within(t, "flux+", ims[0].Flux, (1+1.2/b)*2e-3, 1e-8)
	within(t, "flux−", ims[1].Flux, (1.2/b-1)*2e-3, 1e-8)
	if ims[1].Parity != -1 || ims[1].Mu > 0 {
		t.Errorf("inner image parity %d, μ %v: want a saddle", ims[1].Parity, ims[1].Mu)
	}
}

func TestLensedPointsPointMass(t *testing.T) {
	// Point mass: θ± = (β ± √(β² + 4θ_E²))/2, |μ±| = (u² + 2)/(2u√(u² + 4)) ± ½,
	// u = β/θ_E (Schneider, Ehlers & Falco 1992, sect. 8.1.2); the flux
	// scales with the spectral index.
	lens := lensmodel.PointMass{ThetaE: 0.9}
	src := Source{RefFreq: 100e9, Components: []Component{
		Sersic{Flux: 1, Reff: 0.1, N: 1, Q: 1},
		Point{X: -0.36, Y: 0, Flux: 1e-3, Alpha: 2},
	}}
	ims, err := LensedPoints(lens, src, PointOptions{Freq: 200e9})
	if err != nil {
		t.Fatal(err)
	}
	if len(ims) != 2 {
		t.Fatalf("%d images, want 2", len(ims))
	}
	sort.Slice(ims, func(a, b int) bool { return ims[a].Flux > ims[b].Flux })
	beta, te := 0.36, 0.9
	u := beta / te
	s := 4e-3 // 1 mJy × 2²
	base := (u*u + 2) / (2 * u * math.Sqrt(u*u+4))
	within(t, "θ+", -ims[0].X, (beta+math.Sqrt(beta*beta+4*te*te))/2, 1e-8)
	within(t, "θ−", ims[1].X, (math.Sqrt(beta*beta+4*te*te)-beta)/2, 1e-8)
	within(t, "flux+", ims[0].Flux, (base+0.5)*s, 1e-8)
	within(t, "flux−", ims[1].Flux, (base-0.5)*s, 1e-8)
	for _, im := range ims {
		if im.Component != 1 {
			t.Errorf("component index %d, want 1", im.Component)
		}
	}
}
