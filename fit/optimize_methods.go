package fit

import (
	"context"
	"errors"
	"math"
	"slices"

	"gonum.org/v1/gonum/optimize"
)

// This file adapts gonum's optimize package to the two local stages behind
// Optimize: the Nelder–Mead simplex, then a BFGS polish with a
// finite-difference gradient.

// minStatus says how a local minimisation ended.
type minStatus int

const (
	minConverged minStatus = iota
	minEvalLimit
	minStalled // no further progress possible (line search failed)
	minCancelled
)

// ctxRecorder stops a gonum minimisation when its context is cancelled.
type ctxRecorder struct{ ctx context.Context }

func (r ctxRecorder) Init() error { return r.ctx.Err() }

func (r ctxRecorder) Record(*optimize.Location, optimize.Operation, *optimize.Stats) error {
	return r.ctx.Err()
}

// finite replaces +Inf and NaN objective values (outside the prior's
// support) by a huge finite value that gonum's methods can compare.
func finite(f func([]float64) float64) func([]float64) float64 {
	return func(x []float64) float64 {
		v := f(x)
		if math.IsNaN(v) || math.IsInf(v, 1) {
			return math.MaxFloat64
		}
		return v
	}
}

// minimise runs one gonum method from x0 and maps its outcome. It keeps
// x0 when the method returns nothing better.
func minimise(ctx context.Context, p optimize.Problem, x0 []float64, maxEval int, conv optimize.Converger, m optimize.Method) ([]float64, float64, minStatus) {
	s := &optimize.Settings{FuncEvaluations: maxEval, Converger: conv, Recorder: ctxRecorder{ctx}}
	res, err := optimize.Minimize(p, slices.Clone(x0), s, m)
	f0 := p.Func(x0)
	if res == nil || res.F > f0 || math.IsNaN(res.F) {
		switch {
		case ctx.Err() != nil:
			return slices.Clone(x0), f0, minCancelled
		case err != nil:
			return slices.Clone(x0), f0, minStalled
		}
		return slices.Clone(x0), f0, minEvalLimit
	}
	x, f := res.X, res.F
	if f == math.MaxFloat64 {
		f = math.Inf(1)
	}
	switch {
	case ctx.Err() != nil:
		return x, f, minCancelled
	case res.Status == optimize.FunctionEvaluationLimit:
		return x, f, minEvalLimit
	case err != nil && !errors.Is(err, ctx.Err()):
		return x, f, minStalled
	}
	return x, f, minConverged
}

// nelderMead minimises f from x0 with gonum's Nelder–Mead simplex (initial
// simplex x0 and x0 + size e_i), stopping when the best value changes by
// less than 1e-13 (relative and absolute) over 200 iterations.
//
// References:
//   - Nelder, J. A. & Mead, R. 1965, Computer Journal 7, 308.
func nelderMead(ctx context.Context, f func([]float64) float64, x0 []float64, size float64, maxEval int) ([]float64, float64, minStatus) {
	p := optimize.Problem{Func: finite(f)}
	conv := &optimize.FunctionConverge{Absolute: 1e-13, Relative: 1e-13, Iterations: 200}
	return minimise(ctx, p, x0, maxEval, conv, &optimize.NelderMead{SimplexSize: size})
}

// bfgs polishes x0 with gonum's BFGS quasi-Newton method using the gradient
// grad. calls reports the objective calls made so far, so the evaluation
// budget maxEval covers the gradient's calls too.
//
// References:
//   - Nocedal, J. & Wright, S. J. 2006, Numerical Optimization, 2nd ed.,
//     Springer, §6.1.
func bfgs(ctx context.Context, f func([]float64) float64, grad func(g, x []float64), x0 []float64, maxEval int, calls func() int) ([]float64, float64, minStatus) {
	budget := maxEval
	if maxEval > 0 {
		budget = max(1, maxEval-calls())
	}
	p := optimize.Problem{Func: finite(f), Grad: grad}
	conv := &optimize.FunctionConverge{Absolute: 1e-13, Relative: 1e-13, Iterations: 20}
	return minimise(ctx, p, x0, budget, conv, &optimize.BFGS{GradStopThreshold: 1e-9})
}
