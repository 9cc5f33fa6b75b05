package fit

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/optimize/functions"
)

type minimaFunc interface {
	Func(x []float64) float64
	Minima() []functions.Minimum
}

func boxPrior(dim int, lo, hi float64) Priors {
	ps := make(Priors, dim)
	for i := range ps {
		ps[i] = Uniform{Min: lo, Max: hi}
	}
	return ps
}

func TestOptimizeStandardFunctions(t *testing.T) {
	// Known global minima from gonum/optimize/functions (Minima()), which
	// cites Moré, Garbow & Hillstrom 1981, ACM TOMS 7, 17 for these
	// functions. ln L = −f with uniform priors, so the MAP is the minimum.
	for _, tc := range []struct {
		name string
		f    minimaFunc
		dim  int
		tol  float64
	}{
		{"Rosenbrock 2", functions.ExtendedRosenbrock{}, 2, 1e-6},
		{"Rosenbrock 4", functions.ExtendedRosenbrock{}, 4, 1e-6},
		{"Beale", functions.Beale{}, 2, 1e-6},
		{"Wood", functions.Wood{}, 4, 1e-5},
		{"HelicalValley", functions.HelicalValley{}, 3, 1e-6},
	} {
		t.Run(tc.name, func(t *testing.T) {
			var min functions.Minimum
			for _, m := range tc.f.Minima() {
				if m.Global && len(m.X) == tc.dim {
					min = m
				}
			}
			if min.X == nil {
				t.Fatal("no reference minimum")
			}
			p := Problem{Dim: tc.dim, LogLike: func(x []float64) float64 { return -tc.f.Func(x) }, Prior: boxPrior(tc.dim, -4.5, 4.5)}
			res, err := Optimize(context.Background(), p, OptimizeSettings{}, rand.New(rand.NewPCG(1, 1)))
			if err != nil {
				t.Fatal(err)
			}
			if res.Status != Converged {
				t.Errorf("status %v", res.Status)
			}
			for i := range min.X {
				if math.Abs(res.X[i]-min.X[i]) > tc.tol {
					t.Errorf("x = %v, want %v (f = %g, want %g)", res.X, min.X, -res.LogLike, min.F)
					break
				}
			}
			if math.Abs(-res.LogLike-min.F) > 1e-9 {
				t.Errorf("f = %g at the optimum, want %g", -res.LogLike, min.F)
			}
		})
	}
}

func TestOptimizeHimmelblauBasins(t *testing.T) {
	// f = (x² + y − 11)² + (x + y² − 7)² (Himmelblau 1972, Applied
	// Nonlinear Programming, McGraw-Hill) has four minima, f = 0, at
	// (3, 2) exactly and, to the 6 decimals usually quoted (from memory),
	// (−2.805118, 3.131312), (−3.779310, −3.283186), (3.584428, −1.848126).
	// A prior on one quadrant selects each.
	f := func(x []float64) float64 { return sq(x[0]*x[0]+x[1]-11) + sq(x[0]+x[1]*x[1]-7) }
	for _, tc := range []struct {
		xlo, xhi, ylo, yhi float64
		want               [2]float64
		tol                float64
	}{
		{0, 5, 0, 5, [2]float64{3, 2}, 1e-7},
		{-5, 0, 0, 5, [2]float64{-2.805118, 3.131312}, 1e-6},
		{-5, 0, -5, 0, [2]float64{-3.779310, -3.283186}, 1e-6},
		{0, 5, -5, 0, [2]float64{3.584428, -1.848126}, 1e-6},
	} {
		p := Problem{Dim: 2, LogLike: func(x []float64) float64 { return -f(x) },
			Prior: Priors{Uniform{Min: tc.xlo, Max: tc.xhi}, Uniform{Min: tc.ylo, Max: tc.yhi}}}
		res, err := Optimize(context.Background(), p, OptimizeSettings{Starts: 4}, rand.New(rand.NewPCG(1, 2)))
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(res.X[0]-tc.want[0]) > tc.tol || math.Abs(res.X[1]-tc.want[1]) > tc.tol {
			t.Errorf("quadrant [%g,%g]×[%g,%g]: x = %v, want %v", tc.xlo, tc.xhi, tc.ylo, tc.yhi, res.X, tc.want)
		}
	}
}

