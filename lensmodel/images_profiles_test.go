package lensmodel

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
)

// TestFindImagesProfiles runs the image finder over the other mass
// profiles. The odd-number theorem (Burke 1981, ApJ 244, L1) holds for
// lenses whose deflection is continuous: power laws shallower than
// isothermal (3-D slope γ < 2, α ∝ r^(2−γ) → 0), NFW and generalised NFW
// cusps (α → 0), and cored halos. Power laws steeper than isothermal have
// |α| → ∞ at the centre (Evans & Wilkinson 1998, MNRAS 296, 800, from memory: no central
// image for γ ≥ 2), and must be flagged with an even image count.
func TestFindImagesProfiles(t *testing.T) {
	galaxy := func(m Mass) Lens { return Lens{m, Shear{Gamma: 0.08, Angle: 35}} }
	tests := []struct {
		name     string
		m        Lens
		singular bool
	}{
		{"powerlaw γ=1.7", galaxy(PowerLaw{ThetaE: 1, Q: 0.7, PA: 20, Slope: 1.7}), false},
		{"powerlaw γ=2.3", galaxy(PowerLaw{ThetaE: 1, Q: 0.7, PA: 20, Slope: 2.3}), true},
		{"NFW", galaxy(NFW{KappaS: 0.9, Rs: 3, Q: 0.9, PA: 10}), false},
		{"GNFW γ=0.5", galaxy(GNFW{KappaS: 1.2, Rs: 2, Gamma: 0.5, Q: 0.95}), false},
		{"Burkert+NIE", galaxy(Lens{Burkert{KappaS: 0.3, Rs: 2, Q: 1}, SIE{ThetaE: 0.8, Q: 0.8, Core: 0.05}}), false},
	}
	n := 40
	if testing.Short() {
		n = 10
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			if err := tc.m.Validate(); err != nil {
				t.Fatal(err)
			}
			cs, err := CriticalCurves(tc.m, CurveOptions{})
			if err != nil {
				t.Fatal(err)
			}
			if len(curvesOfKind(cs, Tangential)) == 0 {
				t.Fatal("no tangential critical curve; choose a stronger lens")
			}
			rnd := rand.New(rand.NewPCG(1, 1))
			counts := map[int]int{}
			for k := 0; k < n; k++ {
				bx, by := 0.3*(2*rnd.Float64()-1), 0.3*(2*rnd.Float64()-1)
				if distanceToCurves(cs, bx, by) < 1e-3 {
					continue
				}
				res, err := FindImages(tc.m, bx, by, ImageOptions{})
				if err != nil {
					t.Fatal(err)
				}
				checkLensEquation(t, tc.m, bx, by, res.Images)
				if got := len(res.SingularCentres) > 0; got != tc.singular {
					t.Fatalf("singular centres %v, want singular = %v", res.SingularCentres, tc.singular)
				}
				counts[len(res.Images)]++
				if odd := len(res.Images)%2 == 1; odd == tc.singular {
					t.Errorf("source (%.5f, %.5f): %d images; want an %s number", bx, by, len(res.Images), map[bool]string{true: "even", false: "odd"}[tc.singular])
				}
			}
			t.Logf("image multiplicities: %v", counts)
		})
	}
}

// TestSingularityDetection pins the classification of centres: α → 0
// (cores, shallow cusps) is regular; bounded non-vanishing α (isothermal)
// and diverging α (point masses, steep cusps) remove the central image.
func TestSingularityDetection(t *testing.T) {
	for _, tc := range []struct {
		m    Mass
		want singularKind
	}{
		{SIE{ThetaE: 1, Q: 0.7}, boundedSingular},
		{SIE{ThetaE: 1, Q: 0.7, Core: 1e-4}, regularCentre},
		{PointMass{ThetaE: 1}, unboundedSingular},
		{PowerLaw{ThetaE: 1, Q: 1, Slope: 2.5}, unboundedSingular},
		{PowerLaw{ThetaE: 1, Q: 1, Slope: 1.5}, regularCentre},
		{NFW{KappaS: 1, Rs: 1, Q: 1}, regularCentre},
	} {
		t.Run(fmt.Sprintf("%T%+v", tc.m, tc.m), func(t *testing.T) {
			c := centresOf(tc.m)
			if len(c) != 1 {
				t.Fatalf("centres %v, want one", c)
			}
			if got := singularity(tc.m, c[0]); got != tc.want {
				t.Errorf("singularity = %d, want %d", got, tc.want)
			}
		})
	}
	if c := centresOf(Lens{Shear{Gamma: 0.1, X: 1}, Sheet{KappaExt: 0.1}}); len(c) != 0 {
		t.Errorf("uniform fields have centres %v, want none", c)
	}
	if math.IsNaN(radialDeflection(SIE{ThetaE: 1, Q: 1}, Centre{}, 1e-8)) {
		t.Error("radial deflection is NaN")
	}
}
