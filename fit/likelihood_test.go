package fit

import (
	"math"
	"math/rand/v2"
	"path/filepath"
	"sync"
	"testing"

	"deflect/uv"
)

func newSimLikelihood(t *testing.T, sp simSpec) (*Likelihood, []float64) {
	t.Helper()
	dir := t.TempDir()
	m, truth := writeSimModel(t, dir, 0.05, 64, "", sp)
	l, err := NewLikelihood(m, LikelihoodOptions{CacheDir: filepath.Join(dir, "cache")})
	if err != nil {
		t.Fatal(err)
	}
	return l, truth
}

// TestLikelihoodMatchesDirectSum checks ln L from the compressed operator
// against the Gaussian log-likelihood summed directly over the visibilities
// with DFT model visibilities (the definition, ../shared/conventions.md):
//
//	ln L = Σ_k [−w_k|d_k − V_k|²/(2s²) − ln(2π s²/w_k)].
func TestLikelihoodMatchesDirectSum(t *testing.T) {
	l, truth := newSimLikelihood(t, smallSim)
	d, _, err := uv.ReadFile(l.Datasets[0].Data.File, uv.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name  string
		shift float64 // added to every free parameter, in units of its prior width
	}{{"truth", 0}, {"off", 0.03}} {
		t.Run(tc.name, func(t *testing.T) {
			theta := append([]float64(nil), truth...)
			for i, q := range l.Model.Free {
				theta[i] += tc.shift * (q.Max - q.Min)
			}
			ev, err := l.Evaluate(theta)
			if err != nil {
				t.Fatal(err)
			}
			grp := l.Datasets[0].Groups
			if len(grp) != 1 {
				t.Fatalf("%d frequency groups, want 1", len(grp))
			}
			pb := uv.NewPrimaryBeam(smallSim.dish, smallSim.freq)
			model := uv.PredictDFT(nil, l.Grid, pb, ev.Datasets[0].Groups[0].Model, d.U, d.V)
			var want float64
			for k := range d.U {
				dr, di := d.Re[k]-real(model[k]), d.Im[k]-imag(model[k])
				want += -0.5*d.Weight[k]*(dr*dr+di*di) - math.Log(2*math.Pi/d.Weight[k])
			}
			if got := l.LogLike(theta); math.Abs(got-want) > 1e-9*math.Abs(want) {
				t.Errorf("ln L = %.12g, direct sum %.12g (rel %.2g)", got, want, (got-want)/want)
			}
			if math.Abs(ev.LogLike-want) > 1e-9*math.Abs(want) {
				t.Errorf("Evaluate ln L = %.12g, direct sum %.12g", ev.LogLike, want)
			}
		})
	}
}

// TestNoiseAndFluxScale checks the noise-rescaled likelihood against its
// definition, ln L(s) = −χ²/(2s²) + LogNorm − 2N ln s, and that a flux scale
// f multiplies the model image.
func TestNoiseAndFluxScale(t *testing.T) {
	l, truth := newSimLikelihood(t, smallSim)
	dd := l.Datasets[0]
	ev0, err := l.Evaluate(truth)
	if err != nil {
		t.Fatal(err)
	}
	chi2, norm, n := ev0.Datasets[0].Chi2, dd.Groups[0].LogNorm(), float64(dd.Visibilities)
	dd.Data.NoiseScale.Value = 1.3
	dd.Data.FluxScale.Value = 0.8
	l.pm = newParamMap(l.Model)
	ev, err := l.Evaluate(truth)
	if err != nil {
		t.Fatal(err)
	}
	img0, img := ev0.Datasets[0].Groups[0].Model, ev.Datasets[0].Groups[0].Model
	for k := range img {
		if math.Abs(img[k]-0.8*img0[k]) > 1e-15 {
			t.Fatalf("pixel %d: %g, want 0.8 × %g", k, img[k], img0[k])
		}
	}
	chi2f := dd.Groups[0].Chi2(img)
	want := -chi2f/(2*1.69) + norm - 2*n*math.Log(1.3)
	if got := ev.LogLike; math.Abs(got-want) > 1e-12*math.Abs(want) {
		t.Errorf("ln L(s = 1.3, f = 0.8) = %.12g, want %.12g", got, want)
	}
	if chi2 == chi2f {
		t.Error("flux scale did not change χ²")
	}
}

func TestLikelihoodInvalidIsMinusInf(t *testing.T) {
	l, truth := newSimLikelihood(t, smallSim)
	theta := append([]float64(nil), truth...)
	for i, q := range l.Model.Free {
		if q.Name == "g1.q" {
			theta[i] = 1.5 // outside (0, 1]: SIE.Validate fails
		}
	}
	if ll := l.LogLike(theta); !math.IsInf(ll, -1) {
		t.Errorf("ln L with q = 1.5 is %g, want −Inf", ll)
	}
	if l.Invalid() != 1 {
		t.Errorf("Invalid() = %d, want 1", l.Invalid())
	}
}

// TestLikelihoodConcurrent evaluates many vectors from several goroutines
// and compares with serial evaluation, bit for bit.
func TestLikelihoodConcurrent(t *testing.T) {
	l, truth := newSimLikelihood(t, smallSim)
	rnd := rand.New(rand.NewPCG(1, 1))
	thetas := make([][]float64, 16)
	for i := range thetas {
		thetas[i] = append([]float64(nil), truth...)
		for k, q := range l.Model.Free {
			thetas[i][k] += 0.01 * (q.Max - q.Min) * rnd.NormFloat64()
		}
	}
	serial := make([]float64, len(thetas))
	for i, th := range thetas {
		serial[i] = l.LogLike(th)
	}
	par := make([]float64, len(thetas))
	var wg sync.WaitGroup
	for i, th := range thetas {
		wg.Go(func() { par[i] = l.LogLike(th) })
	}
	wg.Wait()
	for i := range par {
		if par[i] != serial[i] {
			t.Errorf("vector %d: parallel %v, serial %v", i, par[i], serial[i])
		}
	}
}

// TestCacheHit checks that a second likelihood of the same model reads the
// compressed products from the cache and agrees bit for bit.
func TestCacheHit(t *testing.T) {
	dir := t.TempDir()
	m, truth := writeSimModel(t, dir, 0.05, 64, "", smallSim)
	opt := LikelihoodOptions{CacheDir: filepath.Join(dir, "cache")}
	l1, err := NewLikelihood(m, opt)
	if err != nil {
		t.Fatal(err)
	}
	l2, err := NewLikelihood(m, opt)
	if err != nil {
		t.Fatal(err)
	}
	if l1.Datasets[0].Cache != uv.CacheMiss || l2.Datasets[0].Cache != uv.CacheHit {
		t.Errorf("cache status %v then %v, want miss then hit", l1.Datasets[0].Cache, l2.Datasets[0].Cache)
	}
	if a, b := l1.LogLike(truth), l2.LogLike(truth); a != b {
		t.Errorf("ln L %v from the data, %v from the cache", a, b)
	}
}
