package source

import (
	"math"
	"math/cmplx"
	"math/rand/v2"
	"testing"

	"deflect/lensmodel"

	"gonum.org/v1/gonum/mat"
	"gonum.org/v1/gonum/stat"
)

func TestNormalChi2MatchesVisibilities(t *testing.T) {
	// χ²(s) from the normal system equals the direct sum over visibilities
	// of the lensed pixelated source's image.
	rng := rand.New(rand.NewPCG(1, 1))
	g := testGrid{n: 24, pixel: 0.1}
	lens := lensmodel.SIE{ThetaE: 0.7, Q: 0.8, PA: 40}
	u, v, w := randomCoverage(rng, 80, 1e6, 0.05)
	d := make([]complex128, len(u))
	for q := range d {
		d[q] = complex(rng.NormFloat64(), rng.NormFloat64())
	}
	m1 := newVisData(g, u[:40], v[:40], w[:40], d[:40], 10)
	m2 := newVisData(g, u[40:], v[40:], w[40:], d[40:], 6)
	var mask []int
	for k := range g.n * g.n {
		if x, y := g.Centre(k); math.Hypot(x, y) < 1.0 {
			mask = append(mask, k)
		}
	}
	grid := RegularGrid(-0.4, 0.4, -0.4, 0.4, 6, 6)
	mp := NewMapping(g, lens, mask, grid, 2)
	nm := NewNormal([]Measurement{m1, m2}, mp)
	s := make([]float64, grid.Len())
	for k := range s {
		s[k] = rng.NormFloat64()
	}
	img := mp.Image(s)
	within(t, "χ²", nm.Chi2(s), m1.chi2Direct(img)+m2.chi2Direct(img), 1e-10)
}

// smallProblem is a pixelated-source problem of 2×2 nodes, small enough to
// integrate the marginal likelihood by brute force.
type smallProblem struct {
	meas  *visData
	mp    *Mapping
	grid  *PixelGrid
	basis [][]complex128 // model visibilities of each unit node value
}

func newSmallProblem(rng *rand.Rand) *smallProblem {
	g := testGrid{n: 12, pixel: 0.12}
	lens := lensmodel.SIE{ThetaE: 0.5, Q: 0.8, PA: 20}
	u, v, w := randomCoverage(rng, 30, 5e5, 0.3)
	var mask []int
	for k := range g.n * g.n {
		if x, y := g.Centre(k); math.Hypot(x, y) < 0.7 {
			mask = append(mask, k)
		}
	}
	grid := RegularGrid(-0.3, 0.3, -0.3, 0.3, 2, 2)
	mp := NewMapping(g, lens, mask, grid, 2)
	p := &smallProblem{mp: mp, grid: grid}
	// Data: a source with node values (1, 0.5, 0.8, 0.2) plus noise.
	truth := []float64{1, 0.5, 0.8, 0.2}
	tmp := &visData{g: g, u: u, v: v, w: w, gain: make([]float64, g.n*g.n)}
	for k := range tmp.gain {
		x, y := g.Centre(k)
		tmp.gain[k] = math.Exp(-4 * math.Ln2 * (x*x + y*y) / 25)
	}
	d := tmp.predict(mp.Image(truth))
	for q := range d {
		sig := 1 / math.Sqrt(w[q])
		d[q] += complex(sig*rng.NormFloat64(), sig*rng.NormFloat64())
	}
	p.meas = newVisData(g, u, v, w, d, 5)
	for k := range grid.Len() {
		e := make([]float64, grid.Len())
		e[k] = 1
		p.basis = append(p.basis, p.meas.predict(mp.Image(e)))
	}
	return p
}

// chi2 is the direct χ² over visibilities of node values s.
func (p *smallProblem) chi2(s []float64) float64 {
	var c float64
	for q := range p.meas.u {
		var mv complex128
		for k, b := range p.basis {
			mv += complex(s[k], 0) * b[q]
		}
		r := p.meas.d[q] - mv
		c += p.meas.w[q] * real(r*cmplx.Conj(r))
	}
	return c
}

