package fit

import (
	"context"
	"path/filepath"
	"testing"
	"time"
)

// benchSim is one dataset of 45 antennas over 101 integrations, 99 990
// visibilities, resolution 0.2″.
var benchSim = simSpec{nAnt: 45, nTimes: 101, uvMax: 206265 / 0.2, sigma: 8e-3, freq: 250e9, dish: 12, seed: 11}

// BenchmarkFitNested runs a nested-sampling fit of SIE + shear + one
// Sérsic (12 free parameters) to one dataset of 10⁵ visibilities on a 128²
// grid of 0.04″ pixels, with the model file's [fit] settings below, and
// reports the likelihood evaluations and their rate.
func BenchmarkFitNested(b *testing.B) {
	dir := b.TempDir()
	m, _ := writeSimModel(b, dir, 0.04, 128, "live_points = 50\ndlogz = 0.5", benchSim)
	opt := LikelihoodOptions{CacheDir: filepath.Join(dir, "cache")}
	if _, err := NewLikelihood(m, opt); err != nil { // fill the cache
		b.Fatal(err)
	}
	b.ReportAllocs()
	for b.Loop() {
		t0 := time.Now()
		r, err := Run(context.Background(), m, RunOptions{Likelihood: opt, DerivedSamples: -1, NoMaps: true, NestedSteps: 24})
		if err != nil {
			b.Fatal(err)
		}
		s := time.Since(t0).Seconds()
		b.ReportMetric(float64(r.Evaluations), "evals")
		b.ReportMetric(float64(r.Evaluations)/s, "evals/s")
		b.ReportMetric(s, "s/fit")
		b.Logf("status %s, ln Z = %.2f ± %.2f, %d evaluations in %.1f s", r.Status, r.Evidence.LogZ, r.Evidence.LogZErr, r.Evaluations, s)
	}
}

// BenchmarkLogLike times one likelihood evaluation of the benchmark model.
func BenchmarkLogLike(b *testing.B) {
	dir := b.TempDir()
	m, truth := writeSimModel(b, dir, 0.04, 128, "", benchSim)
	l, err := NewLikelihood(m, LikelihoodOptions{})
	if err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	for b.Loop() {
		l.LogLike(truth)
	}
}
