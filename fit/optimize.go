package fit

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sync"
	"sync/atomic"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/mat"
)

// OptimizeSettings configures Optimize. The zero value of every field is
// its documented default.
type OptimizeSettings struct {
	// Starts is the number of starting points drawn from the prior;
	// zero means 8. Negative means none (then Start is required).
	Starts int
	// Start, if not nil, is an extra starting point, run first.
	Start []float64
	// MaxEvaluations caps the likelihood calls of each phase (simplex,
	// then quasi-Newton) of each start; zero means 2000 (Dim + 1).
	MaxEvaluations int
	// Progress, if not nil, receives a report after every start.
	Progress Progress
}

// OptimizeRun is the outcome of one start.
type OptimizeRun struct {
	// Start is the starting point and X the optimum found from it.
	Start, X []float64
	// LogPost and LogLike are ln L + ln π and ln L at X.
	LogPost, LogLike float64
	// Evaluations counts the objective evaluations of this start: calls
	// of LogLike, plus points outside the prior's support, where the
	// likelihood is not called.
	Evaluations int
	// Status is Converged when the last phase met its convergence
	// test, NotConverged when it hit the evaluation cap.
	Status Status
}

// OptimizeResult is the outcome of Optimize.
type OptimizeResult struct {
	// Status is the status of the best run, or Interrupted.
	Status Status
	// X is the maximum of ln L + ln π found (the maximum a posteriori
	// point), LogPost and LogLike the values there.
	X                []float64
	LogPost, LogLike float64
	// Runs holds every start, in the order they were drawn (Start
	// first when given).
	Runs []OptimizeRun
	// Evaluations counts the calls of LogLike, Hessian included.
	Evaluations int
	// Hessian is the finite-difference Hessian of −ln(L π) at X, in the
	// parameters' units; nil if it could not be computed.
	Hessian *mat.SymDense
	// Covariance is the inverse of Hessian, the Laplace approximation
	// of the posterior covariance; nil when Hessian is not positive
	// definite, CovarianceErr then saying why.
	Covariance    *mat.SymDense
	CovarianceErr error
}

