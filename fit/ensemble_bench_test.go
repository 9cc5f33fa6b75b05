package fit

import (
	"context"
	"math/rand/v2"
	"testing"
)

// BenchmarkEnsemble runs the ensemble sampler to convergence (50 τ) on a
// correlated 10-D Gaussian; calls/op is the number of likelihood calls.
func BenchmarkEnsemble(b *testing.B) {
	g := newGaussian(10, rand.New(rand.NewPCG(1, 1)), true)
	p := g.problem(g.box(10, 0))
	b.ReportAllocs()
	var calls int
	for b.Loop() {
		r, err := Ensemble(context.Background(), p, EnsembleSettings{Seed: 1})
		if err != nil {
			b.Fatal(err)
		}
		calls = r.Evaluations
	}
	b.ReportMetric(float64(calls), "calls/op")
}
