package fit

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// gaussian is a correlated multivariate normal log-likelihood with mean mu
// and covariance cov, normalised: ln L = −½ rᵀΣ⁻¹r − ½ ln det(2πΣ).
type gaussian struct {
	mu   []float64
	cov  *mat.SymDense
	prec *mat.SymDense
	norm float64
}

// newGaussian makes a dim-dimensional Gaussian with standard deviations
// between 0.5 and 3 and correlation coefficients up to about ±0.9.
func newGaussian(dim int, rnd *rand.Rand, correlated bool) *gaussian {
	g := &gaussian{mu: make([]float64, dim)}
	sd := make([]float64, dim)
	for i := range dim {
		g.mu[i] = 4 * (rnd.Float64() - 0.5)
		sd[i] = 0.5 + 2.5*rnd.Float64()
	}
	corr := mat.NewSymDense(dim, nil)
	if correlated {
		// A random correlation matrix: normalised Gram matrix of random
		// vectors with a common component.
		a := mat.NewDense(dim, dim, nil)
		for i := range dim {
			for j := range dim {
				a.Set(i, j, rnd.NormFloat64())
			}
			a.Set(i, 0, a.At(i, 0)+2)
		}
		var gram mat.SymDense
		gram.SymOuterK(1, a)
		for i := range dim {
			for j := i; j < dim; j++ {
				corr.SetSym(i, j, gram.At(i, j)/math.Sqrt(gram.At(i, i)*gram.At(j, j)))
			}
		}
	} else {
		for i := range dim {
			corr.SetSym(i, i, 1)
		}
	}
	g.cov = mat.NewSymDense(dim, nil)
	for i := range dim {
		for j := i; j < dim; j++ {
			g.cov.SetSym(i, j, corr.At(i, j)*sd[i]*sd[j])
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(g.cov) {
		panic("test covariance not positive definite")
	}
	g.prec = mat.NewSymDense(dim, nil)
	if err := ch.InverseTo(g.prec); err != nil {
		panic(err)
	}
	g.norm = -0.5 * (float64(dim)*math.Log(2*math.Pi) + ch.LogDet())
	return g
}

func (g *gaussian) logLike(x []float64) float64 {
	n := len(x)
	var q float64
	for i := range n {
		ri := x[i] - g.mu[i]
		for j := range n {
			q += ri * g.prec.At(i, j) * (x[j] - g.mu[j])
		}
	}
	return -0.5*q + g.norm
}

// box returns uniform priors of half-width k standard deviations about
// the mean, offset by shift standard deviations.
func (g *gaussian) box(k, shift float64) Priors {
	ps := make(Priors, len(g.mu))
	for i := range ps {
		s := math.Sqrt(g.cov.At(i, i))
		ps[i] = Uniform{Min: g.mu[i] + (shift-k)*s, Max: g.mu[i] + (shift+k)*s}
	}
	return ps
}

func (g *gaussian) problem(prior Prior) Problem {
	return Problem{Dim: len(g.mu), LogLike: g.logLike, Prior: prior}
}

func sameChains(t *testing.T, a, b [][][]float64) {
	t.Helper()
	if len(a) != len(b) {
		t.Fatalf("chain lengths %d and %d", len(a), len(b))
	}
	for i := range a {
		for k := range a[i] {
			for d := range a[i][k] {
				if math.Float64bits(a[i][k][d]) != math.Float64bits(b[i][k][d]) {
					t.Fatalf("chains differ at step %d walker %d parameter %d: %v vs %v", i, k, d, a[i][k][d], b[i][k][d])
				}
			}
		}
	}
}
