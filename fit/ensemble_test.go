package fit

import (
	"context"
	"errors"
	"math"
	"math/rand/v2"
	"path/filepath"
	"runtime"
	"testing"

	"deflect/internal/atomicfile"
)

func TestEnsembleCorrelatedGaussian10D(t *testing.T) {
	// The check: MCMC means and covariances of a correlated 10-D
	// Gaussian within 3 Monte Carlo errors. The errors use the effective
	// sample size N/τ (N post-burn-in draws of all walkers): for a mean
	// σ_i √(τ_i/N), for a covariance entry √((Σ_ii Σ_jj + Σ_ij²) τ/N)
	// (the variance of a Gaussian product moment, common practice), τ the
	// larger of τ_i, τ_j.
	rnd := rand.New(rand.NewPCG(1, 1))
	g := newGaussian(10, rnd, true)
	res, err := Ensemble(context.Background(), g.problem(g.box(10, 0)), EnsembleSettings{Seed: 1})
	if err != nil {
		t.Fatal(err)
	}
	if res.Status != Converged || !res.TauReliable {
		t.Fatalf("status %v, τ reliable %v, τ = %v after %d steps", res.Status, res.TauReliable, res.Tau, res.Steps)
	}
	if res.Acceptance < 0.1 || res.Acceptance > 0.6 {
		t.Errorf("acceptance %.3f outside the stretch move's usual 0.1–0.6", res.Acceptance)
	}
	var draws [][]float64
	for i := res.BurnIn; i < res.Steps; i++ {
		draws = append(draws, res.Chain[i]...)
	}
	n := float64(len(draws))
	mu, cov := WeightedMeanCov(draws, nil)
	t.Logf("%d steps × %d walkers, τ = %.1f, burn-in %d, acceptance %.3f", res.Steps, res.Walkers, res.Tau, res.BurnIn, res.Acceptance)
	for i := range 10 {
		se := math.Sqrt(g.cov.At(i, i) * res.Tau[i] / n)
		if math.Abs(mu[i]-g.mu[i]) > 3*se {
			t.Errorf("mean %d = %.4f, want %.4f ± %.4f", i, mu[i], g.mu[i], se)
		}
		for j := i; j < 10; j++ {
			tau := math.Max(res.Tau[i], res.Tau[j])
			se := math.Sqrt((g.cov.At(i, i)*g.cov.At(j, j) + sq(g.cov.At(i, j))) * tau / n)
			if math.Abs(cov.At(i, j)-g.cov.At(i, j)) > 3*se {
				t.Errorf("cov[%d,%d] = %.4f, want %.4f ± %.4f", i, j, cov.At(i, j), g.cov.At(i, j), se)
			}
		}
	}
	if len(res.Samples) == 0 || len(res.Samples) != len(res.SampleLogLike) {
		t.Errorf("%d samples, %d log-likelihoods", len(res.Samples), len(res.SampleLogLike))
	}
	if math.Abs(res.BestLogLike-g.norm) > 1 {
		t.Errorf("best ln L %.3f, the maximum is %.3f", res.BestLogLike, g.norm)
	}
}

func TestEnsembleDeterministicAcrossCores(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 2))
	g := newGaussian(3, rnd, true)
	s := EnsembleSettings{Seed: 7, MaxSteps: 300}
	run := func(procs int) *EnsembleResult {
		defer runtime.GOMAXPROCS(runtime.GOMAXPROCS(procs))
		r, err := Ensemble(context.Background(), g.problem(g.box(5, 1)), s)
		if err != nil {
			t.Fatal(err)
		}
		return r
	}
	a, b := run(1), run(4)
	sameChains(t, a.Chain, b.Chain)
	if a.Evaluations != b.Evaluations {
		t.Errorf("evaluations %d vs %d", a.Evaluations, b.Evaluations)
	}
	s.Seed = 8
	c := run(2)
	if c.Chain[10][0][0] == a.Chain[10][0][0] {
		t.Error("different seeds gave the same chain")
	}
}

// cancelAt is a Progress that cancels a run after a given step.
type cancelAt struct {
	step   int
	cancel context.CancelFunc
	seen   int
}

func (c *cancelAt) Update(r Report) {
	c.seen++
	if r.Step >= c.step && !r.Final {
		c.cancel()
	}
}