// Optimize finds the maximum of ln L(θ) + ln π(θ) from several starts:
// Start if given, then Starts points drawn from the prior with rnd (all
// drawn before any run, so the result does not depend on scheduling). Each
// start runs a Nelder–Mead simplex and then a BFGS quasi-Newton polish with
// central finite-difference gradients (gonum/diff/fd), in coordinates
// scaled by each parameter's prior width; outside the prior's support the
// objective is +Inf. Starts run in parallel across GOMAXPROCS goroutines;
// the best optimum is kept.
//
// At the optimum the Hessian of −ln(L π) is computed by central finite
// differences with steps of a tenth of the posterior width along each
// axis, found iteratively from the Hessian's own diagonal; its inverse is
// the covariance of the Laplace approximation.
//
// Cancelling ctx stops the runs at their next iteration with status
// Interrupted; the best point so far is returned.
//
// References:
//   - Nelder, J. A. & Mead, R. 1965, Computer Journal 7, 308.
//   - Nocedal, J. & Wright, S. J. 2006, Numerical Optimization, 2nd ed.,
//     Springer, §6.1 (BFGS) and §8.1 (finite-difference derivatives).
func Optimize(ctx context.Context, p Problem, s OptimizeSettings, rnd *rand.Rand) (*OptimizeResult, error) {
	if err := p.validate(); err != nil {
		return nil, err
	}
	if rnd == nil {
		panic("fit: Optimize needs a *rand.Rand")
	}
	nStarts := s.Starts
	if nStarts == 0 {
		nStarts = 8
	}
	nStarts = max(nStarts, 0)
	maxEval := s.MaxEvaluations
	if maxEval == 0 {
		maxEval = 2000 * (p.Dim + 1)
	}
	var starts [][]float64
	if s.Start != nil {
		if len(s.Start) != p.Dim {
			return nil, fmt.Errorf("fit: start has %d values for %d parameters", len(s.Start), p.Dim)
		}
		if math.IsInf(p.Prior.LogPdf(s.Start), -1) {
			return nil, fmt.Errorf("fit: start %v is outside the prior's support", s.Start)
		}
		starts = append(starts, slices.Clone(s.Start))
	}
	for range nStarts {
		x := make([]float64, p.Dim)
		p.Prior.Sample(x, rnd)
		starts = append(starts, x)
	}
	if len(starts) == 0 {
		return nil, errors.New("fit: Optimize needs a start or Starts > 0")
	}

	o := &optimizer{p: &p, ctx: ctx, maxEval: maxEval}
	o.centre = make([]float64, p.Dim)
	u := make([]float64, p.Dim)
	for i := range u {
		u[i] = 0.5
	}
	p.Prior.Transform(o.centre, u)
	o.scale = priorWidths(&p)
	for i, w := range o.scale {
		if !(w > 0) || math.IsInf(w, 0) {
			o.scale[i] = 1
		}
	}

	res := &OptimizeResult{Runs: make([]OptimizeRun, len(starts))}
	errs := make([]error, len(starts))
	rep := newReporter(s.Progress)
	var mu sync.Mutex
	done := 0
	best := math.Inf(-1)
	parallelFor(len(starts), func(i int) {
		res.Runs[i], errs[i] = o.run(starts[i])
		mu.Lock()
		done++
		if res.Runs[i].LogLike > best {
			best = res.Runs[i].LogLike
		}
		rep.update(Report{
			Method: "optimize", Step: done, Evaluations: int(o.evals.Load()),
			BestLogLike: best, Fraction: float64(done) / float64(len(starts)),
		})
		mu.Unlock()
	})
	if err := errors.Join(errs...); err != nil {
		return nil, err
	}
	if o.nanAt != nil {
		return nil, fmt.Errorf("fit: log-likelihood is NaN at %v", o.nanAt)
	}
	bi := 0
	for i, r := range res.Runs {
		if r.LogPost > res.Runs[bi].LogPost {
			bi = i
		}
	}
	b := res.Runs[bi]
	res.X, res.LogPost, res.LogLike, res.Status = slices.Clone(b.X), b.LogPost, b.LogLike, b.Status
	if ctx.Err() != nil {
		res.Status = Interrupted
	}
	if res.Status != Interrupted && !math.IsInf(res.LogPost, -1) {
		res.Hessian, res.Covariance, res.CovarianceErr = o.hessian(res.X)
	}
	res.Evaluations = int(o.evals.Load())
	rep.update(Report{Method: "optimize", Step: len(starts), Evaluations: res.Evaluations, BestLogLike: res.LogLike, Fraction: 1, Final: true})
	return res, nil
}

// optimizer holds what the starts share.
type optimizer struct {
	p             *Problem
	ctx           context.Context
	maxEval       int
	centre, scale []float64
	evals         atomic.Int64
	nanOnce       sync.Once
	nanAt         []float64
}

// theta maps scaled coordinates y to parameters.
func (o *optimizer) theta(dst, y []float64) {
	for i := range dst {
		dst[i] = o.centre[i] + o.scale[i]*y[i]
	}
}

// negLogPost is the objective in scaled coordinates.
func (o *optimizer) negLogPost(y []float64) float64 {
	th := make([]float64, len(y))
	o.theta(th, y)
	lp, ll, called := o.p.logPost(th)
	if called {
		o.evals.Add(1)
	}
	if math.IsNaN(ll) {
		// Remember the first NaN for the error Optimize returns, and
		// let the minimisers see a wall meanwhile.
		o.nanOnce.Do(func() { o.nanAt = th })
		return math.Inf(1)
	}
	return -lp
}

