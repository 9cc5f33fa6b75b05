package source

import (
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"
	"gonum.org/v1/gonum/mat"
)

// Prior is the regularisation of a pixelated source, E_S(s) = ½ sᵀ R s,
// with ln det R precomputed. R depends only on the grid's node counts and
// the form, so one Prior serves every lens model whose grid has the same
// shape.
type Prior struct {
	Kind Regularization
	// R is the dense matrix, nil beyond MaxDensePrior nodes (the
	// matrix-free solver uses a sparse copy).
	R      *mat.SymDense
	LogDet float64 // ln det R
	sp     *csr
}

// NewPrior returns the Prior of the given form on grid g; eps is the
// zeroth-order term of RegularizationMatrix. ln det R is exact, from the
// Kronecker-sum structure of R on the node lattice (see latticePrior).
func NewPrior(g *PixelGrid, kind Regularization, eps float64) (*Prior, error) {
	sp, logDet, err := latticePrior(g, kind, eps)
	if err != nil {
		return nil, err
	}
	p := &Prior{Kind: kind, LogDet: logDet, sp: sp}
	if g.Len() <= MaxDensePrior {
		p.R = RegularizationMatrix(g, kind, eps)
	}
	return p, nil
}

// Evidence is the Bayesian evidence of a pixelated source for one lens
// model and λ, marginalised over the source, with its terms (Suyu et al.
// 2006, eq. 19, in the compressed form):
//
//	ln ε = −½ χ²(s_MP) − λ E_S(s_MP) − ½ ln det(F + λR)
//	       + ½ N_s ln λ + ½ ln det R + DataLogNorm,
//
// where χ² is the full χ² including DataTerm and s_MP the most probable
// source. The (2π)^{N_s/2} factors of the Gaussian integral over s and of
// the prior's normalisation cancel.
type Evidence struct {
	LogEvidence float64 // ln ε
	Chi2        float64 // χ²(s_MP), DataTerm included
	RegTerm     float64 // λ E_S(s_MP) = ½ λ s_MPᵀ R s_MP
	LogDetA     float64 // ln det(F + λR)
	NsLogLambda float64 // N_s ln λ
	LogDetR     float64 // ln det R
	DataLogNorm float64 // the data's normalisation, as supplied
}

// InvertOptions are the settings of Invert. The zero value is the
// documented default for every field.
type InvertOptions struct {
	// Lambda > 0 fixes the regularisation constant; 0 chooses it by
	// maximising the evidence over ln λ.
	Lambda float64
	// LambdaStart > 0 starts the search there with steps of 0.5 in ln λ
	// (e.g. the λ of the previous lens model in a fit); 0 starts at
	// λ0 = tr F / tr R with steps of 2.
	LambdaStart float64
	// LambdaMin and LambdaMax bound the search; 0 means λ0 e^{∓15}.
	LambdaMin, LambdaMax float64
	// Tol is the accuracy of the maximising ln λ; 0 means 0.05.
	Tol float64
	// DataLogNorm is the log normalisation of the data likelihood, which
	// the compressed χ² does not carry: Σ_k ln(w_k/(2π)) over the complex
	// visibilities (two real parts each of variance 1/w_k), summed over the
	// measurements (the uv package's Compressed.LogNorm). It is added to
	// ln ε so that evidences of different data or weights compare; 0 leaves
	// it out.
	DataLogNorm float64
	// NoErrors skips the per-node uncertainties and N_eff, which need the
	// inverse of F + λR (one more O(N_s³) step; SigmaPeriod² CG solves on
	// the matrix-free path).
	NoErrors bool

	// The settings of the matrix-free path (InvertMatrixFree):

	// CGTol is the relative residual |b − (F + λR) s| / |b| at which
	// conjugate gradients stop; 0 means 1e-8.
	CGTol float64
	// Probes is the number of probe vectors of the stochastic Lanczos
	// quadrature of ln det(F + λR), rounded up to whole rounds of
	// ProbePeriod² (at least two rounds); 0 means 72.
	Probes int
	// ProbePeriod p colours the node lattice by (ix mod p, iy mod p): a
	// round of probes is one vector of random signs per colour, zero on
	// the other colours, so that the estimate is exact for couplings
	// between nodes closer than p along either axis (probing); 1 gives
	// plain Rademacher vectors. 0 means 6.
	ProbePeriod int
	// LanczosSteps bounds the Lanczos steps per probe; 0 means 100.
	LanczosSteps int
	// Seed seeds the probes (rand.NewPCG(Seed, Seed); the sign vectors of
	// the σ estimate use rand.NewPCG(Seed, Seed+1)). With the same Seed
	// every λ and every lens model see the same probes, so the evidence
	// is a deterministic, smooth function of λ and the lens parameters.
	Seed uint64
	// SigmaPeriod is the lattice period p of the probing vectors of the σ
	// estimate (p² CG solves); 0 means 6.
	SigmaPeriod int
}