func TestEnsembleResumeBitForBit(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 3))
	g := newGaussian(4, rnd, true)
	p := g.problem(g.box(6, 0))
	s := EnsembleSettings{Seed: 3, MaxSteps: 1500}
	want, err := Ensemble(context.Background(), p, s)
	if err != nil {
		t.Fatal(err)
	}

	path := filepath.Join(t.TempDir(), "mcmc.ckpt")
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	si := s
	si.Checkpoint = Checkpoint{Path: path}
	si.Progress = &cancelAt{step: 417, cancel: cancel}
	part, err := Ensemble(ctx, p, si)
	if err != nil {
		t.Fatal(err)
	}
	if part.Status != Interrupted || part.Steps != 417 {
		t.Fatalf("interrupted run: status %v after %d steps, want interrupted after 417", part.Status, part.Steps)
	}
	// A fresh run must not overwrite the checkpoint by accident.
	if _, err := Ensemble(context.Background(), p, EnsembleSettings{Seed: 3, Checkpoint: Checkpoint{Path: path}}); !errors.Is(err, atomicfile.ErrExists) {
		t.Errorf("fresh run over a checkpoint: err = %v, want ErrExists", err)
	}
	// Different settings are refused on resume.
	if _, err := Ensemble(context.Background(), p, EnsembleSettings{Seed: 4, MaxSteps: 1500, Checkpoint: Checkpoint{Path: path, Resume: true}}); err == nil {
		t.Error("resume with another seed accepted")
	}
	sr := s
	sr.Checkpoint = Checkpoint{Path: path, Resume: true}
	got, err := Ensemble(context.Background(), p, sr)
	if err != nil {
		t.Fatal(err)
	}
	if got.Status != want.Status {
		t.Errorf("status %v, uninterrupted %v", got.Status, want.Status)
	}
	sameChains(t, got.Chain, want.Chain)
	if got.Evaluations != want.Evaluations || got.Acceptance != want.Acceptance {
		t.Errorf("evaluations %d vs %d, acceptance %v vs %v", got.Evaluations, want.Evaluations, got.Acceptance, want.Acceptance)
	}
	for d := range want.Tau {
		if got.Tau[d] != want.Tau[d] {
			t.Errorf("τ[%d] %v vs %v", d, got.Tau[d], want.Tau[d])
		}
	}
}

func TestEnsembleCapAndErrors(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 4))
	g := newGaussian(2, rnd, false)
	path := filepath.Join(t.TempDir(), "cap.ckpt")
	r, err := Ensemble(context.Background(), g.problem(g.box(5, 0)), EnsembleSettings{Seed: 1, MaxSteps: 40, Checkpoint: Checkpoint{Path: path}})
	if err != nil {
		t.Fatal(err)
	}
	if r.Status != NotConverged || r.Steps != 40 {
		t.Errorf("status %v after %d steps, want not converged at the cap of 40", r.Status, r.Steps)
	}
	// Resuming with a larger cap extends the chain, identical to a run
	// made with that cap from the start.
	ext, err := Ensemble(context.Background(), g.problem(g.box(5, 0)), EnsembleSettings{Seed: 1, MaxSteps: 60, Checkpoint: Checkpoint{Path: path, Resume: true}})
	if err != nil {
		t.Fatal(err)
	}
	direct, err := Ensemble(context.Background(), g.problem(g.box(5, 0)), EnsembleSettings{Seed: 1, MaxSteps: 60})
	if err != nil {
		t.Fatal(err)
	}
	if ext.Steps != 60 {
		t.Errorf("extended run has %d steps, want 60", ext.Steps)
	}
	sameChains(t, ext.Chain, direct.Chain)
	nan := Problem{Dim: 2, Prior: g.box(5, 0), LogLike: func(x []float64) float64 {
		if x[0] > g.mu[0] {
			return math.NaN()
		}
		return 0
	}}
	if _, err := Ensemble(context.Background(), nan, EnsembleSettings{Seed: 1, MaxSteps: 40}); err == nil {
		t.Error("NaN log-likelihood not reported")
	}
	if _, err := Ensemble(context.Background(), g.problem(g.box(5, 0)), EnsembleSettings{Walkers: 5}); err == nil {
		t.Error("odd walker count accepted")
	}
	// Start ball: every walker starts near Start.
	start := []float64{g.mu[0], g.mu[1]}
	r, err = Ensemble(context.Background(), g.problem(g.box(5, 0)), EnsembleSettings{Seed: 1, MaxSteps: 1, Start: start, StartScale: []float64{1e-6, 1e-6}})
	if err != nil {
		t.Fatal(err)
	}
	for _, w := range r.Chain[0] {
		if math.Abs(w[0]-start[0]) > 1e-4 {
			t.Fatalf("walker at %v after one step from a ball of 1e-6 about %v", w, start)
		}
	}
}
