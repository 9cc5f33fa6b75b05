package fit

import (
	"context"
	"fmt"
	"math"
	"os"
	"testing"
)

func requireLongTests(t *testing.T) {
	t.Helper()
	if os.Getenv("DEFLECT_LONG_TESTS") != "1" {
		t.Skip("set DEFLECT_LONG_TESTS=1 for the statistical acceptance tests")
	}
}

// TestAcceptanceRecovery fits SIE + shear + Sérsic (12 free parameters) to
// simulated data, starting from the centre of the priors, and checks that
// every parameter is recovered within 3σ of the truth (σ from the Laplace
// covariance at the optimum).
func TestAcceptanceRecovery(t *testing.T) {
	requireLongTests(t)
	dir := t.TempDir()
	sp := smallSim
	sp.sigma = 8e-3 // peak S/N ≈ 15 per beam
	m, truth := writeSimModel(t, dir, 0.05, 64, "starts = 2", sp)
	for _, q := range m.Free {
		q.Value = (q.Min + q.Max) / 2
	}
	r, err := Run(context.Background(), m, RunOptions{Method: "optimize", MaxEvaluations: 6000, DerivedSamples: -1, NoMaps: true})
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("ln L at the truth %.3f, at the fit %.3f", r.Like.LogLike(truth), r.BestLogLike)
	for i, q := range m.Free {
		p, _ := r.Param(q.Name)
		sd := (p.Hi - p.Lo) / 2
		pull := (p.Best - truth[i]) / sd
		t.Logf("%-12s truth %8.4g  fit %8.4g ± %.3g  (%+.2fσ)", q.Name, truth[i], p.Best, sd, pull)
		if !(math.Abs(pull) < 3) {
			t.Errorf("%s: %g ± %g is %.1fσ from the truth %g", q.Name, p.Best, sd, pull, truth[i])
		}
	}
	t.Logf("χ²/(n − k) = %.4f, %d evaluations, status %s", r.ReducedChi2, r.Evaluations, r.Status)
}

// coverageModel has three free parameters: the Einstein radius, the flux
// and the size of a Gaussian source.
const coverageModel = `[sky]
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

[[source]]
kind = "gaussian"
name = "s1"
x = 0.05
y = 0.02
flux = {start = 2.0, min = 0.5, max = 6.0}
fwhm = {start = 0.3, min = 0.1, max = 0.6}

[fit]
method = "nested"
seed = %d
live_points = 32
dlogz = 0.1
`

// TestAcceptanceCoverage fits 20 small simulated datasets (coverage and
// noise drawn afresh) by nested sampling and counts how often the 68%
// posterior intervals contain the truth: for calibrated posteriors the
// fraction is 0.68 with a binomial standard deviation of 0.06 over the 60
// intervals (ignoring their correlation within a fit), so 0.55–0.80 is
// required.
func TestAcceptanceCoverage(t *testing.T) {
	requireLongTests(t)
	const fits = 20
	inside, total := 0, 0
	for f := range fits {
		dir := t.TempDir()
		sp := tinySim
		sp.seed = uint64(100 + f)
		sp.sigma = 4e-3
		m, truth := writeSimDoc(t, dir, fmt.Sprintf(coverageModel, f+1), gridOf(32, 0.08), sp)
		r, err := Run(context.Background(), m, RunOptions{DerivedSamples: -1, NoMaps: true, NestedSteps: 6})
		if err != nil {
			t.Fatal(err)
		}
		for i, q := range m.Free {
			p, _ := r.Param(q.Name)
			total++
			if truth[i] >= p.Lo && truth[i] <= p.Hi {
				inside++
			}
		}
	}
	frac := float64(inside) / float64(total)
	t.Logf("68%% intervals containing the truth: %d of %d (%.3f)", inside, total, frac)
	if frac < 0.55 || frac > 0.80 {
		t.Errorf("coverage of the 68%% intervals %.3f, want 0.55–0.80", frac)
	}
}
