package fit

import (
	"context"
	"math/rand/v2"
	"testing"
)

// BenchmarkNested runs nested sampling to convergence on a correlated 10-D
// Gaussian in a box of ±10 σ; calls/op is the number of likelihood calls.
func BenchmarkNested(b *testing.B) {
	g := newGaussian(10, rand.New(rand.NewPCG(1, 10)), true)
	p := g.problem(g.box(10, 0))
	b.ReportAllocs()
	var calls int
	for b.Loop() {
		r, err := Nested(context.Background(), p, NestedSettings{Seed: 1})
		if err != nil {
			b.Fatal(err)
		}
		calls = r.Evaluations
	}
	b.ReportMetric(float64(calls), "calls/op")
}
