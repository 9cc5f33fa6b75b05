package source

import (
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"sync"
	"sync/atomic"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/lapack/lapack64"
	"gonum.org/v1/gonum/mat"
)

// Solver selects how a pixelated source is solved.
type Solver int

const (
	// SolverAuto uses dense Cholesky up to PixelOptions.DenseMax nodes and
	// the matrix-free path beyond.
	SolverAuto Solver = iota
	// SolverDense forms F and factorises F + λR (NewNormal, Invert):
	// exact evidence and uncertainties, O(N_s²) memory and O(N_s³) time.
	SolverDense
	// SolverMatrixFree applies F by FFT convolution (NewOperator) and
	// solves by conjugate gradients with stochastic estimates of the
	// log-determinant and the uncertainties (InvertMatrixFree).
	SolverMatrixFree
)

// String returns the name of the solver.
func (s Solver) String() string {
	switch s {
	case SolverAuto:
		return "auto"
	case SolverDense:
		return "dense"
	case SolverMatrixFree:
		return "matrix-free"
	}
	return fmt.Sprintf("Solver(%d)", int(s))
}

// DefaultDenseMax is the default largest node count that SolverAuto
// solves densely.
const DefaultDenseMax = 3000

// mfSolver evaluates the evidence on the matrix-free path at any λ.
type mfSolver struct {
	op     *Operator
	sp     *csr // R
	diagR  []float64
	logR   float64
	norm   float64
	tol    float64
	maxLan int
	grid   *PixelGrid
	probes [][]float64 // rounds of probes, each round a full estimate
	rounds int
	steps  int       // Lanczos steps taken
	x      []float64 // warm start: the last solution
	evals  int
	iters  int
	best   struct {
		lambda float64
		ev     Evidence
		s      []float64
		logErr float64
	}
	lastErr float64 // standard error of the last ln det estimate
	work    []*lanczosWork
	// The preconditioner M = λR + diag F, a band matrix of half-width kd
	// (that of R on the node lattice), factorised M = UᵀU.
	kd      int
	band    []float64
	fac     blas64.TriangularBand
	logDetM float64
	// workspace
	r, z, p, ap, t1, t2 []float64
}

func newMFSolver(op *Operator, prior *Prior, g *PixelGrid, opt InvertOptions) *mfSolver {
	n := op.Len()
	sv := &mfSolver{grid: g, op: op, sp: prior.sparse(), logR: prior.LogDet, norm: opt.DataLogNorm, tol: opt.CGTol, maxLan: opt.LanczosSteps}
	sv.diagR = sv.sp.diag()
	for i := range n {
		for p := sv.sp.rowPtr[i]; p < sv.sp.rowPtr[i+1]; p++ {
			sv.kd = max(sv.kd, sv.sp.col[p]-i)
		}
	}
	sv.band = make([]float64, n*(sv.kd+1))
	if sv.tol == 0 {
		sv.tol = 1e-8
	}
	if sv.maxLan == 0 {
		sv.maxLan = 100
	}
	pp := opt.ProbePeriod
	if pp == 0 {
		pp = 6
	}
	pp = min(pp, max(len(g.X), len(g.Y)))
	colours := pp * pp
	np := opt.Probes
	if np == 0 {
		np = 72
	}
	sv.rounds = max(2, (np+colours-1)/colours)
	// Random signs on each colour class, drawn once: every λ sees the same
	// probes, so the estimated ln det is a smooth function of λ.
	rng := rand.New(rand.NewPCG(opt.Seed, opt.Seed))
	nx, ny := len(g.X), len(g.Y)
	for range sv.rounds {
		for cy := range pp {
			for cx := range pp {
				z := make([]float64, n)
				nz := 0
				for iy := cy; iy < ny; iy += pp {
					for ix := cx; ix < nx; ix += pp {
						z[iy*nx+ix] = float64(2*int(rng.Uint64()&1) - 1)
						nz++
					}
				}
				if nz > 0 {
					sv.probes = append(sv.probes, z)
				}
			}
		}
	}
	sv.x = make([]float64, n)
	for _, v := range []*[]float64{&sv.r, &sv.z, &sv.p, &sv.ap, &sv.t1, &sv.t2} {
		*v = make([]float64, n)
	}
	return sv
}

func (sv *mfSolver) traces() (trF, trR float64) {
	for k, v := range sv.op.Diag() {
		trF += v
		trR += sv.diagR[k]
	}
	return trF, trR
}

