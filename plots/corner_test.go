package plots

import (
	"math"
	"math/rand/v2"
	"testing"
)

func TestCredibleLevelsWorked(t *testing.T) {
	// Bins 4, 3, 2, 1 (total 10): the top two hold 70%, so the 70% level
	// is 3 and the 90% level 2; the 100% level is the smallest bin.
	z := []float64{2, 4, 1, 3}
	got := CredibleLevels(z, 0.7, 0.9, 1)
	for k, want := range []float64{3, 2, 1} {
		if got[k] != want {
			t.Errorf("level %d = %g, want %g", k, got[k], want)
		}
	}
}

// TestCredibleLevelsGaussian checks the highest-density regions of a
// correlated 2-D Gaussian against the analytic result: the region of mass
// p is the ellipse of Mahalanobis radius r² = −2 ln(1 − p) (χ² with two
// degrees of freedom; e.g. Press et al. 2007, Numerical Recipes 3rd ed.,
// §15.6.5), of area π σx σy √(1 − ρ²) r². Tolerance 6%: histogram noise
// and bin discreteness at 200 000 samples in 60² bins.
func TestCredibleLevelsGaussian(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	const ns, nb = 200000, 60
	sx, sy, rho := 1.0, 2.0, 0.6
	x, y, w := make([]float64, ns), make([]float64, ns), make([]float64, ns)
	for s := range ns {
		a, b := rng.NormFloat64(), rng.NormFloat64()
		x[s], y[s], w[s] = sx*a, sy*(rho*a+math.Sqrt(1-rho*rho)*b), 1
	}
	h := histogram2D(x, y, w, -5*sx, 5*sx, -5*sy, 5*sy, nb)
	binArea := (10 * sx / nb) * (10 * sy / nb)
	for _, p := range []float64{0.68, 0.95} {
		lv := CredibleLevels(h.w, p)[0]
		n := 0
		for _, z := range h.w {
			if z >= lv {
				n++
			}
		}
		got := float64(n) * binArea
		want := math.Pi * sx * sy * math.Sqrt(1-rho*rho) * (-2 * math.Log(1-p))
		if math.Abs(got/want-1) > 0.06 {
			t.Errorf("p = %g: region area %.3f, want %.3f ± 6%%", p, got, want)
		}
	}
}

func TestWeightedQuantiles(t *testing.T) {
	// Equal weights on 1…5: each sample at cumulative (k − ½)/5, so the
	// median is 3 and the 0.3 quantile interpolates halfway from 1 to 2…
	x := []float64{5, 3, 1, 4, 2}
	w := []float64{1, 1, 1, 1, 1}
	got := WeightedQuantiles(x, w, 0.5, 0.2, 0.3, 0, 1)
	for k, want := range []float64{3, 1.5, 2, 1, 5} {
		if math.Abs(got[k]-want) > 1e-12 {
			t.Errorf("quantile %d = %g, want %g", k, got[k], want)
		}
	}
	// Importance weights e^x turn N(0, 1) draws into N(1, 1) (completing
	// the square: e^x e^{−x²/2} ∝ e^{−(x−1)²/2}), whose 16%, 50% and 84%
	// quantiles are 0, 1 and 2 (to 0.3%, Φ(±1)). Tolerance 0.03, the
	// sampling error of the reweighted 10⁵ draws.
	rng := rand.New(rand.NewPCG(1, 1))
	xs, ws := make([]float64, 100000), make([]float64, 100000)
	for k := range xs {
		xs[k] = rng.NormFloat64()
		ws[k] = math.Exp(xs[k])
	}
	q := WeightedQuantiles(xs, ws, 0.158655, 0.5, 0.841345)
	for k, want := range []float64{0, 1, 2} {
		if math.Abs(q[k]-want) > 0.03 {
			t.Errorf("reweighted quantile %d = %.4f, want %g ± 0.03", k, q[k], want)
		}
	}
}

func TestHistogramEdges(t *testing.T) {
	h := Histogram([]float64{0, 0.5, 1, 2, -1}, []float64{1, 2, 3, 4, 5}, 0, 2, 2)
	// 0 and 0.5 in bin 0; 1 and the upper edge 2 in bin 1; −1 outside.
	if h[0] != 3 || h[1] != 7 {
		t.Errorf("histogram %v, want [3 7]", h)
	}
}

func TestFewTicks(t *testing.T) {
	for _, tc := range []struct{ lo, hi float64 }{{1.16, 1.24}, {0, 1}, {23, 37}, {-0.003, 0.004}, {1e4, 3e4}} {
		n := 0
		for _, tk := range (fewTicks).Ticks(tc.lo, tc.hi) {
			if tk.Label != "" {
				n++
				if tk.Value < tc.lo-1e-12 || tk.Value > tc.hi+1e-12 {
					t.Errorf("%g…%g: tick %g outside", tc.lo, tc.hi, tk.Value)
				}
			}
		}
		if n < 2 || n > 4 {
			t.Errorf("%g…%g: %d labelled ticks, want 2–4", tc.lo, tc.hi, n)
		}
	}
}

func TestFmtInterval(t *testing.T) {
	for _, tc := range []struct {
		m, p, n float64
		want    string
	}{
		{1.20031, 0.0094, 0.0100, "1.2003 +0.0094 −0.0100"},
		{30.02, 2.01, 1.99, "30.0 +2.0 −2.0"},
		{-0.5, 0.12, 0.3, "−0.50 +0.12 −0.30"},
	} {
		if got := fmtInterval(tc.m, tc.p, tc.n); got != tc.want {
			t.Errorf("fmtInterval(%g, %g, %g) = %q, want %q", tc.m, tc.p, tc.n, got, tc.want)
		}
	}
}

func TestCornerErrors(t *testing.T) {
	good := Posterior{Names: []string{"a", "b"}, Samples: [][]float64{{1, 2}, {2, 3}}}
	for _, tc := range []struct {
		name string
		edit func(p *Posterior)
	}{
		{"no names", func(p *Posterior) { p.Names = nil }},
		{"ragged", func(p *Posterior) { p.Samples = [][]float64{{1, 2}, {3}} }},
		{"NaN", func(p *Posterior) { p.Samples = [][]float64{{1, math.NaN()}} }},
		{"negative weight", func(p *Posterior) { p.Weights = []float64{1, -1} }},
		{"zero weights", func(p *Posterior) { p.Weights = []float64{0, 0} }},
		{"short marker", func(p *Posterior) { p.Marker = []float64{1} }},
	} {
		t.Run(tc.name, func(t *testing.T) {
			p := good
			tc.edit(&p)
			if _, err := CornerFigure(p); err == nil {
				t.Error("no error")
			}
		})
	}
}
