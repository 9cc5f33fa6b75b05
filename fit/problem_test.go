package fit

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/floats/scalar"
	"gonum.org/v1/gonum/integrate/quad"
)

func TestNormalPriorAgainstScipy(t *testing.T) {
	// Reference values computed with scipy 1.10.1,
	// stats.truncnorm(a, b, loc=1, scale=2).ppf(p) and .logpdf(x); the
	// standardised bounds (a, b) = (8, 10) and (−10, −8) lie far in the
	// tails, where a CDF-based quantile would lose every digit.
	ps := []float64{1e-12, 0.1, 0.5, 0.9, 1 - 1e-12}
	inf := math.Inf(1)
	for _, tc := range []struct {
		name   string
		prior  Normal
		ppf    []float64
		x, lpx float64
	}{
		{"upper tail", Normal{Mean: 1, SD: 2, Min: 17, Max: 21},
			[]float64{17.00000000000025, 17.02592609887992, 17.169822011797457, 17.557606657123674, 20.999983831329672}, 18, -2.723648541601383},
		{"lower tail", Normal{Mean: 1, SD: 2, Min: -19, Max: -15},
			[]float64{-18.999983830971996, -15.557606657123674, -15.169822011797457, -15.025926098879921, -15.000000000000249}, -18, -11.723648541601383},
		{"about the mean", Normal{Mean: 1, SD: 2, Min: -1, Max: 5},
			[]float64{-0.9999999999932341, -0.40929564218949066, 1.3423278360356492, 3.5114307283004296, 4.999999999969674}, 0, -1.5369194194401552},
		{"untruncated", Normal{Mean: 1, SD: 2},
			[]float64{-13.068967650602263, -1.5631031310892007, 1.0, 3.5631031310892007, 15.068973820095671}, 1.6, -1.657085713764618},
		{"one-sided far tail", Normal{Mean: 1, SD: 2, Min: -inf, Max: -59},
			[]float64{-60.81270552971224, -59.15314067406989, -59.04614093565463, -59.00701584648836, -59.00000000000007}, -60, -12.415841757421331},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if err := tc.prior.Validate(); err != nil {
				t.Fatal(err)
			}
			for i, p := range ps {
				got := tc.prior.Quantile(p)
				if !scalar.EqualWithinAbsOrRel(got, tc.ppf[i], 1e-12, 1e-12) {
					t.Errorf("Quantile(%g) = %.17g, want %.17g (scipy)", p, got, tc.ppf[i])
				}
			}
			if got := tc.prior.LogProb(tc.x); !scalar.EqualWithinAbsOrRel(got, tc.lpx, 1e-11, 1e-11) {
				t.Errorf("LogProb(%g) = %.17g, want %.17g (scipy)", tc.x, got, tc.lpx)
			}
		})
	}
	// Far tail of the untruncated normal: Φ⁻¹(1e-300) = −37.0470962993612
	// (scipy 1.10.1 stats.norm.ppf), to 1e-12 relative.
	if got := (Normal{SD: 1}).Quantile(1e-300); !scalar.EqualWithinRel(got, -37.0470962993612, 1e-12) {
		t.Errorf("untruncated Quantile(1e-300) = %.15g", got)
	}
}

