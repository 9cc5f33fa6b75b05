package fit_test

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"

	"deflect/fit"
)

// A two-parameter Gaussian likelihood inside a wide uniform box: the
// evidence is 1/(box area), ln Z = −2 ln 20 ≈ −5.99.
func ExampleNested() {
	p := fit.Problem{
		Dim: 2,
		LogLike: func(th []float64) float64 {
			return -0.5*(th[0]*th[0]+th[1]*th[1]) - math.Log(2*math.Pi)
		},
		Prior: fit.Priors{fit.Uniform{Min: -10, Max: 10}, fit.Uniform{Min: -10, Max: 10}},
	}
	res, err := fit.Nested(context.Background(), p, fit.NestedSettings{Seed: 1})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(res.Status)
	fmt.Println("ln Z within 3σ of −2 ln 20:", math.Abs(res.LogZ+2*math.Log(20)) < 3*res.LogZErr)
	// Output:
	// converged
	// ln Z within 3σ of −2 ln 20: true
}

// The maximum of ln L = −f(x, y) for Rosenbrock's function
// f = (1 − x)² + 100 (y − x²)², whose minimum is at (1, 1).
func ExampleOptimize() {
	p := fit.Problem{
		Dim: 2,
		LogLike: func(th []float64) float64 {
			return -((1-th[0])*(1-th[0]) + 100*(th[1]-th[0]*th[0])*(th[1]-th[0]*th[0]))
		},
		Prior: fit.Priors{fit.Uniform{Min: -5, Max: 5}, fit.Uniform{Min: -5, Max: 5}},
	}
	res, err := fit.Optimize(context.Background(), p, fit.OptimizeSettings{}, rand.New(rand.NewPCG(1, 1)))
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("%v at (%.4f, %.4f)\n", res.Status, res.X[0], res.X[1])
	// Output:
	// converged at (1.0000, 1.0000)
}

// Sampling a one-parameter Gaussian of mean 3 and standard deviation 2 until
// the chain is 50 autocorrelation times long.
func ExampleEnsemble() {
	p := fit.Problem{
		Dim:     1,
		LogLike: func(th []float64) float64 { return -0.5 * (th[0] - 3) * (th[0] - 3) / 4 },
		Prior:   fit.Priors{fit.Uniform{Min: -20, Max: 20}},
	}
	res, err := fit.Ensemble(context.Background(), p, fit.EnsembleSettings{Seed: 1})
	if err != nil {
		fmt.Println(err)
		return
	}
	mu, cov := fit.WeightedMeanCov(res.Samples, nil)
	fmt.Println(res.Status)
	fmt.Println("mean near 3:", math.Abs(mu[0]-3) < 0.2, "sd near 2:", math.Abs(math.Sqrt(cov.At(0, 0))-2) < 0.2)
	// Output:
	// converged
	// mean near 3: true sd near 2: true
}
