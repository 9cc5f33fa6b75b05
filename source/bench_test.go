package source

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"deflect/lensmodel"
)

// groupLens is three galaxies and external shear, the composite lens of the
// lensmodel benchmarks.
var groupLens = lensmodel.Lens{
	lensmodel.SIE{X: 0.3, Y: 0.1, ThetaE: 0.9, Q: 0.75, PA: 30},
	lensmodel.SIE{X: -0.6, Y: 0.4, ThetaE: 0.4, Q: 0.6, PA: -50},
	lensmodel.SIE{X: 0.2, Y: -0.8, ThetaE: 0.3, Q: 0.85, PA: 75},
	lensmodel.Shear{Gamma: 0.06, Angle: 20},
}

func BenchmarkRender(b *testing.B) {
	g := testGrid{n: 256, pixel: 0.03}
	src := Source{Components: []Component{Sersic{X: 0.1, Y: 0.05, Flux: 5e-3, Reff: 0.15, N: 1.5, Q: 0.7, PA: 40}}}
	dst := make([]float64, g.n*g.n)
	for _, tol := range []float64{1e-2, 1e-3} {
		b.Run(fmt.Sprintf("tol=%g", tol), func(b *testing.B) {
			b.ReportAllocs()
			var st RenderStats
			c0 := processCPU()
			for b.Loop() {
				_, st = Render(dst, g, groupLens, src, RenderOptions{Tol: tol})
			}
			reportCPU(b, c0)
			b.ReportMetric(float64(st.Rays)/float64(g.n*g.n), "rays/pixel")
		})
	}
}

// gaussMeasurement is a Measurement with a Gaussian dirty beam of σ = 2
// pixels and peak Σw = 1e8 Jy⁻² (image noise 1e-4 Jy/beam), for timing.
type gaussMeasurement struct {
	n     int
	dirty []float64
}

func (m *gaussMeasurement) Size() int                { return m.n }
func (m *gaussMeasurement) DirtyAt(i, j int) float64 { return m.dirty[j*m.n+i] }
func (m *gaussMeasurement) GainAt(i, j int) float64  { return 1 }
func (m *gaussMeasurement) DataTerm() float64        { return 1e12 }
func (m *gaussMeasurement) BeamAt(di, dj int) float64 {
	return 1e8 * math.Exp(-float64(di*di+dj*dj)/8)
}

