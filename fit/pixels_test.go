package fit

import (
	"math"
	"path/filepath"
	"strings"
	"testing"
)

// pixelModel fits a pixelated source behind the lens of tinyModel.
const pixelModel = `[sky]
pixel = 0.08
size = 32

[[data]]
file = "sim.csv"

[[lens]]
kind = "sie"
name = "g1"
theta_e = {start = 0.7, min = 0.4, max = 1.0}
q = 0.8
pa = 20.0

[[lens]]
kind = "shear"
gamma = 0.04
angle = 30.0

[[source]]
kind = "pixels"
name = "rec"
size = 12
extent = 0.6
`

// TestPixelatedSourceEvidence simulates a Gaussian source behind the lens
// and checks that the evidence of the pixelated reconstruction, as a
// function of θ_E, peaks near the true θ_E, and that the reconstructed
// lensed flux is close to the simulated one.
func TestPixelatedSourceEvidence(t *testing.T) {
	dir := t.TempDir()
	tm, truth := writeSimDoc(t, dir, tinyModel, gridOf(32, 0.08), tinySim)
	tl, err := NewLikelihood(tm, LikelihoodOptions{})
	if err != nil {
		t.Fatal(err)
	}
	tev, err := tl.Evaluate(truth)
	if err != nil {
		t.Fatal(err)
	}
	var lensedFlux float64 // Jy, the simulated lensed Gaussian
	for _, v := range tev.Datasets[0].Groups[0].Model {
		lensedFlux += v
	}
	mp := filepath.Join(dir, "pixels.toml")
	writeFile(t, mp, pixelModel)
	m, err := ReadModel(mp)
	if err != nil {
		t.Fatal(err)
	}
	l, err := NewLikelihood(m, LikelihoodOptions{})
	if err != nil {
		t.Fatal(err)
	}
	best, bestTE := math.Inf(-1), 0.0
	for _, te := range []float64{0.5, 0.6, 0.65, 0.7, 0.75, 0.8, 0.9} {
		ll := l.LogLike([]float64{te})
		if ll > best {
			best, bestTE = ll, te
		}
	}
	if math.Abs(bestTE-0.7) > 0.051 {
		t.Errorf("evidence peaks at θ_E = %g, truth 0.7", bestTE)
	}
	ev, err := l.Evaluate([]float64{0.7})
	if err != nil {
		t.Fatal(err)
	}
	if ev.Pixels == nil || ev.Pixels.Lambda <= 0 {
		t.Fatal("no pixelated inversion in the evaluation")
	}
	if len(ev.Pixels.Sigma) != len(ev.Pixels.Source) {
		t.Errorf("kept evaluation has %d σ values for %d source pixels", len(ev.Pixels.Sigma), len(ev.Pixels.Source))
	}
	for k, s := range ev.Pixels.Sigma {
		if !(s > 0) {
			t.Fatalf("σ[%d] = %g, want > 0", k, s)
		}
	}
	// The lensed flux is what the data measure; the tolerance is a few
	// times its noise, (Σw)^−½ ≈ 0.2 mJy per beam over a few beams.
	if f := ev.Pixels.ImageFlux; math.Abs(f-lensedFlux) > 0.1*lensedFlux {
		t.Errorf("reconstructed lensed flux %g Jy, simulated %g", f, lensedFlux)
	}
	t.Logf("lensed flux: reconstructed %.4g mJy, simulated %.4g mJy; source flux %.4g mJy (simulated 3), λ = %.3g",
		ev.Pixels.ImageFlux*1e3, lensedFlux*1e3, ev.Pixels.Flux*1e3, ev.Pixels.Lambda)
	// Combining with a parametric component is refused.
	bad := strings.Replace(pixelModel, `[[source]]
kind = "pixels"`, `[[source]]
kind = "point"
flux = 1.0

[[source]]
kind = "pixels"`, 1)
	writeFile(t, mp, bad)
	if m, err := ReadModel(mp); err == nil {
		if _, err := NewLikelihood(m, LikelihoodOptions{}); err == nil || !strings.Contains(err.Error(), "cannot yet be combined") {
			t.Errorf("pixels with a point source: err = %v", err)
		}
	}
}
