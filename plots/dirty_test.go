package plots

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// TestRobustSigma: 1.4826·MAD estimates the rms of Gaussian noise (common
// practice; the constant is 1/Φ⁻¹(0.75)), also with 1% of bright outliers.
// Tolerance 2%, several times the estimator's sampling error at n = 10⁵.
func TestRobustSigma(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	x := make([]float64, 100000)
	for k := range x {
		x[k] = 3 + 2*rng.NormFloat64()
	}
	if s := RobustSigma(x); math.Abs(s/2-1) > 0.02 {
		t.Errorf("σ = %g, want 2 ± 2%%", s)
	}
	for k := 0; k < len(x); k += 100 {
		x[k] = 1000
	}
	x[1] = math.NaN()
	if s := RobustSigma(x); math.Abs(s/2-1) > 0.03 {
		t.Errorf("with outliers σ = %g, want 2 ± 3%%", s)
	}
	if s := RobustSigma([]float64{math.NaN()}); !math.IsNaN(s) {
		t.Errorf("no finite values: σ = %g, want NaN", s)
	}
}

func TestSigmaLevels(t *testing.T) {
	if got := sigmaLevels(4.5); !slices.Equal(got, []float64{2, 3, 4}) {
		t.Errorf("levels to 4.5σ = %v, want [2 3 4]", got)
	}
	if got := sigmaLevels(1.9); len(got) != 0 {
		t.Errorf("levels to 1.9σ = %v, want none", got)
	}
	if got := sigmaLevels(100); len(got) != maxSigmaLevels || got[0] != 2 {
		t.Errorf("levels to 100σ = %v, want %d from 2", got, maxSigmaLevels)
	}
}

func TestDirtyErrors(t *testing.T) {
	good := dirtyFixture(16)
	for _, tc := range []struct {
		name string
		edit func(d *DirtyImages)
	}{
		{"grid mismatch", func(d *DirtyImages) { d.Model = gaussImage(8, 0.05, nil, 0, nil) }},
		{"grid offset", func(d *DirtyImages) { d.Residual.X0 = 0.1 }},
		{"flat residual, no sigma", func(d *DirtyImages) {
			d.Residual = gaussImage(16, 0.05, nil, 0, nil)
			d.Sigma = 0
		}},
		{"zoom outside", func(d *DirtyImages) { d.Zoom = &Box{10, 11, 10, 11} }},
		{"bad curve", func(d *DirtyImages) { d.Critical = []Polyline{{{0, 0}, {math.NaN(), 1}}} }},
	} {
		t.Run(tc.name, func(t *testing.T) {
			d := good
			tc.edit(&d)
			if _, err := DirtyFigure(d); err == nil {
				t.Error("no error")
			}
		})
	}
}