func TestOptimizeGaussianCovariance(t *testing.T) {
	// For a Gaussian ln L with a flat prior the Laplace covariance is the
	// Gaussian's covariance exactly; central second differences are exact
	// for a quadratic, so only rounding remains (tolerance 1e-6 relative
	// to σ_i σ_j). The optimum is the mean.
	rnd := rand.New(rand.NewPCG(1, 3))
	g := newGaussian(6, rnd, true)
	// A shifted box, so the bowl's minimum is not at the prior centre.
	res, err := Optimize(context.Background(), g.problem(g.box(20, 3)), OptimizeSettings{Starts: 3}, rand.New(rand.NewPCG(1, 4)))
	if err != nil {
		t.Fatal(err)
	}
	if res.CovarianceErr != nil {
		t.Fatal(res.CovarianceErr)
	}
	for i := range 6 {
		si := math.Sqrt(g.cov.At(i, i))
		if math.Abs(res.X[i]-g.mu[i]) > 1e-5*si {
			t.Errorf("x[%d] = %.10g, want %.10g", i, res.X[i], g.mu[i])
		}
		for j := range 6 {
			sj := math.Sqrt(g.cov.At(j, j))
			if math.Abs(res.Covariance.At(i, j)-g.cov.At(i, j)) > 1e-6*si*sj {
				t.Errorf("cov[%d,%d] = %.10g, want %.10g", i, j, res.Covariance.At(i, j), g.cov.At(i, j))
			}
			if !scalar.EqualWithinAbsOrRel(res.Hessian.At(i, j), g.prec.At(i, j), 1e-6/(si*sj), 1e-6) {
				t.Errorf("Hessian[%d,%d] = %.10g, precision %.10g", i, j, res.Hessian.At(i, j), g.prec.At(i, j))
			}
		}
	}
	if math.Abs(res.LogLike-g.norm) > 1e-9 {
		t.Errorf("ln L at optimum %v, want %v", res.LogLike, g.norm)
	}
	// The Hessian step follows the posterior width: a bowl 1e-6 wide in a
	// prior 10 wide gives the same covariance.
	narrow := Problem{Dim: 1, Prior: Priors{Uniform{Min: -5, Max: 5}},
		LogLike: func(x []float64) float64 { return -0.5 * sq((x[0]-1.3)/1e-6) }}
	r, err := Optimize(context.Background(), narrow, OptimizeSettings{Start: []float64{1.3000001}, Starts: -1}, rand.New(rand.NewPCG(1, 5)))
	if err != nil {
		t.Fatal(err)
	}
	if r.CovarianceErr != nil || !scalar.EqualWithinRel(r.Covariance.At(0, 0), 1e-12, 1e-5) {
		t.Errorf("narrow bowl: variance %v (err %v), want 1e-12", r.Covariance, r.CovarianceErr)
	}
}

func TestOptimizeBoundaryAndDeterminism(t *testing.T) {
	// ln L = θ on [0, 1]: the optimum is the boundary θ = 1, where the
	// Hessian does not exist; the result says so instead of inventing one.
	p := Problem{Dim: 1, LogLike: func(x []float64) float64 { return x[0] }, Prior: Priors{Uniform{Min: 0, Max: 1}}}
	res, err := Optimize(context.Background(), p, OptimizeSettings{}, rand.New(rand.NewPCG(1, 6)))
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(res.X[0]-1) > 1e-6 {
		t.Errorf("boundary optimum at %v, want 1", res.X)
	}
	if res.Covariance != nil || res.CovarianceErr == nil {
		t.Errorf("covariance %v at a boundary optimum, err %v", res.Covariance, res.CovarianceErr)
	}

	rnd := rand.New(rand.NewPCG(1, 7))
	g := newGaussian(3, rnd, true)
	run := func() *OptimizeResult {
		r, err := Optimize(context.Background(), g.problem(g.box(5, 1)), OptimizeSettings{Starts: 6}, rand.New(rand.NewPCG(9, 9)))
		if err != nil {
			t.Fatal(err)
		}
		return r
	}
	a, b := run(), run()
	for i := range a.X {
		if a.X[i] != b.X[i] {
			t.Fatalf("runs differ: %v vs %v", a.X, b.X)
		}
	}
	if a.Evaluations != b.Evaluations || len(a.Runs) != 6 || a.Runs[0].Evaluations == 0 {
		t.Errorf("evaluations %d vs %d, %d runs", a.Evaluations, b.Evaluations, len(a.Runs))
	}

	nan := Problem{Dim: 1, Prior: Priors{Uniform{Min: -1, Max: 1}}, LogLike: func(x []float64) float64 {
		if x[0] > 0.5 {
			return math.NaN()
		}
		return x[0]
	}}
	if _, err := Optimize(context.Background(), nan, OptimizeSettings{}, rand.New(rand.NewPCG(1, 1))); err == nil {
		t.Error("NaN log-likelihood not reported")
	}

	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	r, err := Optimize(ctx, g.problem(g.box(5, 1)), OptimizeSettings{}, rand.New(rand.NewPCG(1, 1)))
	if err != nil {
		t.Fatal(err)
	}
	if r.Status != Interrupted {
		t.Errorf("cancelled run: status %v", r.Status)
	}
}
