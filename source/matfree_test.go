package source

import (
	"math"
	"math/rand/v2"
	"os"
	"slices"
	"testing"
	"time"

	"deflect/lensmodel"

	"gonum.org/v1/gonum/mat"
)

func TestOperatorMatchesNormal(t *testing.T) {
	// The FFT-convolution product F s equals the dense F of NewNormal
	// (direct BeamAt sums) times s, b and diag F agree, for two
	// measurements with different primary beams.
	rng := rand.New(rand.NewPCG(7, 7))
	rc := newReconstruction(t, rng, 0.02, true, false)
	meas2 := *rc.meas
	meas2.gain = make([]float64, len(rc.meas.gain))
	for k := range meas2.gain {
		meas2.gain[k] = 0.5 + 0.5*rc.meas.gain[k]*rc.meas.gain[k]
	}
	ms := []Measurement{rc.meas, &meas2}
	nm := NewNormal(ms, rc.mp)
	op := NewOperator(ms, rc.mp)
	n := rc.grid.Len()
	s := make([]float64, n)
	for k := range s {
		s[k] = rng.NormFloat64()
	}
	got := op.Apply(nil, s)
	var want mat.VecDense
	want.MulVec(nm.F, mat.NewVecDense(n, s))
	scale := 0.0
	for k := range got {
		scale = max(scale, math.Abs(want.AtVec(k)))
	}
	for k := range got {
		if d := math.Abs(got[k] - want.AtVec(k)); d > 1e-11*scale {
			t.Fatalf("(F s)[%d] = %v, dense %v", k, got[k], want.AtVec(k))
		}
		within(t, "b", op.B()[k], nm.B[k], 1e-12)
		within(t, "diag F", op.Diag()[k], nm.F.At(k, k), 1e-11)
	}
	within(t, "χ²", op.Chi2(s), nm.Chi2(s), 1e-11)
	w, h, pw, ph := op.Box()
	t.Logf("mask box %d×%d, padded %d×%d", w, h, pw, ph)
}

// compareSigma returns the median and 90th-percentile relative error of
// the matrix-free σ against the exact one, and the count of nodes without
// an estimate.
func compareSigma(got, want []float64) (med, p90 float64, missing int) {
	var rel []float64
	for k := range want {
		if math.IsNaN(got[k]) {
			missing++
			continue
		}
		rel = append(rel, math.Abs(got[k]/want[k]-1))
	}
	slices.Sort(rel)
	return rel[len(rel)/2], rel[len(rel)*9/10], missing
}

func TestMatrixFreeAgreesWithDense(t *testing.T) {
	// At the same λ the matrix-free path reproduces the dense Cholesky
	// solution of Invert (the exact reference): the source to the CG
	// tolerance, χ² and λE_S to 1e-8, ln det(F + λR) within four of its
	// own stated standard errors and ln ε within 0.5, N_eff within 2%, σ
	// to 5% (median node) and 15% (90th percentile).
	rng := rand.New(rand.NewPCG(5, 5))
	rc := newReconstruction(t, rng, 0.02, true, false)
	nm := NewNormal([]Measurement{rc.meas}, rc.mp)
	op := NewOperator([]Measurement{rc.meas}, rc.mp)
	for _, kind := range []Regularization{Gradient, Curvature} {
		t.Run(kind.String(), func(t *testing.T) {
			prior, err := NewPrior(rc.grid, kind, 0)
			if err != nil {
				t.Fatal(err)
			}
			d, err := Invert(nm, prior, rc.grid, rc.mp, InvertOptions{})
			if err != nil {
				t.Fatal(err)
			}
			mf, err := InvertMatrixFree(op, prior, rc.grid, rc.mp, InvertOptions{Lambda: d.Lambda})
			if err != nil {
				t.Fatal(err)
			}
			de, me := d.Evidence, mf.Evidence
			med, p90, missing := compareSigma(mf.Sigma, d.Sigma)
			t.Logf("%d nodes, λ = %.4g: ln ε dense %.3f, matrix-free %.3f; ln det %.3f vs %.3f ± %.3f; N_eff %.2f vs %.2f; σ error median %.3f, 90%% %.3f, %d missing; %d CG iterations",
				rc.grid.Len(), d.Lambda, de.LogEvidence, me.LogEvidence, de.LogDetA, me.LogDetA, mf.LogDetError, d.Neff, mf.Neff, med, p90, missing, mf.CGIterations)
			for k := range d.Source {
				within(t, "node", mf.Source[k], d.Source[k], 1e-5*maxAbs(d.Source))
			}
			within(t, "χ²", me.Chi2, de.Chi2, 1e-8)
			within(t, "λ E_S", me.RegTerm, de.RegTerm, 1e-6)
			within(t, "ln det R", me.LogDetR, de.LogDetR, 1e-12)
			if dd := math.Abs(me.LogDetA - de.LogDetA); !(dd <= 4*mf.LogDetError) || !(mf.LogDetError < 1) {
				t.Errorf("ln det(F + λR): matrix-free %.4f ± %.4f, dense %.4f", me.LogDetA, mf.LogDetError, de.LogDetA)
			}
			if dd := math.Abs(me.LogEvidence - de.LogEvidence); !(dd <= 0.5) {
				t.Errorf("ln ε: matrix-free %.4f, dense %.4f (diff %.3g > 0.5)", me.LogEvidence, de.LogEvidence, dd)
			}
			if dd := math.Abs(mf.Neff - d.Neff); !(dd <= 0.02*d.Neff) {
				t.Errorf("N_eff: matrix-free %.3f, dense %.3f", mf.Neff, d.Neff)
			}
			if !(med <= 0.05 && p90 <= 0.15) || missing > 0 {
				t.Errorf("σ: median error %.3f, 90th percentile %.3f, %d nodes missing", med, p90, missing)
			}
			within(t, "flux", mf.Flux, d.Flux, 1e-5)
			within(t, "magnification", mf.Magnification, d.Magnification, 1e-5)
		})
	}
}

