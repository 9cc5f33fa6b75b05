package fit

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"time"

	"gonum.org/v1/gonum/mat"

	"deflect/internal/atomicfile"
	"deflect/plots"
)

// RunOptions are the settings of Run. The zero value of every field is the
// documented default.
type RunOptions struct {
	// Method overrides the model file's [fit] method when not empty:
	// "optimize", "mcmc" or "nested".
	Method string
	// Seed overrides the model file's [fit] seed when SeedSet.
	Seed    uint64
	SeedSet bool
	// OutDir receives the results (see WriteResults); empty writes
	// nothing and keeps no checkpoint. A non-empty OutDir is refused
	// unless Force or Resume.
	OutDir        string
	Force, Resume bool
	// Likelihood configures the data layer (cache directory, …).
	Likelihood LikelihoodOptions
	// Progress receives the sampler's reports (nil: none).
	Progress Progress
	// Version is the deflect version recorded in run.json.
	Version string
	// CheckpointInterval is the time between checkpoints (zero: one
	// minute; negative: only on interruption and at the end).
	CheckpointInterval time.Duration
	// MaxEvaluations caps the likelihood calls of a nested run, or of each
	// phase of each start of an optimisation (zero: no cap, or the
	// optimiser's default 2000 (Dim + 1)).
	MaxEvaluations int
	// NestedSteps is the number of slice moves per nested replacement
	// (zero: the sampler's default, 5 per parameter).
	NestedSteps int
	// DerivedSamples is the number of posterior samples the derived
	// quantities are computed from; zero means 200, negative none.
	DerivedSamples int
	// NoMaps skips the FITS maps and the figures.
	NoMaps bool
	// Format is the format of every figure: "png" (the default when
	// empty), "pdf" or "svg".
	Format string
}

// CheckpointFile is the name of the checkpoint in a run's output directory.
const CheckpointFile = "checkpoint.gob"

// Run fits the model m: it builds the likelihood, runs the sampler of the
// chosen method with checkpoints in OutDir (cancel ctx, e.g. from
// SignalContext, to stop a run with a checkpoint; Resume continues it bit
// for bit), computes the summaries and derived quantities and, when OutDir
// is set, writes the results there.
//
// The optimize method keeps no checkpoint (a resumed optimisation starts
// again, reproducibly); its posterior is the Laplace approximation about
// the optimum, from 4000 normal draws with the finite-difference covariance
// (kept where the prior is positive).
//
// An interrupted run returns its partial Result with Status
// "interrupted" and writes no result files; the checkpoint holds its state.
func Run(ctx context.Context, m *Model, opt RunOptions) (*Result, error) {
	method := m.Fit.Method
	if opt.Method != "" {
		method = opt.Method
	}
	switch method {
	case "optimize", "mcmc", "nested":
	default:
		return nil, fmt.Errorf("fit: method %q: want optimize, mcmc or nested", method)
	}
	format, err := plots.Format("", opt.Format)
	if err != nil {
		return nil, fmt.Errorf("fit: figure format %q: want png, pdf or svg", opt.Format)
	}
	seed := m.Fit.Seed
	if opt.SeedSet {
		seed = opt.Seed
	}
	if opt.OutDir != "" {
		if err := prepareOutDir(opt.OutDir, opt.Force, opt.Resume); err != nil {
			return nil, err
		}
	}
	start := time.Now()
	like, err := NewLikelihood(m, opt.Likelihood)
	if err != nil {
		return nil, err
	}
	loaded := time.Now()
	p := like.Problem()
	cp := Checkpoint{Interval: opt.CheckpointInterval, Resume: opt.Resume, Force: opt.Force}
	if opt.OutDir != "" {
		cp.Path = filepath.Join(opt.OutDir, CheckpointFile)
	} else {
		cp.Resume = false
	}
	if cp.Resume && method != "optimize" {
		if _, err := os.Stat(cp.Path); err != nil {
			return nil, fmt.Errorf("fit: --resume: no checkpoint in %s: %w", opt.OutDir, err)
		}
	}
	res := &Result{Method: method, Seed: seed, Model: m, Like: like, Dir: opt.OutDir}
	var post posterior
	switch method {
	case "optimize":
		r, err := Optimize(ctx, p, OptimizeSettings{Starts: m.Fit.Starts, Start: m.Start(), MaxEvaluations: opt.MaxEvaluations, Progress: opt.Progress}, rand.New(rand.NewPCG(seed, 0)))
		if err != nil {
			return nil, err
		}
		res.Status, res.Evaluations = r.Status.String(), r.Evaluations
		post = laplacePosterior(r, p, seed)
		if r.CovarianceErr != nil {
			res.Notes = append(res.Notes, "no Laplace covariance at the optimum: "+r.CovarianceErr.Error())
		}
	case "mcmc":
		r, err := Ensemble(ctx, p, EnsembleSettings{Walkers: m.Fit.Walkers, Seed: seed, MaxSteps: m.Fit.MaxSteps,
			Start: m.Start(), Checkpoint: cp, Progress: opt.Progress})
		if err != nil {
			return nil, err
		}
		res.Status, res.Evaluations = r.Status.String(), r.Evaluations
		post = posterior{samples: r.Samples, loglike: r.SampleLogLike, best: r.Best, chain: r.Chain}
		res.MCMC = &MCMCInfo{Walkers: r.Walkers, Steps: r.Steps, Acceptance: r.Acceptance, Tau: r.Tau,
			TauReliable: r.TauReliable, BurnIn: r.BurnIn, Thin: r.Thin}
		if r.Status == NotConverged {
			res.Notes = append(res.Notes, "the chain stopped at its step cap before reaching 50 autocorrelation times: it has not converged; use the results with caution")
		}
	case "nested":
		r, err := Nested(ctx, p, NestedSettings{Live: m.Fit.LivePoints, Seed: seed, Tolerance: m.Fit.DLogZ,
			Steps: opt.NestedSteps, MaxEvaluations: opt.MaxEvaluations, Checkpoint: cp, Progress: opt.Progress})
		if err != nil {
			return nil, err
		}
		res.Status, res.Evaluations = r.Status.String(), r.Evaluations
		post = posterior{samples: r.Samples, loglike: r.LogLike, weights: r.Weights(), best: r.Best}
		res.Evidence = &Evidence{LogZ: r.LogZ, LogZErr: r.LogZErr, H: r.H, Live: r.Live, Iterations: r.Iterations,
			EffectiveSamples: r.EffectiveSamples()}
	}
	post.format = format
	sampled := time.Now()
	res.Timing = Timing{Load: loaded.Sub(start).Seconds(), Sample: sampled.Sub(loaded).Seconds()}
	if res.Status == Interrupted.String() {
		return res, nil
	}
	if err := res.summarise(post, opt); err != nil {
		return nil, err
	}
	res.Timing.Total = time.Since(start).Seconds()
	if opt.OutDir != "" {
		res.run = runRecord(m, like, res, opt, seed)
		if err := res.write(opt); err != nil {
			return nil, err
		}
		res.Timing.Total = time.Since(start).Seconds()
	}
	return res, nil
}

