package source

import (
	"math"
	"math/rand/v2"
	"testing"

	"deflect/internal/fftconv"
)

// largeProblem is the matrix-free benchmark case: ≈20000 masked pixels (an
// annulus on a 256² grid of 0.02"), 80×75 = 6000 source nodes, the
// composite lens and the Gaussian beam of gaussMeasurement, with data
// B ⋆ I plus noise of covariance B made by FFT convolution.
func largeProblem(b *testing.B) (meas *gaussMeasurement, g testGrid, mask []int, grid *PixelGrid, prior *Prior) {
	g = testGrid{n: 256, pixel: 0.02}
	rng := rand.New(rand.NewPCG(1, 1))
	src := Source{Components: []Component{Sersic{X: 0.1, Y: 0.05, Flux: 5e-3, Reff: 0.2, N: 1, Q: 0.7, PA: 40}}}
	sky, _ := Render(nil, g, groupLens, src, RenderOptions{Tol: 1e-2})
	meas = &gaussMeasurement{n: g.n}
	conv := fftconv.New(g.n, g.n, meas.BeamAt)
	meas.dirty = conv.Apply(nil, sky)
	// White noise convolved with K, K ⋆ K = B (a Gaussian of σ = √2
	// pixels and Σ K² = B(0)).
	kAmp := math.Sqrt(1e8 / (2 * math.Pi))
	kc := fftconv.New(g.n, g.n, func(di, dj int) float64 {
		if di*di+dj*dj > 200 {
			return 0
		}
		return kAmp * math.Exp(-float64(di*di+dj*dj)/4)
	})
	white := make([]float64, g.n*g.n)
	for k := range white {
		white[k] = rng.NormFloat64()
	}
	for k, v := range kc.Apply(nil, white) {
		meas.dirty[k] += v
	}
	for k := range g.n * g.n {
		x, y := g.Centre(k)
		if r := math.Hypot(x-0.1, y); r > 0.55 && r < 1.72 {
			mask = append(mask, k)
		}
	}
	if len(mask) < 20000 {
		b.Fatalf("mask of %d pixels", len(mask))
	}
	mask = mask[:20000]
	bx, by := TraceMask(g, groupLens, mask, 1)
	grid = BoundingGrid(bx, by, 80, 75, 0.02)
	var err error
	if prior, err = NewPrior(grid, Curvature, 0); err != nil {
		b.Fatal(err)
	}
	return meas, g, mask, grid, prior
}

func BenchmarkPixelSourceLarge(b *testing.B) {
	meas, g, mask, grid, prior := largeProblem(b)
	mp := NewMapping(g, groupLens, mask, grid, 2)
	op := NewOperator([]Measurement{meas}, mp)
	w, h, pw, ph := op.Box()
	b.Logf("%d masked pixels, %d nodes, box %d×%d padded to %d×%d", len(mask), grid.Len(), w, h, pw, ph)
	b.Run("mapping", func(b *testing.B) {
		c0 := processCPU()
		for b.Loop() {
			NewMapping(g, groupLens, mask, grid, 2)
		}
		reportCPU(b, c0)
	})
	b.Run("operator", func(b *testing.B) {
		c0 := processCPU()
		for b.Loop() {
			NewOperator([]Measurement{meas}, mp)
		}
		reportCPU(b, c0)
	})
	b.Run("apply", func(b *testing.B) {
		s := make([]float64, grid.Len())
		for k := range s {
			s[k] = 1
		}
		dst := make([]float64, len(s))
		b.ReportAllocs()
		c0 := processCPU()
		for b.Loop() {
			op.Apply(dst, s)
		}
		reportCPU(b, c0)
	})
	inv, err := InvertMatrixFree(op, prior, grid, mp, InvertOptions{NoErrors: true})
	if err != nil {
		b.Fatal(err)
	}
	b.Logf("evidence λ = %.4g: %d evaluations, %d CG iterations, %d Lanczos steps, ln det ± %.2f",
		inv.Lambda, inv.Evaluations, inv.CGIterations, inv.LanczosSteps, inv.LogDetError)
	for _, tc := range []struct {
		name string
		opt  InvertOptions
	}{
		// mapping, operator, one CG solve and the SLQ evidence
		{"fixed-lambda", InvertOptions{Lambda: inv.Lambda, NoErrors: true}},
		// the same with σ and N_eff (36 more CG solves)
		{"fixed-lambda-sigma", InvertOptions{Lambda: inv.Lambda}},
		// λ search started from a nearby value, as in a fit
		{"warm-lambda", InvertOptions{LambdaStart: 1.3 * inv.Lambda, NoErrors: true}},
	} {
		b.Run(tc.name, func(b *testing.B) {
			var last *Inversion
			c0 := processCPU()
			for b.Loop() {
				mp := NewMapping(g, groupLens, mask, grid, 2)
				op := NewOperator([]Measurement{meas}, mp)
				if last, err = InvertMatrixFree(op, prior, grid, mp, tc.opt); err != nil {
					b.Fatal(err)
				}
			}
			reportCPU(b, c0)
			b.ReportMetric(float64(last.Evaluations), "evaluations")
			b.ReportMetric(float64(last.CGIterations+last.LanczosSteps), "products")
		})
	}
}