func TestMatrixFreeEvidenceSearchLong(t *testing.T) {
	// Both paths search λ on a 32×32-node problem (1214 masked pixels):
	// the same λ within the search tolerance (0.05 in ln λ), ln ε within
	// 0.5 and within four stated standard errors, the source within 1e-3
	// of its peak (the λ differ by up to the tolerance).
	if os.Getenv("DEFLECT_LONG_TESTS") == "" {
		t.Skip("set DEFLECT_LONG_TESTS=1 for the 1024-node evidence search on both paths")
	}
	rng := rand.New(rand.NewPCG(5, 5))
	rc := newReconstructionNodes(t, rng, 0.02, true, false, 32)
	nm := NewNormal([]Measurement{rc.meas}, rc.mp)
	op := NewOperator([]Measurement{rc.meas}, rc.mp)
	for _, kind := range []Regularization{Gradient, Curvature} {
		t.Run(kind.String(), func(t *testing.T) {
			prior, err := NewPrior(rc.grid, kind, 0)
			if err != nil {
				t.Fatal(err)
			}
			c0 := time.Now()
			d, err := Invert(nm, prior, rc.grid, rc.mp, InvertOptions{NoErrors: true})
			if err != nil {
				t.Fatal(err)
			}
			c1 := time.Now()
			mf, err := InvertMatrixFree(op, prior, rc.grid, rc.mp, InvertOptions{NoErrors: true})
			if err != nil {
				t.Fatal(err)
			}
			c2 := time.Now()
			de, me := d.Evidence, mf.Evidence
			t.Logf("%d nodes: λ dense %.4g, matrix-free %.4g; ln ε %.3f vs %.3f (ln det ± %.3f); %d vs %d evaluations, %d CG iterations; %v vs %v",
				rc.grid.Len(), d.Lambda, mf.Lambda, de.LogEvidence, me.LogEvidence, mf.LogDetError, d.Evaluations, mf.Evaluations, mf.CGIterations, c1.Sub(c0), c2.Sub(c1))
			if dl := math.Abs(math.Log(mf.Lambda / d.Lambda)); !(dl <= 0.05) {
				t.Errorf("λ: matrix-free %.5g, dense %.5g (|Δ ln λ| = %.3g > 0.05)", mf.Lambda, d.Lambda, dl)
			}
			if dd := math.Abs(me.LogEvidence - de.LogEvidence); !(dd <= 0.5) || !(dd <= 2*mf.LogDetError+0.05) {
				t.Errorf("ln ε: matrix-free %.4f (ln det ± %.3f), dense %.4f", me.LogEvidence, mf.LogDetError, de.LogEvidence)
			}
			for k := range d.Source {
				within(t, "node", mf.Source[k], d.Source[k], 1e-3*maxAbs(d.Source))
			}
		})
	}
}