func (o *optimizer) run(start []float64) (OptimizeRun, error) {
	dim := o.p.Dim
	run := OptimizeRun{Start: start, LogPost: math.Inf(-1), LogLike: math.Inf(-1), Status: NotConverged}
	run.X = slices.Clone(start)
	if o.ctx.Err() != nil {
		run.Status = Interrupted
		return run, nil
	}
	y := make([]float64, dim)
	for i := range y {
		y[i] = (start[i] - o.centre[i]) / o.scale[i]
	}
	// calls counts this start's objective calls (LogLike calls, except
	// those outside the prior's support that skip the likelihood).
	var calls atomic.Int64
	f := func(y []float64) float64 { calls.Add(1); return o.negLogPost(y) }
	yb, fb, st := nelderMead(o.ctx, f, y, 0.05, o.maxEval)
	if st != minCancelled && !math.IsInf(fb, 1) {
		grad := func(g, x []float64) {
			fd.Gradient(g, f, x, &fd.Settings{Formula: fd.Central, Step: 1e-6})
		}
		yq, fq, sq := bfgs(o.ctx, f, grad, yb, o.maxEval, func() int { return int(calls.Load()) })
		if fq <= fb {
			yb, fb = yq, fq
		}
		// A stalled line search means the polish could not improve
		// on the point it was given: count it as converged there.
		st = sq
		if sq == minStalled {
			st = minConverged
		}
	}
	o.theta(run.X, yb)
	run.LogPost = -fb
	run.LogLike = math.Inf(-1)
	if !math.IsInf(fb, 1) {
		_, run.LogLike, _ = o.p.logPost(run.X)
		calls.Add(1)
		o.evals.Add(1)
	}
	run.Evaluations = int(calls.Load())
	switch st {
	case minConverged:
		run.Status = Converged
	case minCancelled:
		run.Status = Interrupted
	default:
		run.Status = NotConverged
	}
	return run, nil
}

// hessian returns the Hessian of −ln(L π) at x in parameter units and its
// inverse. The finite-difference step along axis i is a tenth of the
// posterior width σ_i = (H_ii)^−½, refined over a few passes starting from
// a thousandth of the prior width.
func (o *optimizer) hessian(x []float64) (*mat.SymDense, *mat.SymDense, error) {
	dim := o.p.Dim
	s := make([]float64, dim)
	for i := range s {
		s[i] = 1e-2 * o.scale[i]
	}
	f := func(y []float64) float64 {
		th := make([]float64, dim)
		for i := range th {
			th[i] = x[i] + s[i]*y[i]
		}
		lp, ll, called := o.p.logPost(th)
		if called {
			o.evals.Add(1)
		}
		if math.IsNaN(ll) {
			return math.NaN()
		}
		return -lp
	}
	origin := make([]float64, dim)
	var hy mat.SymDense
	for pass := 0; ; pass++ {
		hy = mat.SymDense{}
		fd.Hessian(&hy, f, origin, &fd.Settings{Formula: fd.Central, Step: 0.1, Concurrent: true})
		stable := true
		r := make([]float64, dim)
		for i := range dim {
			hii := hy.At(i, i)
			if !(hii > 0) || math.IsInf(hii, 0) {
				return nil, nil, fmt.Errorf("fit: Hessian at the optimum is not positive definite: second derivative along parameter %d is %g (optimum on a prior boundary, or a flat direction)", i, hii/(s[i]*s[i]))
			}
			// The step is 0.1 s_i; it should be 0.1 σ_i with
			// σ_i = s_i/√hii in these units.
			r[i] = 1 / math.Sqrt(hii)
			if r[i] < 0.5 || r[i] > 2 {
				stable = false
			}
		}
		if stable || pass == 3 {
			break
		}
		for i := range s {
			s[i] *= r[i]
		}
	}
	h := mat.NewSymDense(dim, nil)
	for i := range dim {
		for j := i; j < dim; j++ {
			v := hy.At(i, j) / (s[i] * s[j])
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, nil, fmt.Errorf("fit: Hessian at the optimum is not finite (optimum on a prior boundary?)")
			}
			h.SetSym(i, j, v)
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(&hy) {
		return h, nil, errors.New("fit: Hessian at the optimum is not positive definite (a saddle, a degenerate direction or an optimum on a prior boundary)")
	}
	var cy mat.SymDense
	if err := ch.InverseTo(&cy); err != nil {
		return h, nil, fmt.Errorf("fit: inverting the Hessian: %w", err)
	}
	cov := mat.NewSymDense(dim, nil)
	for i := range dim {
		for j := i; j < dim; j++ {
			cov.SetSym(i, j, cy.At(i, j)*s[i]*s[j])
		}
	}
	return h, cov, nil
}
