package fit

import (
	"bytes"
	"context"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// tinyModel is a two-parameter fit on a 32² grid, small enough to run the
// samplers in a test.
const tinyModel = `[sky]
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
kind = "gaussian"
name = "s1"
x = 0.05
y = 0.02
flux = {start = 3.0, min = 0.5, max = 6.0}
fwhm = 0.3

[fit]
method = "nested"
seed = 5
live_points = 32
dlogz = 0.5
starts = 1
`

var tinySim = simSpec{nAnt: 10, nTimes: 6, uvMax: 206265 / 0.4, sigma: 3e-3, freq: 230e9, dish: 12, seed: 2}

func newTiny(t *testing.T) (*Model, string) {
	t.Helper()
	dir := t.TempDir()
	m, _ := writeSimDoc(t, dir, tinyModel, gridOf(32, 0.08), tinySim)
	return m, dir
}

func TestRunOptimizeWritesResults(t *testing.T) {
	m, dir := newTiny(t)
	out := filepath.Join(dir, "out")
	opt := RunOptions{Method: "optimize", OutDir: out, Version: "test", Likelihood: LikelihoodOptions{CacheDir: filepath.Join(dir, "cache")}, DerivedSamples: 20}
	r, err := Run(context.Background(), m, opt)
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range []string{SummaryFile, PosteriorFile, BestFitFile, ResultFile, RunFile, "sim-data.fits", "sim-residual-sigma.fits", "sim-dirty.png", "source-plane.png", "source-plane.fits"} {
		if _, err := os.Stat(filepath.Join(out, f)); err != nil {
			t.Errorf("missing output: %v", err)
		}
	}
	// bestfit.toml parses and reproduces the best ln L bit for bit.
	bm, err := ReadModel(filepath.Join(out, BestFitFile))
	if err != nil {
		t.Fatal(err)
	}
	bl, err := NewLikelihood(bm, LikelihoodOptions{CacheDir: filepath.Join(dir, "cache")})
	if err != nil {
		t.Fatal(err)
	}
	if got := bl.LogLike(bm.Start()); got != r.BestLogLike {
		t.Errorf("bestfit.toml ln L = %.17g, run's best %.17g", got, r.BestLogLike)
	}
	// The truth is recovered within 3σ of the Laplace interval.
	for _, name := range []string{"g1.theta_e", "s1.flux"} {
		p, _ := r.Param(name)
		truth := map[string]float64{"g1.theta_e": 0.7, "s1.flux": 3.0}[name]
		if sd := (p.Hi - p.Lo) / 2; !(math.Abs(p.Best-truth) < 3*sd) {
			t.Errorf("%s = %g ± %g, truth %g", name, p.Best, sd, truth)
		}
	}
	lr, err := LoadResult(out)
	if err != nil {
		t.Fatal(err)
	}
	if lr.BestLogLike != r.BestLogLike || len(lr.Params) != len(r.Params) || lr.Datasets[0].Chi2 != r.Datasets[0].Chi2 {
		t.Errorf("LoadResult differs from the run's result")
	}
	sum, _ := os.ReadFile(filepath.Join(out, SummaryFile))
	for _, want := range []string{"g1.theta_e", "Fit quality", "Einstein radius", "image multiplicity"} {
		if !strings.Contains(string(sum), want) {
			t.Errorf("summary.txt lacks %q:\n%s", want, sum)
		}
	}
	// A second run into the same directory is refused without force.
	if _, err := Run(context.Background(), m, opt); err == nil || !strings.Contains(err.Error(), "not empty") {
		t.Errorf("second run into a non-empty directory: err = %v", err)
	}
}

// cancelAfter is a Progress that cancels a run after n reports.
type cancelAfter struct {
	n      int
	cancel context.CancelFunc
}

func (c *cancelAfter) Update(r Report) {
	c.n--
	if c.n == 0 {
		c.cancel()
	}
}

// TestRunResumeBitForBit interrupts a nested fit, resumes it and compares
// every output number with an uninterrupted run of the same seed.
func TestRunResumeBitForBit(t *testing.T) {
	if testing.Short() {
		t.Skip("nested runs")
	}
	m, dir := newTiny(t)
	lopt := LikelihoodOptions{CacheDir: filepath.Join(dir, "cache")}
	base := RunOptions{OutDir: filepath.Join(dir, "a"), Likelihood: lopt, MaxEvaluations: 1200, DerivedSamples: -1, NoMaps: true}
	ra, err := Run(context.Background(), m, base)
	if err != nil {
		t.Fatal(err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	ib := base
	ib.OutDir = filepath.Join(dir, "b")
	ib.Progress = &cancelAfter{n: 3, cancel: cancel}
	rb, err := Run(ctx, m, ib)
	if err != nil {
		t.Fatal(err)
	}
	if rb.Status != Interrupted.String() {
		t.Fatalf("interrupted run has status %q", rb.Status)
	}
	ib.Progress, ib.Resume = nil, true
	rb, err = Run(context.Background(), m, ib)
	if err != nil {
		t.Fatal(err)
	}
	if ra.Evidence.LogZ != rb.Evidence.LogZ || ra.BestLogLike != rb.BestLogLike || ra.Evaluations != rb.Evaluations {
		t.Errorf("resumed run: ln Z %v, best ln L %v, %d evaluations; uninterrupted: %v, %v, %d",
			rb.Evidence.LogZ, rb.BestLogLike, rb.Evaluations, ra.Evidence.LogZ, ra.BestLogLike, ra.Evaluations)
	}
	pa, _ := os.ReadFile(filepath.Join(dir, "a", PosteriorFile))
	pb, _ := os.ReadFile(filepath.Join(dir, "b", PosteriorFile))
	if !bytes.Equal(pa, pb) || len(pa) == 0 {
		t.Error("posterior.csv of the resumed run differs from the uninterrupted run's")
	}
	// Resuming where there is no checkpoint is an error.
	nb := base
	nb.OutDir, nb.Resume = filepath.Join(dir, "c"), true
	if err := os.Mkdir(nb.OutDir, 0o755); err != nil {
		t.Fatal(err)
	}
	if _, err := Run(context.Background(), m, nb); err == nil || !errors.Is(err, os.ErrNotExist) {
		t.Errorf("resume without a checkpoint: err = %v", err)
	}
}

// TestRunMCMC runs a short ensemble fit: a capped chain is reported as not
// converged, with its samples written.
func TestRunMCMC(t *testing.T) {
	m, dir := newTiny(t)
	m.Fit.MaxSteps, m.Fit.Walkers = 60, 8
	out := filepath.Join(dir, "mc")
	r, err := Run(context.Background(), m, RunOptions{Method: "mcmc", OutDir: out, DerivedSamples: -1, NoMaps: true})
	if err != nil {
		t.Fatal(err)
	}
	if r.MCMC == nil || r.MCMC.Walkers != 8 || r.Evidence != nil {
		t.Fatalf("mcmc result: %+v", r.MCMC)
	}
	if r.Status != NotConverged.String() || !strings.Contains(strings.Join(r.Notes, " "), "not converged") {
		t.Errorf("status %q, notes %q: want a not-converged warning", r.Status, r.Notes)
	}
	csv, _ := os.ReadFile(filepath.Join(out, PosteriorFile))
	if lines := strings.Count(string(csv), "\n"); lines < 10 {
		t.Errorf("posterior.csv has %d lines", lines)
	}
}
