package plots

import (
	"math"
	"math/rand/v2"
	"testing"
)

func ar1(rng *rand.Rand, phi float64, n int) []float64 {
	x := make([]float64, n)
	v := 0.0
	for t := range x {
		v = phi*v + math.Sqrt(1-phi*phi)*rng.NormFloat64()
		x[t] = v
	}
	return x
}

// TestAutocorrelationDirect compares the FFT estimate with the defining
// sum, ρ(τ) = Σ_t (x_t − x̄)(x_{t+τ} − x̄) / Σ_t (x_t − x̄)², to 1e-12.
func TestAutocorrelationDirect(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	x := ar1(rng, 0.5, 37)
	got := Autocorrelation(x, 40)
	if len(got) != 37 {
		t.Fatalf("%d lags, want maxLag clipped to 36 → 37 values", len(got))
	}
	mean := 0.0
	for _, v := range x {
		mean += v
	}
	mean /= float64(len(x))
	c0 := 0.0
	for _, v := range x {
		c0 += (v - mean) * (v - mean)
	}
	for tau := range got {
		c := 0.0
		for s := 0; s+tau < len(x); s++ {
			c += (x[s] - mean) * (x[s+tau] - mean)
		}
		if math.Abs(got[tau]-c/c0) > 1e-12 {
			t.Errorf("ρ(%d) = %.15f, direct sum %.15f", tau, got[tau], c/c0)
		}
	}
}

// TestAutocorrelationAR1 checks an AR(1) process x_t = φ x_{t−1} + ε_t
// against its exact autocorrelation ρ(τ) = φ^τ and integrated time
// τ_int = (1 + φ)/(1 − φ) (Box, Jenkins & Reinsel 2008, Time Series
// Analysis, eq. 3.2.6; Sokal 1997, eq. 2.18 ff.). Tolerances from the
// sampling error of 2¹⁷ steps: 0.02 on ρ, 8% on τ_int.
func TestAutocorrelationAR1(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	const phi = 0.8
	x := ar1(rng, phi, 1<<17)
	rho := Autocorrelation(x, 200)
	for tau := range 11 {
		if want := math.Pow(phi, float64(tau)); math.Abs(rho[tau]-want) > 0.02 {
			t.Errorf("ρ(%d) = %.4f, want φ^τ = %.4f ± 0.02", tau, rho[tau], want)
		}
	}
	tau, m, ok := IntegratedTime(rho, 5)
	want := (1 + phi) / (1 - phi)
	if !ok || math.Abs(tau/want-1) > 0.08 {
		t.Errorf("τ_int = %.3f (window %d, closed %v), want %.3f ± 8%%", tau, m, ok, want)
	}
	// A window that cannot close is reported.
	if _, _, ok := IntegratedTime(rho[:5], 5); ok {
		t.Error("window reported closed within 4 lags of a τ ≈ 9 process")
	}
}

func TestAutocorrelationConstant(t *testing.T) {
	rho := Autocorrelation([]float64{2, 2, 2, 2}, 3)
	if rho[0] != 1 || rho[1] != 0 || rho[3] != 0 {
		t.Errorf("constant series: ρ = %v, want [1 0 0 0]", rho)
	}
}

func TestChainErrors(t *testing.T) {
	for _, tc := range []struct {
		name string
		ch   Chain
	}{
		{"no names", Chain{Samples: [][][]float64{{{1}, {2}}}}},
		{"no walkers", Chain{Names: []string{"a"}}},
		{"one step", Chain{Names: []string{"a"}, Samples: [][][]float64{{{1}}}}},
		{"ragged walkers", Chain{Names: []string{"a"}, Samples: [][][]float64{{{1}, {2}}, {{1}}}}},
		{"wrong width", Chain{Names: []string{"a"}, Samples: [][][]float64{{{1, 2}, {2, 3}}}}},
		{"NaN", Chain{Names: []string{"a"}, Samples: [][][]float64{{{1}, {math.NaN()}}}}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if _, err := TraceFigure(tc.ch); err == nil {
				t.Error("TraceFigure: no error")
			}
			if _, err := AutocorrFigure(tc.ch, 0); err == nil {
				t.Error("AutocorrFigure: no error")
			}
		})
	}
}

func TestTraceVerticesEnvelope(t *testing.T) {
	// One spike in a long flat walk must survive the decimation.
	walker := make([][]float64, 10000)
	for s := range walker {
		walker[s] = []float64{0}
	}
	walker[4321][0] = 7
	xy := traceVertices(walker, 0, 20)
	found := false
	for k, p := range xy {
		if p.Y == 7 && p.X == 4321 {
			found = true
		}
		if k > 0 && p.X <= xy[k-1].X {
			t.Fatalf("vertices out of step order at %d", k)
		}
	}
	if !found {
		t.Error("the spike at step 4321 was lost")
	}
	if len(xy) > 2*10000/20+2 {
		t.Errorf("%d vertices, want ≤ %d", len(xy), 2*10000/20+2)
	}
}