// apply stores (F + λR) x in dst.
func (sv *mfSolver) apply(dst, x []float64, lambda float64) {
	sv.op.Apply(dst, x)
	sv.sp.mulVec(sv.t1, x)
	for k := range dst {
		dst[k] += lambda * sv.t1[k]
	}
}

// setPrecond factorises the preconditioner M = λR + diag F, the
// regularisation exactly and the data term by its diagonal: it is exact
// for nodes the data do not reach, where the prior's smooth, nearly free
// modes would otherwise stall conjugate gradients, and as a band matrix of
// half-width kd (2 n_x for curvature) it costs O(N_s kd²) by LAPACK's
// band Cholesky.
func (sv *mfSolver) setPrecond(lambda float64) error {
	n, w := sv.op.Len(), sv.kd+1
	clear(sv.band)
	f := sv.op.Diag()
	for i := range n {
		for p := sv.sp.rowPtr[i]; p < sv.sp.rowPtr[i+1]; p++ {
			if j := sv.sp.col[p]; j >= i {
				sv.band[i*w+j-i] = lambda * sv.sp.val[p]
			}
		}
		sv.band[i*w] += f[i]
	}
	fac, ok := lapack64.Pbtrf(blas64.SymmetricBand{Uplo: blas.Upper, N: n, K: sv.kd, Data: sv.band, Stride: w})
	if !ok {
		return fmt.Errorf("%w at λ = %g (preconditioner λR + diag F)", errNotPD, lambda)
	}
	sv.fac = fac
	sv.logDetM = 0
	for i := range n {
		sv.logDetM += 2 * math.Log(sv.band[i*w])
	}
	return nil
}

// precond stores M⁻¹ r in z.
func (sv *mfSolver) precond(z, r []float64) {
	copy(z, r)
	lapack64.Pbtrs(sv.fac, blas64.General{Rows: len(z), Cols: 1, Stride: 1, Data: z})
}

// pcg solves (F + λR) x = b by conjugate gradients with the
// preconditioner set by setPrecond, starting from x, until
// |b − (F + λR) x| ≤ tol |b| (Saad 2003, Iterative Methods for Sparse
// Linear Systems, 2nd ed., alg. 9.1).
func (sv *mfSolver) pcg(x, b []float64, lambda, tol float64) error {
	n := len(b)
	r, z, p, ap := sv.r, sv.z, sv.p, sv.ap
	sv.apply(ap, x, lambda)
	var bb, rz float64
	for k := range n {
		r[k] = b[k] - ap[k]
		bb += b[k] * b[k]
	}
	sv.precond(z, r)
	for k := range n {
		p[k] = z[k]
		rz += r[k] * z[k]
	}
	if bb == 0 {
		clear(x)
		return nil
	}
	stop := tol * tol * bb
	maxIter := max(1000, 2*n)
	for it := 0; ; it++ {
		var rr float64
		for _, v := range r {
			rr += v * v
		}
		if rr <= stop {
			return nil
		}
		if it == maxIter {
			return fmt.Errorf("source: conjugate gradients did not converge in %d iterations at λ = %g (residual %.3g of |b|)", it, lambda, math.Sqrt(rr/bb))
		}
		sv.apply(ap, p, lambda)
		sv.iters++
		var pap float64
		for k := range n {
			pap += p[k] * ap[k]
		}
		if !(pap > 0) {
			return fmt.Errorf("%w at λ = %g (pᵀAp = %g in conjugate gradients)", errNotPD, lambda, pap)
		}
		alpha := rz / pap
		var rzn float64
		for k := range n {
			x[k] += alpha * p[k]
			r[k] -= alpha * ap[k]
		}
		sv.precond(z, r)
		for k := range n {
			rzn += r[k] * z[k]
		}
		beta := rzn / rz
		rz = rzn
		for k := range n {
			p[k] = z[k] + beta*p[k]
		}
	}
}

// lanczosWork is one goroutine's share of the log-determinant estimate.
type lanczosWork struct {
	op          *Operator
	t1, z, w    []float64
	q           [][]float64
	alpha, beta []float64
}