// TestParamPriorsNormalisedAndInverse checks that every prior's density
// integrates to one over its support and that Quantile inverts the CDF
// obtained by integrating the density (adaptive Gauss–Legendre quadrature).
func TestParamPriorsNormalisedAndInverse(t *testing.T) {
	for _, tc := range []struct {
		name   string
		p      ParamPrior
		lo, hi float64
	}{
		{"uniform", Uniform{Min: -2, Max: 3}, -2, 3},
		{"log-uniform", LogUniform{Min: 0.01, Max: 100}, 0.01, 100},
		{"normal truncated", Normal{Mean: 0.3, SD: 0.5, Min: 0, Max: 2}, 0, 2},
	} {
		t.Run(tc.name, func(t *testing.T) {
			pdf := func(x float64) float64 { return math.Exp(tc.p.LogProb(x)) }
			integral := func(a, b float64) float64 {
				// Split logarithmically for the log-uniform's range.
				var s float64
				const pieces = 64
				for i := range pieces {
					x0 := a + (b-a)*float64(i)/pieces
					x1 := a + (b-a)*float64(i+1)/pieces
					if tc.lo > 0 {
						x0 = a * math.Pow(b/a, float64(i)/pieces)
						x1 = a * math.Pow(b/a, float64(i+1)/pieces)
					}
					s += quad.Fixed(pdf, x0, x1, 20, nil, 0)
				}
				return s
			}
			if got := integral(tc.lo, tc.hi); math.Abs(got-1) > 1e-10 {
				t.Errorf("∫ p = %.15g, want 1", got)
			}
			for _, u := range []float64{0.05, 0.3, 0.5, 0.77, 0.99} {
				x := tc.p.Quantile(u)
				if got := integral(tc.lo, x); math.Abs(got-u) > 1e-10 {
					t.Errorf("CDF(Quantile(%g)) = %.15g", u, got)
				}
			}
			if !math.IsInf(tc.p.LogProb(tc.lo-1e-9*(tc.hi-tc.lo)), -1) || !math.IsInf(tc.p.LogProb(tc.hi*(1+1e-9)+1e-9), -1) {
				t.Error("density not −Inf outside the support")
			}
		})
	}
}

func TestPriorsProduct(t *testing.T) {
	ps := Priors{Uniform{Min: 0, Max: 2}, LogUniform{Min: 1, Max: math.E}, Normal{Mean: 0, SD: 1}}
	// ln p = −ln 2 + (−ln x − ln 1) + (−½ z² − ½ ln 2π) at (1, 2, 0.5).
	want := -math.Log(2) - math.Log(2) - 0.125 - 0.5*math.Log(2*math.Pi)
	if got := ps.LogPdf([]float64{1, 2, 0.5}); !scalar.EqualWithinAbsOrRel(got, want, 1e-14, 1e-14) {
		t.Errorf("LogPdf = %v, want %v", got, want)
	}
	if got := ps.LogPdf([]float64{3, 2, 0.5}); !math.IsInf(got, -1) {
		t.Errorf("LogPdf outside support = %v", got)
	}
	dst := make([]float64, 3)
	ps.Transform(dst, []float64{0.25, 1, 0.5})
	if dst[0] != 0.5 || dst[1] != math.E || dst[2] != 0 {
		t.Errorf("Transform = %v, want [0.5 e 0]", dst)
	}
	// Sample: the means of 20000 draws within 4 standard errors.
	rnd := rand.New(rand.NewPCG(1, 1))
	var m [3]float64
	const n = 20000
	for range n {
		ps.Sample(dst, rnd)
		for i := range m {
			m[i] += dst[i] / n
		}
	}
	// Means: 1, e − 1 (log-uniform on [1, e]: ∫ x/x dx = e − 1), 0; SDs
	// 2/√12, √((e² − 1)/2 − (e − 1)²), 1.
	wantM := []float64{1, math.E - 1, 0}
	sd := []float64{2 / math.Sqrt(12), math.Sqrt((math.E*math.E-1)/2 - sq(math.E-1)), 1}
	for i := range m {
		if math.Abs(m[i]-wantM[i]) > 4*sd[i]/math.Sqrt(n) {
			t.Errorf("mean of draws of parameter %d = %v, want %v", i, m[i], wantM[i])
		}
	}
	if err := (Priors{Uniform{Min: 1, Max: 1}}).Validate(); err == nil {
		t.Error("min = max accepted")
	}
	if err := (Priors{LogUniform{Min: 0, Max: 1}}).Validate(); err == nil {
		t.Error("log-uniform with min 0 accepted")
	}
	if err := (Priors{Normal{Mean: 0, SD: 0}}).Validate(); err == nil {
		t.Error("sd 0 accepted")
	}
	if err := (Problem{Dim: 2, LogLike: func([]float64) float64 { return 0 }, Prior: ps}).validate(); err == nil {
		t.Error("3 priors for 2 parameters accepted")
	}
}

func TestStatusString(t *testing.T) {
	for s, want := range map[Status]string{Converged: "converged", NotConverged: "not converged", Interrupted: "interrupted"} {
		if s.String() != want {
			t.Errorf("%d.String() = %q", int(s), s.String())
		}
	}
}