// Inversion is the most probable pixelated source for a lens model.
type Inversion struct {
	Source []float64 // s_MP at the nodes, Jy/arcsec²
	// Sigma is √diag (F + λR)⁻¹ in Jy/arcsec², nil with NoErrors; on the
	// matrix-free path a probing estimate (see InvertMatrixFree), NaN at
	// a node where it came out non-positive.
	Sigma    []float64
	Lambda   float64 // regularisation constant used
	Evidence Evidence
	// Neff is the effective number of source degrees of freedom,
	// N_s − λ tr((F + λR)⁻¹ R) (MacKay 1992; Suyu et al. 2006, sect. 2.3);
	// NaN with NoErrors.
	Neff float64
	// Flux is the reconstructed source flux Σ_k s_k w_k in Jy (PixelGrid
	// Weights) and ImageFlux the flux Σ_r (L s)_r of its lensed image on the
	// mask; Magnification = ImageFlux/Flux.
	Flux, ImageFlux, Magnification float64
	// Evaluations is the number of factorisations of F + λR (of λ
	// evaluations on the matrix-free path).
	Evaluations int
	// LogDetError is the standard error of the stochastic ln det(F + λR)
	// of the matrix-free path, from the scatter of each colour's probes
	// over the rounds; ln ε's is half of it. Zero on the dense path, which is
	// exact.
	LogDetError float64
	// CGIterations counts the conjugate-gradient iterations of all solves
	// on the matrix-free path, and LanczosSteps the Lanczos steps of its
	// log-determinant estimates (each one product with F).
	CGIterations, LanczosSteps int
}

// solver evaluates the evidence of a Normal with a Prior at any λ, reusing
// its buffers.
type solver struct {
	nm    *Normal
	prior *Prior
	a     *mat.SymDense // F + λR, then its Cholesky factor U (upper)
	s     *mat.VecDense
	b     *mat.VecDense
	norm  float64
	evals int
	// best is the evaluation of largest evidence so far, with its source.
	best struct {
		lambda float64
		ev     Evidence
		s      []float64
	}
}

func newSolver(nm *Normal, prior *Prior, dataNorm float64) *solver {
	n := len(nm.B)
	return &solver{nm: nm, prior: prior, a: mat.NewSymDense(n, nil), s: mat.NewVecDense(n, nil),
		b: mat.NewVecDense(n, nm.B), norm: dataNorm}
}

var errNotPD = errors.New("source: F + λR is not positive definite")

// eval factorises F + λR, solves for s_MP and returns the evidence.
func (sv *solver) eval(lambda float64) (Evidence, error) {
	n := len(sv.nm.B)
	f, r := sv.nm.F.RawSymmetric(), sv.prior.R.RawSymmetric()
	a := sv.a.RawSymmetric()
	for i := range n {
		fi, ri, ai := f.Data[i*f.Stride:], r.Data[i*r.Stride:], a.Data[i*a.Stride:]
		for j := i; j < n; j++ {
			ai[j] = fi[j] + lambda*ri[j]
		}
	}
	sv.evals++
	// LAPACK's Cholesky directly: mat.Cholesky would also estimate the
	// condition number, which costs as much again here.
	u, ok := lapack64.Potrf(a)
	if !ok {
		return Evidence{}, fmt.Errorf("%w at λ = %g", errNotPD, lambda)
	}
	var logDet float64
	for i := range n {
		logDet += 2 * math.Log(u.Data[i*u.Stride+i])
	}
	sd := sv.s.RawVector().Data
	copy(sd, sv.nm.B)
	lapack64.Potrs(u, blas64.General{Rows: n, Cols: 1, Stride: 1, Data: sd})
	e := Evidence{
		Chi2:        sv.nm.DataTerm - 2*mat.Dot(sv.b, sv.s) + mat.Inner(sv.s, sv.nm.F, sv.s),
		RegTerm:     0.5 * lambda * mat.Inner(sv.s, sv.prior.R, sv.s),
		LogDetA:     logDet,
		NsLogLambda: float64(n) * math.Log(lambda),
		LogDetR:     sv.prior.LogDet,
		DataLogNorm: sv.norm,
	}
	e.LogEvidence = -0.5*e.Chi2 - e.RegTerm - 0.5*e.LogDetA + 0.5*e.NsLogLambda + 0.5*e.LogDetR + e.DataLogNorm
	if sv.best.s == nil || e.LogEvidence > sv.best.ev.LogEvidence {
		sv.best.lambda, sv.best.ev = lambda, e
		sv.best.s = append(sv.best.s[:0], sd...)
	}
	return e, nil
}