// logDet estimates ln det(F + λR) = ln det M + tr ln Ã with
// Ã = U⁻ᵀ(F + λR)U⁻¹, M = UᵀU the preconditioner, by stochastic Lanczos
// quadrature: for each probe z, m Lanczos steps from z/|z| give the
// tridiagonal T_m = U Θ Uᵀ and zᵀ ln(Ã) z ≈ |z|² Σ_j U_0j² ln θ_j (Gauss
// quadrature), summed over each round of probes. Lanczos vectors are fully
// reorthogonalised; a probe stops when its estimate changes by less than
// 0.01 over five steps, or at maxLan steps. The probes run in parallel
// over runtime.GOMAXPROCS(0) goroutines, each probe's value independent of
// which one ran it. It returns the estimate and its standard error from
// the scatter over rounds.
func (sv *mfSolver) logDet(lambda float64) (est, stderr float64, err error) {
	n := sv.op.Len()
	m := min(sv.maxLan, n)
	nw := max(1, min(runtime.GOMAXPROCS(0), len(sv.probes)))
	for len(sv.work) < nw {
		wk := &lanczosWork{op: sv.op.clone(), t1: make([]float64, n), z: make([]float64, n), w: make([]float64, n),
			alpha: make([]float64, m), beta: make([]float64, m)}
		for range m + 1 {
			wk.q = append(wk.q, make([]float64, n))
		}
		sv.work = append(sv.work, wk)
	}
	vals := make([]float64, len(sv.probes))
	steps := make([]int, len(sv.probes))
	errs := make([]error, len(sv.probes))
	var next atomic.Int64
	var wg sync.WaitGroup
	for _, wk := range sv.work[:nw] {
		wg.Go(func() {
			for {
				l := int(next.Add(1)) - 1
				if l >= len(sv.probes) {
					return
				}
				vals[l], steps[l], errs[l] = sv.lanczos(wk, sv.probes[l], lambda, m)
			}
		})
	}
	wg.Wait()
	for l := range vals {
		if errs[l] != nil {
			return 0, 0, fmt.Errorf("%w at λ = %g", errs[l], lambda)
		}
		sv.steps += steps[l]
	}
	// Each round of probes is an unbiased estimate of tr ln Ã, the sum
	// over colours of independent terms; the variance of a round is the
	// sum of the colours' variances, each estimated from its values
	// across rounds, which gives (rounds − 1)·colours degrees of freedom
	// to the standard error rather than rounds − 1.
	per := len(vals) / sv.rounds
	var mean, vr float64
	for c := range per {
		var mc float64
		for r := range sv.rounds {
			mc += vals[r*per+c]
		}
		mc /= float64(sv.rounds)
		mean += mc
		for r := range sv.rounds {
			d := vals[r*per+c] - mc
			vr += d * d / float64(sv.rounds-1)
		}
	}
	stderr = math.Sqrt(vr / float64(sv.rounds))
	return sv.logDetM + mean, stderr, nil
}

// lanczos returns the Gauss-quadrature estimate of zᵀ ln(Ã) z and the
// steps it took.
func (sv *mfSolver) lanczos(wk *lanczosWork, z []float64, lambda float64, m int) (float64, int, error) {
	n := len(z)
	q, w := wk.q, wk.w
	var zz float64
	for _, v := range z {
		zz += v * v
	}
	nz := math.Sqrt(zz)
	for k, v := range z {
		q[0][k] = v / nz
	}
	prev := math.Inf(1)
	for j := 0; j < m; j++ {
		// w = U⁻ᵀ (F + λR) U⁻¹ q_j
		copy(wk.z, q[j])
		blas64.Tbsv(blas.NoTrans, sv.fac, blas64.Vector{N: n, Inc: 1, Data: wk.z})
		wk.op.Apply(w, wk.z)
		sv.sp.mulVec(wk.t1, wk.z)
		for k := range w {
			w[k] += lambda * wk.t1[k]
		}
		blas64.Tbsv(blas.Trans, sv.fac, blas64.Vector{N: n, Inc: 1, Data: w})
		var a float64
		for k := range n {
			a += q[j][k] * w[k]
		}
		wk.alpha[j] = a
		// Classical Gram–Schmidt against every Lanczos vector, twice.
		for range 2 {
			for i := 0; i <= j; i++ {
				var c float64
				for k := range n {
					c += q[i][k] * w[k]
				}
				for k := range n {
					w[k] -= c * q[i][k]
				}
			}
		}
		var bb float64
		for _, v := range w {
			bb += v * v
		}
		wk.beta[j] = math.Sqrt(bb)
		done := wk.beta[j] <= 1e-12*math.Abs(a) || j == m-1
		if (j+1)%5 == 0 || done {
			cur, err := gaussLog(wk.alpha[:j+1], wk.beta[:j])
			if err != nil {
				return 0, 0, err
			}
			if done || math.Abs(cur-prev)*zz < 1e-2 {
				return zz * cur, j + 1, nil
			}
			prev = cur
		}
		for k := range n {
			q[j+1][k] = w[k] / wk.beta[j]
		}
	}
	panic("source: unreachable")
}

