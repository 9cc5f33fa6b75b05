package fit

import (
	"math"
	"math/rand/v2"
	"testing"
)

// ar1 returns chains of the AR(1) process x_t = φ x_{t−1} + ε_t started in
// its stationary distribution.
func ar1(rnd *rand.Rand, chains, n int, phi float64) [][]float64 {
	out := make([][]float64, chains)
	for c := range out {
		x := rnd.NormFloat64() / math.Sqrt(1-phi*phi)
		s := make([]float64, n)
		for i := range s {
			x = phi*x + rnd.NormFloat64()
			s[i] = x
		}
		out[c] = s
	}
	return out
}

func TestAutocorrTimeAR1(t *testing.T) {
	// For AR(1), ρ(t) = φ^|t| and τ = (1 + φ)/(1 − φ) (e.g. Sokal 1997,
	// §2; common practice). The windowed estimator's statistical error is
	// ≈ τ √(2(2M + 1)/N) (Sokal eq. 3.20) ≈ 3% here; tolerance 10%.
	rnd := rand.New(rand.NewPCG(1, 1))
	for _, phi := range []float64{0, 0.5, 0.9} {
		want := (1 + phi) / (1 - phi)
		tau, ok := AutocorrTime(ar1(rnd, 32, 20000, phi), 0)
		if !ok {
			t.Errorf("φ = %g: window not found", phi)
		}
		if math.Abs(tau-want) > 0.1*want {
			t.Errorf("φ = %g: τ = %.3f, want %.3f", phi, tau, want)
		}
	}
}

func TestAutocorrFFTMatchesDirectSum(t *testing.T) {
	// The FFT autocorrelation equals the direct O(n²) sum
	// ρ(t) = Σ_i (x_i − x̄)(x_{i+t} − x̄) / Σ_i (x_i − x̄)², averaged over
	// chains, to rounding.
	rnd := rand.New(rand.NewPCG(1, 2))
	series := ar1(rnd, 3, 257, 0.7)
	var a acf
	got := a.mean(series)
	n := len(series[0])
	for lag := range n {
		var want float64
		for _, x := range series {
			var mu float64
			for _, v := range x {
				mu += v
			}
			mu /= float64(n)
			var c0, ct float64
			for i := range n {
				c0 += (x[i] - mu) * (x[i] - mu)
				if i+lag < n {
					ct += (x[i] - mu) * (x[i+lag] - mu)
				}
			}
			want += ct / c0 / float64(len(series))
		}
		if math.Abs(got[lag]-want) > 1e-12 {
			t.Fatalf("ρ(%d) = %.15g, direct sum %.15g", lag, got[lag], want)
		}
	}
}

func TestAutocorrConstantUnreliable(t *testing.T) {
	// Walkers that never moved carry no information: no window.
	if _, ok := AutocorrTime([][]float64{make([]float64, 10), make([]float64, 10)}, 5); ok {
		t.Error("constant chain reported reliable")
	}
}