// Invert finds the most probable pixelated source for the normal system nm
// with the given prior, on grid g (for the flux weights), at a fixed λ or
// at the λ that maximises the evidence: a walk in steps of 2 in ln λ from
// λ0 = tr F / tr R (or in steps of 0.5 from LambdaStart) brackets the
// maximum, and successive parabolic interpolation with golden-section
// safeguards refines it to Tol in ln λ.
//
// The system is solved by dense Cholesky factorisation (gonum mat). For
// more than a few thousand nodes use InvertMatrixFree.
//
// References:
//   - Warren S. J., Dye S., 2003, ApJ 590, 673 (semi-linear inversion).
//   - Suyu S. H., Marshall P. J., Hobson M. P., Blandford R. D., 2006,
//     MNRAS 371, 983 (eq. 19, the evidence; sect. 2.3, N_eff).
//   - MacKay D. J. C., 1992, Neural Computation 4, 415.
func Invert(nm *Normal, prior *Prior, g *PixelGrid, mp *Mapping, opt InvertOptions) (*Inversion, error) {
	n := len(nm.B)
	if prior.R.SymmetricDim() != n || g.Len() != n || mp.NSource != n {
		panic(fmt.Sprintf("source: Invert sizes differ: normal %d, prior %d, grid %d, mapping %d", n, prior.R.SymmetricDim(), g.Len(), mp.NSource))
	}
	sv := newSolver(nm, prior, opt.DataLogNorm)
	lambda := opt.Lambda
	if lambda < 0 || math.IsNaN(lambda) {
		return nil, fmt.Errorf("source: λ = %v is negative", lambda)
	}
	if lambda == 0 {
		var err error
		lambda, err = maximise(sv, opt)
		if err != nil {
			return nil, err
		}
	}
	var ev Evidence
	if opt.NoErrors && sv.best.s != nil && sv.best.lambda == lambda {
		ev = sv.best.ev // the factor is not needed again
	} else {
		var err error
		if ev, err = sv.eval(lambda); err != nil {
			return nil, err
		}
	}
	inv := &Inversion{Source: make([]float64, n), Lambda: lambda, Evidence: ev, Neff: math.NaN()}
	copy(inv.Source, sv.best.s)
	if sv.best.lambda != lambda {
		copy(inv.Source, sv.s.RawVector().Data)
	}
	w := g.Weights()
	for k, s := range inv.Source {
		inv.Flux += s * w[k]
	}
	for _, v := range mp.Apply(nil, inv.Source) {
		inv.ImageFlux += v
	}
	inv.Magnification = inv.ImageFlux / inv.Flux
	if !opt.NoErrors {
		ai, ok := lapack64.Potri(blas64.Triangular{Uplo: blas.Upper, Diag: blas.NonUnit, N: n,
			Stride: sv.a.RawSymmetric().Stride, Data: sv.a.RawSymmetric().Data})
		if !ok {
			return nil, fmt.Errorf("source: inverting F + λR at λ = %g failed", lambda)
		}
		inv.Sigma = make([]float64, n)
		var tr float64
		r := prior.R.RawSymmetric()
		for i := range n {
			inv.Sigma[i] = math.Sqrt(ai.Data[i*ai.Stride+i])
			tr += ai.Data[i*ai.Stride+i] * r.Data[i*r.Stride+i]
			for j := i + 1; j < n; j++ {
				tr += 2 * ai.Data[i*ai.Stride+j] * r.Data[i*r.Stride+j]
			}
		}
		inv.Neff = float64(n) - lambda*tr
	}
	inv.Evaluations = sv.evals
	return inv, nil
}

// traces returns tr F and tr R.
func (sv *solver) traces() (trF, trR float64) {
	for i := range len(sv.nm.B) {
		trF += sv.nm.F.At(i, i)
		trR += sv.prior.R.At(i, i)
	}
	return trF, trR
}

// evaluator is a solver of (F + λR) s = b that returns the evidence at λ.
type evaluator interface {
	eval(lambda float64) (Evidence, error)
	traces() (trF, trR float64)
}