func TestEvidenceBruteForce(t *testing.T) {
	// ln ε = ln ∫ P(d|s) P(s|λ) ds, with P(d|s) = e^{−χ²/2} Π(w_k/2π) and
	// P(s|λ) = e^{−λ sᵀRs/2} / Z_S, Z_S = (2π/λ)^{N_s/2} det(R)^{−1/2}
	// (Suyu et al. 2006, eqs. 5, 8), integrated on a 4-D grid with the
	// direct χ² over visibilities. The integration variable is
	// s = s0 + C z with z on a trapezoid grid over ±8 in each coordinate;
	// any s0 and invertible C give the same integral, and taking them from
	// the inversion only makes the grid efficient: an error in the
	// inversion's covariance would show as a truncated or mis-sampled
	// integrand.
	rng := rand.New(rand.NewPCG(1, 1))
	p := newSmallProblem(rng)
	var logNorm float64
	for _, w := range p.meas.w {
		logNorm += math.Log(w / (2 * math.Pi))
	}
	nm := NewNormal([]Measurement{p.meas}, p.mp)
	for _, tc := range []struct {
		name string
		kind Regularization
		eps  float64
	}{
		{"zeroth", Zeroth, 0},
		{"gradient with zeroth term 0.05", Gradient, 0.05},
		{"curvature-free 2×2 is eps·I", Curvature, 0.3},
	} {
		t.Run(tc.name, func(t *testing.T) {
			prior, err := NewPrior(p.grid, tc.kind, tc.eps)
			if err != nil {
				t.Fatal(err)
			}
			for _, lambda := range []float64{0.3, 5, 80} {
				inv, err := Invert(nm, prior, p.grid, p.mp, InvertOptions{Lambda: lambda, DataLogNorm: logNorm})
				if err != nil {
					t.Fatal(err)
				}
				// Covariance (F + λR)⁻¹ = C Cᵀ.
				a := mat.NewSymDense(4, nil)
				a.AddSym(nm.F, scaledSym(prior.R, lambda))
				var ch mat.Cholesky
				if !ch.Factorize(a) {
					t.Fatal("F + λR not positive definite")
				}
				var ainv mat.SymDense
				if err := ch.InverseTo(&ainv); err != nil {
					t.Fatal(err)
				}
				var cc mat.Cholesky
				cc.Factorize(&ainv)
				var lower mat.TriDense
				cc.LTo(&lower)
				logDetC := 0.5 * cc.LogDet()
				// ln det R independently, by LU.
				var lu mat.LU
				lu.Factorize(prior.R)
				logDetR, _ := lu.LogDet()

				const nz, zmax = 25, 8.0
				h := 2 * zmax / float64(nz-1)
				var lsum []float64
				s := make([]float64, 4)
				z := make([]float64, 4)
				var idx [4]int
				for {
					for c := range 4 {
						z[c] = -zmax + h*float64(idx[c])
					}
					for r := range 4 {
						s[r] = inv.Source[r]
						for c := 0; c <= r; c++ {
							s[r] += lower.At(r, c) * z[c]
						}
					}
					var q float64
					for i := range 4 {
						for j := range 4 {
							q += s[i] * prior.R.At(i, j) * s[j]
						}
					}
					lsum = append(lsum, -0.5*p.chi2(s)-0.5*lambda*q)
					c := 0
					for c < 4 {
						idx[c]++
						if idx[c] < nz {
							break
						}
						idx[c] = 0
						c++
					}
					if c == 4 {
						break
					}
				}
				mx := math.Inf(-1)
				for _, l := range lsum {
					mx = max(mx, l)
				}
				var acc float64
				for _, l := range lsum {
					acc += math.Exp(l - mx)
				}
				logInt := mx + math.Log(acc) + 4*math.Log(h) + logDetC
				logZS := 2*math.Log(2*math.Pi/lambda) - 0.5*logDetR
				want := logInt - logZS + logNorm
				got := inv.Evidence.LogEvidence
				if d := math.Abs(got - want); d > 1e-6 {
					t.Errorf("λ = %v: ln ε = %.9f, brute force %.9f (diff %.3g)", lambda, got, want, d)
				}
				// σ² and N_eff against the independent inverse.
				var tr float64
				for i := range 4 {
					within(t, "σ²", inv.Sigma[i]*inv.Sigma[i], ainv.At(i, i), 1e-9)
					for j := range 4 {
						tr += ainv.At(i, j) * prior.R.At(j, i)
					}
				}
				within(t, "N_eff", inv.Neff, 4-lambda*tr, 1e-9)
				// The terms add up to ln ε.
				e := inv.Evidence
				sumTerms := -0.5*e.Chi2 - e.RegTerm - 0.5*e.LogDetA + 0.5*e.NsLogLambda + 0.5*e.LogDetR + e.DataLogNorm
				within(t, "sum of evidence terms", sumTerms, e.LogEvidence, 1e-12)
				within(t, "χ² term vs direct", e.Chi2, p.chi2(inv.Source), 1e-9)
			}
		})
	}
}

func scaledSym(r *mat.SymDense, f float64) *mat.SymDense {
	var out mat.SymDense
	out.ScaleSym(f, r)
	return &out
}