// gaussLog returns e₁ᵀ ln(T) e₁ for the symmetric tridiagonal T with
// diagonal a and off-diagonal b.
func gaussLog(a, b []float64) (float64, error) {
	m := len(a)
	t := mat.NewSymDense(m, nil)
	for i := range m {
		t.SetSym(i, i, a[i])
		if i+1 < m {
			t.SetSym(i, i+1, b[i])
		}
	}
	var es mat.EigenSym
	if !es.Factorize(t, true) {
		return 0, fmt.Errorf("source: Lanczos tridiagonal eigenproblem did not converge")
	}
	var u mat.Dense
	es.VectorsTo(&u)
	var s float64
	for j, th := range es.Values(nil) {
		if !(th > 0) {
			return 0, fmt.Errorf("%w (Ritz value %g)", errNotPD, th)
		}
		s += u.At(0, j) * u.At(0, j) * math.Log(th)
	}
	return s, nil
}

// eval solves for s_MP at λ (warm-started) and returns the evidence with
// the stochastic ln det(F + λR).
func (sv *mfSolver) eval(lambda float64) (Evidence, error) {
	sv.evals++
	if err := sv.setPrecond(lambda); err != nil {
		return Evidence{}, err
	}
	if err := sv.pcg(sv.x, sv.op.B(), lambda, sv.tol); err != nil {
		return Evidence{}, err
	}
	logDet, se, err := sv.logDet(lambda)
	if err != nil {
		return Evidence{}, err
	}
	sv.lastErr = se
	s := sv.x
	fs := sv.op.Apply(sv.t2, s)
	sv.sp.mulVec(sv.t1, s)
	chi2 := sv.op.DataTerm()
	var sr float64
	for k, v := range s {
		chi2 += v*fs[k] - 2*v*sv.op.b[k]
		sr += v * sv.t1[k]
	}
	n := len(s)
	e := Evidence{
		Chi2:        chi2,
		RegTerm:     0.5 * lambda * sr,
		LogDetA:     logDet,
		NsLogLambda: float64(n) * math.Log(lambda),
		LogDetR:     sv.logR,
		DataLogNorm: sv.norm,
	}
	e.LogEvidence = -0.5*e.Chi2 - e.RegTerm - 0.5*e.LogDetA + 0.5*e.NsLogLambda + 0.5*e.LogDetR + e.DataLogNorm
	if sv.best.s == nil || e.LogEvidence > sv.best.ev.LogEvidence {
		sv.best.lambda, sv.best.ev, sv.best.logErr = lambda, e, se
		sv.best.s = append(sv.best.s[:0], s...)
	}
	return e, nil
}