func TestReconstructPixelsSolverSelection(t *testing.T) {
	// SolverAuto takes the dense path up to DenseMax nodes and the
	// matrix-free one beyond; both give the same reconstruction of the
	// example's lensed Gaussian (256 nodes) within the matrix-free path's
	// errors (ln ε within 0.5, magnification within 2e-3: the λ differ within
	// the search tolerance).
	rng := rand.New(rand.NewPCG(1, 1))
	grid := testGrid{n: 32, pixel: 0.1}
	lens := lensmodel.SIE{ThetaE: 1, Q: 0.8, PA: 20}
	truth := Source{Components: []Component{Gaussian{X: 0.05, Flux: 0.1, FWHM: 0.4, Q: 0.8}}}
	sky, _ := Render(nil, grid, lens, truth, RenderOptions{})
	u, v, w := randomCoverage(rng, 800, 1e6, 0.02)
	sim := &visData{g: grid, u: u, v: v, w: w, gain: make([]float64, 32*32)}
	for k := range sim.gain {
		sim.gain[k] = 1
	}
	d := sim.predict(sky)
	for q := range d {
		d[q] += complex(0.02*rng.NormFloat64(), 0.02*rng.NormFloat64())
	}
	meas := newVisData(grid, u, v, w, d, 1e9)
	var mask []int
	for k := range sky {
		if x, y := grid.Centre(k); math.Hypot(x, y) > 0.4 && math.Hypot(x, y) < 1.6 {
			mask = append(mask, k)
		}
	}
	run := func(opt PixelOptions) *PixelSource {
		t.Helper()
		opt.NX, opt.NY, opt.Reg = 16, 16, Curvature
		opt.Invert.NoErrors = true
		ps, err := ReconstructPixels([]Measurement{meas}, grid, lens, mask, opt)
		if err != nil {
			t.Fatal(err)
		}
		return ps
	}
	dense := run(PixelOptions{})
	auto := run(PixelOptions{DenseMax: 100})
	forced := run(PixelOptions{Solver: SolverMatrixFree, Invert: InvertOptions{Lambda: auto.Lambda}})
	if dense.Solver != SolverDense || dense.Normal == nil || dense.Operator != nil {
		t.Errorf("256 nodes, default DenseMax: solver %v, normal %v, operator %v", dense.Solver, dense.Normal != nil, dense.Operator != nil)
	}
	for _, ps := range []*PixelSource{auto, forced} {
		if ps.Solver != SolverMatrixFree || ps.Normal != nil || ps.Operator == nil {
			t.Errorf("matrix-free: solver %v, normal %v, operator %v", ps.Solver, ps.Normal != nil, ps.Operator != nil)
		}
	}
	t.Logf("dense: λ %.4g, ln ε %.3f, μ %.4f; matrix-free: λ %.4g, ln ε %.3f ± %.3f, μ %.4f",
		dense.Lambda, dense.Evidence.LogEvidence, dense.Magnification, auto.Lambda, auto.Evidence.LogEvidence, auto.LogDetError/2, auto.Magnification)
	if dd := math.Abs(auto.Evidence.LogEvidence - dense.Evidence.LogEvidence); !(dd <= 0.5) {
		t.Errorf("ln ε: matrix-free %.4f, dense %.4f", auto.Evidence.LogEvidence, dense.Evidence.LogEvidence)
	}
	within(t, "magnification", auto.Magnification, dense.Magnification, 2e-3)
	// At the same λ and seed the probes, preconditioner and Lanczos runs
	// repeat exactly; only the warm-started CG solution differs, within
	// its tolerance.
	if dd := math.Abs(forced.Evidence.LogEvidence - auto.Evidence.LogEvidence); !(dd <= 1e-6) {
		t.Errorf("the same seed and λ gave ln ε %v and %v", forced.Evidence.LogEvidence, auto.Evidence.LogEvidence)
	}
}

func TestMatrixFreeLogDetCalibrationLong(t *testing.T) {
	// Over ten probe seeds the stochastic ln det(F + λR) scatters about
	// the exact (Cholesky) value by no more than its stated standard
	// errors say: the rms of error/LogDetError lies in [0.5, 2] (it is
	// χ²-like with ten terms), and the rms error is below 0.6 (measured
	// 0.47 and 0.45 for the gradient and curvature forms on 324 nodes with
	// the default 72 probes of period 6; 0.9 with 32 probes of period 4).
	if os.Getenv("DEFLECT_LONG_TESTS") == "" {
		t.Skip("set DEFLECT_LONG_TESTS=1 for the ten-seed calibration of the SLQ error")
	}
	rng := rand.New(rand.NewPCG(5, 5))
	rc := newReconstruction(t, rng, 0.02, true, false)
	nm := NewNormal([]Measurement{rc.meas}, rc.mp)
	op := NewOperator([]Measurement{rc.meas}, rc.mp)
	for _, kind := range []Regularization{Gradient, Curvature} {
		t.Run(kind.String(), func(t *testing.T) {
			prior, err := NewPrior(rc.grid, kind, 0)
			if err != nil {
				t.Fatal(err)
			}
			d, err := Invert(nm, prior, rc.grid, rc.mp, InvertOptions{NoErrors: true})
			if err != nil {
				t.Fatal(err)
			}
			var e2, z2 float64
			const seeds = 10
			for seed := uint64(1); seed <= seeds; seed++ {
				mf, err := InvertMatrixFree(op, prior, rc.grid, rc.mp, InvertOptions{Lambda: d.Lambda, NoErrors: true, Seed: seed})
				if err != nil {
					t.Fatal(err)
				}
				e := mf.Evidence.LogDetA - d.Evidence.LogDetA
				e2 += e * e
				z2 += (e / mf.LogDetError) * (e / mf.LogDetError)
			}
			rmsE, rmsZ := math.Sqrt(e2/seeds), math.Sqrt(z2/seeds)
			t.Logf("rms ln det error %.3f, rms error/stated %.2f", rmsE, rmsZ)
			if !(rmsE < 0.6) || !(rmsZ >= 0.5 && rmsZ <= 2) {
				t.Errorf("rms ln det error %.3f (want < 0.6), rms error/stated error %.2f (want in [0.5, 2])", rmsE, rmsZ)
			}
		})
	}
}