func TestEvidenceMaximum(t *testing.T) {
	// The λ returned maximises the evidence: nearby λ give lower ln ε.
	rng := rand.New(rand.NewPCG(2, 2))
	p := newSmallProblem(rng)
	nm := NewNormal([]Measurement{p.meas}, p.mp)
	prior, err := NewPrior(p.grid, Gradient, 0.05)
	if err != nil {
		t.Fatal(err)
	}
	inv, err := Invert(nm, prior, p.grid, p.mp, InvertOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range []float64{0.8, 1.25} {
		other, err := Invert(nm, prior, p.grid, p.mp, InvertOptions{Lambda: inv.Lambda * f})
		if err != nil {
			t.Fatal(err)
		}
		if other.Evidence.LogEvidence > inv.Evidence.LogEvidence+1e-9 {
			t.Errorf("ln ε at %g λ = %v above ln ε at λ = %v: %v", f, other.Evidence.LogEvidence, inv.Lambda, inv.Evidence.LogEvidence)
		}
	}
}

// reconstruction is a lensed smooth source observed with random coverage on
// a 40² grid.
type reconstruction struct {
	meas  *visData
	mp    *Mapping
	grid  *PixelGrid
	truth []float64 // true brightness at the nodes
	inner []bool    // nodes inside the caustics (multiply imaged)
}

func newReconstruction(t *testing.T, rng *rand.Rand, noise float64, addNoise, adaptive bool) *reconstruction {
	t.Helper()
	return newReconstructionNodes(t, rng, noise, addNoise, adaptive, 18)
}

// newReconstructionNodes is newReconstruction with nodes×nodes source nodes.
func newReconstructionNodes(t *testing.T, rng *rand.Rand, noise float64, addNoise, adaptive bool, nodes int) *reconstruction {
	t.Helper()
	g := testGrid{n: 40, pixel: 0.08}
	sie := lensmodel.SIE{ThetaE: 1, Q: 0.75, PA: 30}
	src := Source{Components: []Component{
		Gaussian{X: 0.05, Y: 0.03, Flux: 0.1, FWHM: 0.4, Q: 0.7, PA: 20},
		Gaussian{X: -0.15, Y: 0.1, Flux: 0.04, FWHM: 0.25, Q: 1},
	}}
	sky, _ := Render(nil, g, sie, src, RenderOptions{})
	u, v, w := randomCoverage(rng, 1500, 1.2e6, noise)
	tmp := &visData{g: g, u: u, v: v, w: w, gain: make([]float64, g.n*g.n)}
	const pb = 20.0
	for k := range tmp.gain {
		x, y := g.Centre(k)
		tmp.gain[k] = math.Exp(-4 * math.Ln2 * (x*x + y*y) / (pb * pb))
	}
	d := tmp.predict(sky)
	if addNoise {
		for q := range d {
			sig := 1 / math.Sqrt(w[q])
			d[q] += complex(sig*rng.NormFloat64(), sig*rng.NormFloat64())
		}
	}
	meas := newVisData(g, u, v, w, d, pb)
	mx := 0.0
	for _, f := range sky {
		mx = max(mx, f)
	}
	var mask []int
	for k := range sky {
		i, j := k%g.n, k/g.n
		keep := false
		for di := -2; di <= 2 && !keep; di++ {
			for dj := -2; dj <= 2 && !keep; dj++ {
				if i+di >= 0 && i+di < g.n && j+dj >= 0 && j+dj < g.n && sky[(j+dj)*g.n+i+di] > 0.02*mx {
					keep = true
				}
			}
		}
		if keep {
			mask = append(mask, k)
		}
	}
	grid := RegularGrid(-0.6, 0.6, -0.6, 0.6, nodes, nodes)
	if adaptive {
		bx, by := TraceMask(g, sie, mask, 2)
		grid = AdaptiveGrid(bx, by, nodes, nodes, 0)
	}
	mp := NewMapping(g, sie, mask, grid, 2)
	pf := newPolarFinder(sie, 2048)
	r := &reconstruction{meas: meas, mp: mp, grid: grid}
	for _, y := range grid.Y {
		for _, x := range grid.X {
			r.truth = append(r.truth, src.Brightness(x, y, 0))
			r.inner = append(r.inner, pf.count(x, y) >= 2)
		}
	}
	return r
}

// relError returns the rms difference from the truth over the inner nodes
// relative to the truth's rms.
func (r *reconstruction) relError(s []float64) float64 {
	var num, den float64
	for k, in := range r.inner {
		if in {
			d := s[k] - r.truth[k]
			num += d * d
			den += r.truth[k] * r.truth[k]
		}
	}
	return math.Sqrt(num / den)
}

func (r *reconstruction) correlation(s []float64) float64 {
	var a, b []float64
	for k, in := range r.inner {
		if in {
			a = append(a, s[k])
			b = append(b, r.truth[k])
		}
	}
	return stat.Correlation(a, b, nil)
}

func TestReconstructNoiseFree(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 3))
	rc := newReconstruction(t, rng, 0.02, false, false)
	nm := NewNormal([]Measurement{rc.meas}, rc.mp)
	for _, kind := range []Regularization{Gradient, Curvature} {
		t.Run(kind.String(), func(t *testing.T) {
			prior, err := NewPrior(rc.grid, kind, 0)
			if err != nil {
				t.Fatal(err)
			}
			inv, err := Invert(nm, prior, rc.grid, rc.mp, InvertOptions{})
			if err != nil {
				t.Fatal(err)
			}
			c := rc.correlation(inv.Source)
			t.Logf("λ = %.3g, correlation %.4f, N_eff %.1f, μ = %.2f, flux %.4f Jy, %d factorisations",
				inv.Lambda, c, inv.Neff, inv.Magnification, inv.Flux, inv.Evaluations)
			if c < 0.98 {
				t.Errorf("correlation with the true source inside the caustics %.4f < 0.98", c)
			}
		})
	}
}