// prepareOutDir accepts a missing or empty directory, a non-empty one with
// force, and an existing one with a checkpoint when resuming.
func prepareOutDir(dir string, force, resume bool) error {
	if resume {
		if fi, err := os.Stat(dir); err != nil || !fi.IsDir() {
			return fmt.Errorf("fit: --resume: output directory %s: %w", dir, errors.Join(err, errNotDir(fi)))
		}
		return nil
	}
	if err := atomicfile.PrepareDir(dir, force); err != nil {
		if errors.Is(err, atomicfile.ErrExists) {
			return fmt.Errorf("fit: output directory %s is not empty: use --force to write into it, or --resume to continue its run", dir)
		}
		return err
	}
	return nil
}

func errNotDir(fi os.FileInfo) error {
	if fi != nil && !fi.IsDir() {
		return errors.New("not a directory")
	}
	return nil
}

// posterior is a sampler's output in a common form: samples, their ln L
// and normalised weights (nil: equal).
type posterior struct {
	samples [][]float64
	loglike []float64
	weights []float64
	best    []float64
	// chain is the ensemble's whole chain, [step][walker][dim] (mcmc
	// only), for the trace and autocorrelation figures.
	chain [][][]float64
	// format is the figure format of the run ("png", "pdf" or "svg").
	format string
}

// laplacePosterior draws the Laplace approximation about the optimum.
func laplacePosterior(r *OptimizeResult, p Problem, seed uint64) posterior {
	post := posterior{best: r.X}
	if r.Covariance == nil {
		post.samples = [][]float64{append([]float64(nil), r.X...)}
		post.loglike = []float64{r.LogLike}
		return post
	}
	var ch mat.Cholesky
	if !ch.Factorize(r.Covariance) {
		post.samples = [][]float64{append([]float64(nil), r.X...)}
		post.loglike = []float64{r.LogLike}
		return post
	}
	var lt mat.TriDense
	ch.LTo(&lt)
	rnd := rand.New(rand.NewPCG(seed, 99))
	n := len(r.X)
	z := make([]float64, n)
	for len(post.samples) < 4000 {
		for i := range z {
			z[i] = rnd.NormFloat64()
		}
		x := make([]float64, n)
		for i := range n {
			x[i] = r.X[i]
			for j := 0; j <= i; j++ {
				x[i] += lt.At(i, j) * z[j]
			}
		}
		if math.IsInf(p.Prior.LogPdf(x), -1) {
			continue
		}
		post.samples = append(post.samples, x)
		post.loglike = append(post.loglike, math.NaN())
	}
	return post
}