// maximise returns the λ of largest evidence.
func maximise(sv evaluator, opt InvertOptions) (float64, error) {
	trF, trR := sv.traces()
	if !(trF > 0) {
		return 0, fmt.Errorf("source: the mask maps to no source node (tr F = %g)", trF)
	}
	t0 := math.Log(trF / trR)
	lo, hi := t0-15, t0+15
	if opt.LambdaMin > 0 {
		lo = math.Log(opt.LambdaMin)
	}
	if opt.LambdaMax > 0 {
		hi = math.Log(opt.LambdaMax)
	}
	if !(lo < hi) {
		return 0, fmt.Errorf("source: λ range [%g, %g] is empty", math.Exp(lo), math.Exp(hi))
	}
	tol := opt.Tol
	if tol == 0 {
		tol = 0.05
	}
	var firstErr error
	f := func(t float64) float64 {
		e, err := sv.eval(math.Exp(t))
		if err != nil {
			if firstErr == nil {
				firstErr = err
			}
			return math.Inf(1)
		}
		return -e.LogEvidence
	}
	step := 2.0
	if opt.LambdaStart > 0 {
		t0, step = math.Log(opt.LambdaStart), 0.5
	}
	t0 = min(max(t0, lo), hi)
	// Bracket the minimum of −ln ε by walking downhill.
	a, b := t0, min(t0+step, hi)
	fa, fb := f(a), f(b)
	if fb > fa {
		a, b, fa, fb = b, a, fb, fa
	}
	step = b - a
	c := min(max(b+step, lo), hi)
	fc := f(c)
	for fc < fb && c != lo && c != hi {
		a, fa, b, fb = b, fb, c, fc
		c = min(max(b+step, lo), hi)
		fc = f(c)
	}
	if fc < fb { // the minimum is at the end of the range
		if firstErr != nil && math.IsInf(fc, 1) {
			return 0, firstErr
		}
		return math.Exp(c), nil
	}
	if math.IsInf(fb, 1) {
		return 0, firstErr
	}
	if a > c {
		a, c, fa, fc = c, a, fc, fa
	}
	t := parabolicMin(f, a, b, c, fa, fb, fc, tol)
	return math.Exp(t), nil
}

// parabolicMin minimises f on the bracket a < b < c, f(b) below f(a) and
// f(c), by successive parabolic interpolation, falling back to a golden
// section step when the parabola's vertex is not well inside the bracket
// (Brent 1973, Algorithms for Minimization without Derivatives, ch. 5). It
// stops when the next step would move the best point by less than tol,
// returning the best point evaluated.
func parabolicMin(f func(float64) float64, a, b, c, fa, fb, fc, tol float64) float64 {
	const cgold = 0.3819660112501051
	for range 50 {
		if c-a < 2*tol {
			break
		}
		// Vertex of the parabola through the three points.
		p := (b-a)*(b-a)*(fb-fc) - (b-c)*(b-c)*(fb-fa)
		q := 2 * ((b-a)*(fb-fc) - (b-c)*(fb-fa))
		u := math.NaN()
		if q != 0 {
			u = b - p/q
		}
		if !(u > a+tol/2 && u < c-tol/2) {
			// Golden section into the larger part.
			if b-a > c-b {
				u = b - cgold*(b-a)
			} else {
				u = b + cgold*(c-b)
			}
		} else if math.Abs(u-b) < tol {
			break
		}
		fu := f(u)
		if fu < fb {
			if u < b {
				c, fc = b, fb
			} else {
				a, fa = b, fb
			}
			b, fb = u, fu
		} else if u < b {
			a, fa = u, fu
		} else {
			c, fc = u, fu
		}
	}
	return b
}

// SolveCG returns the most probable source at a fixed λ by conjugate
// gradients on (F + λR) s = b, for node counts where a dense factorisation
// is too slow; it stops when the residual falls below tol (0 means 1e-10)
// times |b| or after maxIter iterations (0 means N_s), returning the
// source, its χ² and the iteration count. It still forms the dense F; the
// matrix-free path with the evidence is InvertMatrixFree.
func SolveCG(nm *Normal, prior *Prior, lambda, tol float64, maxIter int) (s []float64, chi2 float64, iter int, err error) {
	n := len(nm.B)
	if !(lambda > 0) {
		return nil, 0, 0, fmt.Errorf("source: CG needs a fixed λ > 0, got %v", lambda)
	}
	if tol == 0 {
		tol = 1e-10
	}
	if maxIter == 0 {
		maxIter = n
	}
	apply := func(dst, x *mat.VecDense) {
		var t mat.VecDense
		dst.MulVec(nm.F, x)
		t.MulVec(prior.R, x)
		dst.AddScaledVec(dst, lambda, &t)
	}
	b := mat.NewVecDense(n, nm.B)
	x := mat.NewVecDense(n, nil)
	r := mat.VecDenseCopyOf(b)
	p := mat.VecDenseCopyOf(r)
	ap := mat.NewVecDense(n, nil)
	rr := mat.Dot(r, r)
	stop := tol * tol * rr
	for iter = 0; iter < maxIter && rr > stop; iter++ {
		apply(ap, p)
		alpha := rr / mat.Dot(p, ap)
		x.AddScaledVec(x, alpha, p)
		r.AddScaledVec(r, -alpha, ap)
		rn := mat.Dot(r, r)
		p.AddScaledVec(r, rn/rr, p)
		rr = rn
	}
	if rr > stop {
		err = fmt.Errorf("source: CG did not converge in %d iterations (residual %.3g of |b|)", iter, math.Sqrt(rr/mat.Dot(b, b)))
	}
	s = x.RawVector().Data
	return s, nm.Chi2(s), iter, err
}