func TestEvidenceLambdaBetweenFailures(t *testing.T) {
	rng := rand.New(rand.NewPCG(4, 4))
	rc := newReconstruction(t, rng, 0.02, true, false)
	nm := NewNormal([]Measurement{rc.meas}, rc.mp)
	prior, err := NewPrior(rc.grid, Gradient, 0)
	if err != nil {
		t.Fatal(err)
	}
	best, err := Invert(nm, prior, rc.grid, rc.mp, InvertOptions{NoErrors: true})
	if err != nil {
		t.Fatal(err)
	}
	cBest, eBest := rc.correlation(best.Source), rc.relError(best.Source)
	t.Logf("evidence λ = %.3g: correlation %.4f, relative error %.3f", best.Lambda, cBest, eBest)
	if cBest < 0.95 { // noisy data; the noise-free case must reach 0.98
		t.Errorf("correlation at the evidence λ %.4f < 0.95", cBest)
	}
	// Under-regularised (λ × 1e-4) fits the noise, over-regularised
	// (λ × 1e4) flattens the source: both must be clearly farther from the
	// truth, and less probable.
	for _, f := range []float64{1e-4, 1e4} {
		inv, err := Invert(nm, prior, rc.grid, rc.mp, InvertOptions{Lambda: best.Lambda * f, NoErrors: true})
		if err != nil {
			t.Fatal(err)
		}
		c, e := rc.correlation(inv.Source), rc.relError(inv.Source)
		t.Logf("λ × %g: correlation %.4f, relative error %.3f, ln ε lower by %.1f", f, c, e, best.Evidence.LogEvidence-inv.Evidence.LogEvidence)
		if !(e > 2*eBest) {
			t.Errorf("λ × %g: relative error %.3f not clearly worse than %.3f", f, e, eBest)
		}
		if !(inv.Evidence.LogEvidence < best.Evidence.LogEvidence) {
			t.Errorf("λ × %g: ln ε %v not below the maximum %v", f, inv.Evidence.LogEvidence, best.Evidence.LogEvidence)
		}
	}
}

func TestSolveCGMatchesCholesky(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 5))
	rc := newReconstruction(t, rng, 0.02, true, false)
	nm := NewNormal([]Measurement{rc.meas}, rc.mp)
	prior, err := NewPrior(rc.grid, Curvature, 0)
	if err != nil {
		t.Fatal(err)
	}
	inv, err := Invert(nm, prior, rc.grid, rc.mp, InvertOptions{NoErrors: true})
	if err != nil {
		t.Fatal(err)
	}
	s, chi2, iter, err := SolveCG(nm, prior, inv.Lambda, 1e-12, 20*len(inv.Source))
	if err != nil {
		t.Fatal(err)
	}
	t.Logf("CG: %d iterations", iter)
	within(t, "χ²", chi2, inv.Evidence.Chi2, 1e-8)
	for k := range s {
		within(t, "node", s[k], inv.Source[k], 1e-6*maxAbs(inv.Source))
	}
}

func maxAbs(v []float64) float64 {
	var m float64
	for _, x := range v {
		m = max(m, math.Abs(x))
	}
	return m
}

func TestReconstructAdaptiveGrid(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 3))
	rc := newReconstruction(t, rng, 0.02, false, true)
	nm := NewNormal([]Measurement{rc.meas}, rc.mp)
	prior, err := NewPrior(rc.grid, Gradient, 0)
	if err != nil {
		t.Fatal(err)
	}
	inv, err := Invert(nm, prior, rc.grid, rc.mp, InvertOptions{NoErrors: true})
	if err != nil {
		t.Fatal(err)
	}
	c := rc.correlation(inv.Source)
	t.Logf("adaptive grid: λ = %.3g, correlation %.4f, μ = %.2f", inv.Lambda, c, inv.Magnification)
	if c < 0.98 {
		t.Errorf("correlation with the true source inside the caustics %.4f < 0.98", c)
	}
}