func BenchmarkPixelSource(b *testing.B) {
	// 5000 masked image pixels (an annulus on a 128² grid of 0.04"),
	// 40×25 = 1000 source nodes, one lens model.
	g := testGrid{n: 128, pixel: 0.04}
	rng := rand.New(rand.NewPCG(1, 1))
	// The dirty image of a lensed Sérsic, B ⋆ I, plus noise of covariance
	// B: white noise convolved with K, K ⋆ K = B (a Gaussian of σ = √2
	// pixels and Σ K² = B(0)).
	white := make([]float64, g.n*g.n)
	for k := range white {
		white[k] = rng.NormFloat64()
	}
	kAmp := math.Sqrt(1e8 / (2 * math.Pi))
	meas := &gaussMeasurement{n: g.n, dirty: make([]float64, g.n*g.n)}
	src := Source{Components: []Component{Sersic{X: 0.1, Y: 0.05, Flux: 5e-3, Reff: 0.2, N: 1, Q: 0.7, PA: 40}}}
	sky, _ := Render(nil, g, groupLens, src, RenderOptions{Tol: 1e-2})
	for k := range meas.dirty {
		i, j := k%g.n, k/g.n
		var d float64
		for k2, f := range sky {
			if f > 1e-12 {
				d += meas.BeamAt(i-k2%g.n, j-k2/g.n) * f
			}
		}
		for di := -8; di <= 8; di++ {
			for dj := -8; dj <= 8; dj++ {
				if i+di >= 0 && i+di < g.n && j+dj >= 0 && j+dj < g.n {
					d += kAmp * math.Exp(-float64(di*di+dj*dj)/4) * white[(j+dj)*g.n+i+di]
				}
			}
		}
		meas.dirty[k] = d
	}
	var mask []int
	for k := range g.n * g.n {
		x, y := g.Centre(k)
		if r := math.Hypot(x-0.1, y); r > 0.6 && r < 1.7 {
			mask = append(mask, k)
		}
	}
	mask = mask[:5000]
	bx, by := make([]float64, len(mask)), make([]float64, len(mask))
	for r, k := range mask {
		x, y := g.Centre(k)
		bx[r], by[r] = groupLens.TraceRay(x, y)
	}
	grid := BoundingGrid(bx, by, 40, 25, 0.02)
	prior, err := NewPrior(grid, Curvature, 0)
	if err != nil {
		b.Fatal(err)
	}
	mp := NewMapping(g, groupLens, mask, grid, 2)
	nm := NewNormal([]Measurement{meas}, mp)
	b.Run("mapping", func(b *testing.B) {
		c0 := processCPU()
		for b.Loop() {
			NewMapping(g, groupLens, mask, grid, 2)
		}
		reportCPU(b, c0)
	})
	b.Run("normal", func(b *testing.B) {
		c0 := processCPU()
		for b.Loop() {
			NewNormal([]Measurement{meas}, mp)
		}
		reportCPU(b, c0)
	})
	inv, err := Invert(nm, prior, grid, mp, InvertOptions{NoErrors: true})
	if err != nil {
		b.Fatal(err)
	}
	b.Run("fixed-lambda", func(b *testing.B) {
		// mapping, normal matrix, one Cholesky and the evidence
		c0 := processCPU()
		for b.Loop() {
			mp := NewMapping(g, groupLens, mask, grid, 2)
			nm := NewNormal([]Measurement{meas}, mp)
			if _, err := Invert(nm, prior, grid, mp, InvertOptions{Lambda: inv.Lambda, NoErrors: true}); err != nil {
				b.Fatal(err)
			}
		}
		reportCPU(b, c0)
	})
	b.Run("evidence-lambda", func(b *testing.B) {
		var evals int
		c0 := processCPU()
		for b.Loop() {
			mp := NewMapping(g, groupLens, mask, grid, 2)
			nm := NewNormal([]Measurement{meas}, mp)
			inv, err := Invert(nm, prior, grid, mp, InvertOptions{NoErrors: true})
			if err != nil {
				b.Fatal(err)
			}
			evals = inv.Evaluations
		}
		reportCPU(b, c0)
		b.ReportMetric(float64(evals), "factorisations")
	})
	b.Run("matrix-free-evidence-lambda", func(b *testing.B) {
		// the same search on the matrix-free path, for comparison
		var last *Inversion
		c0 := processCPU()
		for b.Loop() {
			mp := NewMapping(g, groupLens, mask, grid, 2)
			op := NewOperator([]Measurement{meas}, mp)
			var err error
			if last, err = InvertMatrixFree(op, prior, grid, mp, InvertOptions{NoErrors: true}); err != nil {
				b.Fatal(err)
			}
		}
		reportCPU(b, c0)
		b.ReportMetric(float64(last.Evaluations), "evaluations")
		b.ReportMetric(float64(last.CGIterations+last.LanczosSteps), "products")
	})
	b.Run("warm-lambda", func(b *testing.B) {
		// λ search started from a nearby value, as from the previous lens
		// model in a fit
		var evals int
		c0 := processCPU()
		for b.Loop() {
			mp := NewMapping(g, groupLens, mask, grid, 2)
			nm := NewNormal([]Measurement{meas}, mp)
			inv, err := Invert(nm, prior, grid, mp, InvertOptions{LambdaStart: 1.3 * inv.Lambda, NoErrors: true})
			if err != nil {
				b.Fatal(err)
			}
			evals = inv.Evaluations
		}
		reportCPU(b, c0)
		b.ReportMetric(float64(evals), "factorisations")
	})
}

// reportCPU reports the process CPU time per iteration since c0 (all
// goroutines; with -cpu 1 the cost on one core even when the machine is
// shared).
func reportCPU(b *testing.B, c0 time.Duration) {
	b.ReportMetric(float64(processCPU()-c0)/1e6/float64(b.N), "cpu-ms/op")
}