// InvertMatrixFree is Invert for large source grids: F is applied by the
// Operator's FFT convolution and never formed, (F + λR) s = b is solved by
// conjugate gradients preconditioned by λR + diag F (band Cholesky) to
// the relative residual CGTol, and the evidence's terms are those of Invert
// with χ² and λE_S exact at the CG solution, ln det R exact (NewPrior) and
// ln det(F + λR) estimated by stochastic Lanczos quadrature with Probes
// Rademacher vectors drawn from Seed; its standard error is returned in
// LogDetError. λ is searched as in Invert. The probes are the same at every
// λ, so the estimated evidence is smooth in λ and the search behaves as on
// the exact curve.
//
// Unless NoErrors is set, the per-node variances diag (F + λR)⁻¹ are
// estimated with the diagonal estimator of Bekas et al. (2007, eq. 3) on
// probing vectors: for each colour class (ix mod p, iy mod p), p =
// SigmaPeriod, a vector of random signs on the class's nodes and zero
// elsewhere, one CG solve each (p² solves); a node's estimate is exact up
// to the covariances with nodes of its class, at least p nodes away. The
// same solves estimate tr((F + λR)⁻¹ R) for N_eff.
//
// References:
//   - Ubaru S., Chen J., Saad Y., 2017, SIAM J. Matrix Anal. Appl. 38,
//     1075 (stochastic Lanczos quadrature, sect. 3, eq. 3.3).
//   - Hutchinson M. F., 1990, Commun. Stat. Simul. Comput. 19, 433
//     (Rademacher trace estimator).
//   - Bekas C., Kokiopoulou E., Saad Y., 2007, Appl. Numer. Math. 57,
//     1214 (stochastic diagonal estimator, eq. 3, and probing vectors).
//   - Suyu S. H. et al., 2006, MNRAS 371, 983 (eq. 19).
func InvertMatrixFree(op *Operator, prior *Prior, g *PixelGrid, mp *Mapping, opt InvertOptions) (*Inversion, error) {
	n := op.Len()
	if prior.Len() != n || g.Len() != n || mp.NSource != n {
		panic(fmt.Sprintf("source: InvertMatrixFree sizes differ: operator %d, prior %d, grid %d, mapping %d", n, prior.Len(), g.Len(), mp.NSource))
	}
	if opt.CGTol < 0 || opt.Probes < 0 || opt.LanczosSteps < 0 || opt.SigmaPeriod < 0 {
		return nil, fmt.Errorf("source: negative matrix-free setting (CGTol %g, Probes %d, LanczosSteps %d, SigmaPeriod %d)",
			opt.CGTol, opt.Probes, opt.LanczosSteps, opt.SigmaPeriod)
	}
	sv := newMFSolver(op, prior, g, opt)
	lambda := opt.Lambda
	if lambda < 0 || math.IsNaN(lambda) {
		return nil, fmt.Errorf("source: λ = %v is negative", lambda)
	}
	if lambda == 0 {
		var err error
		if lambda, err = maximise(sv, opt); err != nil {
			return nil, err
		}
	}
	var ev Evidence
	var logErr float64
	var src []float64
	if sv.best.s != nil && sv.best.lambda == lambda {
		ev, logErr, src = sv.best.ev, sv.best.logErr, sv.best.s
	} else {
		var err error
		if ev, err = sv.eval(lambda); err != nil {
			return nil, err
		}
		logErr, src = sv.lastErr, sv.x
	}
	inv := &Inversion{Source: append([]float64(nil), src...), Lambda: lambda, Evidence: ev, Neff: math.NaN(),
		LogDetError: logErr}
	w := g.Weights()
	for k, s := range inv.Source {
		inv.Flux += s * w[k]
	}
	for _, v := range mp.Apply(nil, inv.Source) {
		inv.ImageFlux += v
	}
	inv.Magnification = inv.ImageFlux / inv.Flux
	if !opt.NoErrors {
		if err := sv.sigma(inv, g, opt); err != nil {
			return nil, err
		}
	}
	inv.Evaluations = sv.evals
	inv.CGIterations = sv.iters
	inv.LanczosSteps = sv.steps
	return inv, nil
}

// sigma estimates the per-node uncertainties and N_eff at inv.Lambda (see
// InvertMatrixFree).
func (sv *mfSolver) sigma(inv *Inversion, g *PixelGrid, opt InvertOptions) error {
	p := opt.SigmaPeriod
	if p == 0 {
		p = 6
	}
	nx, ny := len(g.X), len(g.Y)
	n := nx * ny
	lambda := inv.Lambda
	if err := sv.setPrecond(lambda); err != nil {
		return err
	}
	rng := rand.New(rand.NewPCG(opt.Seed, opt.Seed+1))
	v := make([]float64, n)
	x := make([]float64, n)
	rv := make([]float64, n)
	vars := make([]float64, n)
	var trAR float64
	tol := min(1e-6, 100*sv.tol)
	for cy := range min(p, ny) {
		for cx := range min(p, nx) {
			clear(v)
			for iy := cy; iy < ny; iy += p {
				for ix := cx; ix < nx; ix += p {
					v[iy*nx+ix] = float64(2*int(rng.Uint64()&1) - 1)
				}
			}
			// Start from the preconditioner's solution.
			sv.precond(x, v)
			if err := sv.pcg(x, v, lambda, tol); err != nil {
				return err
			}
			sv.sp.mulVec(rv, v)
			for k := range n {
				if v[k] != 0 {
					vars[k] += v[k] * x[k]
				}
				trAR += rv[k] * x[k]
			}
		}
	}
	inv.Sigma = make([]float64, n)
	for k, s2 := range vars {
		// A probing estimate can come out negative where the neglected
		// covariances dominate; σ is then not estimated.
		if s2 > 0 {
			inv.Sigma[k] = math.Sqrt(s2)
		} else {
			inv.Sigma[k] = math.NaN()
		}
	}
	inv.Neff = float64(n) - lambda*trAR
	return nil
}
