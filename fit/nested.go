package fit

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"sort"

	"gonum.org/v1/gonum/mat"
)

// NestedSettings configures Nested. The zero value of every field is its
// documented default.
type NestedSettings struct {
	// Live is the number of live points; zero means max(25 Dim, 100).
	Live int
	// Seed seeds the run's random stream, PCG(Seed, 0); a run is
	// reproducible bit for bit whatever the number of cores.
	Seed uint64
	// Steps is the number of slice-sampling moves (each along a new
	// random direction) from the starting live point to a replacement;
	// zero means 5 Dim. Fewer moves leave replacements correlated with
	// their starting points: with 3 Dim the posterior variances of a
	// correlated 20-D Gaussian came out 6% low.
	Steps int
	// Batch is the number of live points replaced together, their
	// replacements drawn in parallel; zero means 8. It is fixed rather
	// than taken from the number of cores so that results do not
	// depend on the machine. The volume shrinkage of a batch is exact
	// (see Nested), so Batch costs only a little efficiency.
	Batch int
	// Tolerance stops the run when the evidence the live points could
	// still add, Δ ln Z = ln(1 + L_max X / Z), falls below it; zero
	// means 0.01.
	Tolerance float64
	// MaxEvaluations caps the number of likelihood calls; zero means no
	// cap. A run stopped by the cap has status NotConverged; resuming its
	// checkpoint with a larger cap continues it.
	MaxEvaluations int

	// Checkpoint configures checkpoints and resuming.
	Checkpoint Checkpoint
	// Progress, if not nil, receives a report after every batch.
	Progress Progress
}

// NestedResult is the outcome of a nested-sampling run.
type NestedResult struct {
	// Status says whether Δ ln Z fell below the tolerance, the run hit
	// MaxEvaluations, or it was interrupted; in the last two cases the
	// live points are still added, so LogZ is an estimate.
	Status Status
	// LogZ is ln Z, Z = ∫ L(θ) π(θ) dθ, and LogZErr its statistical
	// uncertainty √(H / Live).
	LogZ, LogZErr float64
	// H is the information (Kullback–Leibler divergence of posterior
	// from prior) in nats.
	H float64
	// Live is the number of live points and Iterations the number of
	// dead points before the final live points were added.
	Live, Iterations int
	// Evaluations counts the calls of LogLike.
	Evaluations int
	// Samples are the dead points in order of increasing ln L, then
	// the final live points, Samples[i][dim]; LogLike their ln L and
	// LogWeights their normalised posterior weights ln(w_i L_i / Z),
	// Σ exp(LogWeights) = 1.
	Samples    [][]float64
	LogLike    []float64
	LogWeights []float64
	// Best is the sample of largest ln L, BestLogLike its value.
	Best        []float64
	BestLogLike float64
}

// Weights returns the normalised posterior weights exp(LogWeights).
func (r *NestedResult) Weights() []float64 {
	w := make([]float64, len(r.LogWeights))
	for i, lw := range r.LogWeights {
		w[i] = math.Exp(lw)
	}
	return w
}

// EffectiveSamples returns Kish's effective sample size (Σw)²/Σw² of the
// weighted samples.
func (r *NestedResult) EffectiveSamples() float64 {
	var s, s2 float64
	for _, w := range r.Weights() {
		s += w
		s2 += w * w
	}
	return s * s / s2
}

// EqualWeightSamples resamples the weighted samples into n equally
// weighted ones by systematic resampling (one uniform offset from rnd).
func (r *NestedResult) EqualWeightSamples(n int, rnd *rand.Rand) [][]float64 {
	w := r.Weights()
	out := make([][]float64, 0, n)
	u := rnd.Float64() / float64(n)
	var cum float64
	i := 0
	for j := range n {
		t := u + float64(j)/float64(n)
		for i < len(w)-1 && cum+w[i] < t {
			cum += w[i]
			i++
		}
		out = append(out, r.Samples[i])
	}
	return out
}

// WeightedMeanCov returns the weighted mean and covariance
// Σ w_i (x_i − μ)(x_i − μ)ᵀ / Σ w_i of samples; weights nil means equal
// weights.
func WeightedMeanCov(samples [][]float64, weights []float64) ([]float64, *mat.SymDense) {
	if len(samples) == 0 {
		panic("fit: WeightedMeanCov of no samples")
	}
	dim := len(samples[0])
	mu := make([]float64, dim)
	var sw float64
	for i, x := range samples {
		w := 1.0
		if weights != nil {
			w = weights[i]
		}
		sw += w
		for d, v := range x {
			mu[d] += w * v
		}
	}
	for d := range mu {
		mu[d] /= sw
	}
	cov := mat.NewSymDense(dim, nil)
	for i, x := range samples {
		w := 1.0
		if weights != nil {
			w = weights[i]
		}
		for a := range dim {
			da := x[a] - mu[a]
			for b := a; b < dim; b++ {
				cov.SetSym(a, b, cov.At(a, b)+w*da*(x[b]-mu[b]))
			}
		}
	}
	cov.ScaleSym(1/sw, cov)
	return mu, cov
}

// nestedState is everything a checkpoint holds.
type nestedState struct {
	U, Theta    [][]float64
	LogL        []float64
	DeadTheta   [][]float64
	DeadLogL    []float64
	DeadLogW    []float64 // ln of the prior-volume width w_i
	LogX        float64
	LogZ, H     float64
	Iterations  int
	Evaluations int64
	RNG         []byte
	Done        bool
	Status      Status
}

type nestedConfig struct {
	live, steps, batch int
	seed               uint64
	tol                float64
	maxEvals           int64
}

func (s *NestedSettings) config(p *Problem) (nestedConfig, error) {
	c := nestedConfig{live: s.Live, steps: s.Steps, batch: s.Batch, seed: s.Seed, tol: s.Tolerance, maxEvals: int64(s.MaxEvaluations)}
	if c.live == 0 {
		c.live = max(25*p.Dim, 100)
	}
	if c.steps == 0 {
		c.steps = 5 * p.Dim
	}
	if c.batch == 0 {
		c.batch = 8
	}
	if c.tol == 0 {
		c.tol = 0.01
	}
	switch {
	case c.live < 2*(p.Dim+1):
		return c, fmt.Errorf("fit: %d live points for %d parameters, want ≥ %d", c.live, p.Dim, 2*(p.Dim+1))
	case c.steps < 1 || c.batch < 1 || c.tol < 0 || c.maxEvals < 0:
		return c, errors.New("fit: nested sampling settings must not be negative")
	case c.batch > c.live/4:
		return c, fmt.Errorf("fit: batch of %d for %d live points, want ≤ live/4", c.batch, c.live)
	}
	return c, nil
}

// Nested computes the evidence Z = ∫ L(θ) π(θ) dθ and posterior samples by
// nested sampling (Skilling 2006). Live points are drawn from the prior
// through Prior.Transform of uniform points of the unit hypercube; the
// worst live points are replaced, Batch at a time, by points of higher
// likelihood found by slice sampling in the hypercube.
//
// Shrinkage: removing the k worst of n live points together is the same as
// removing them one at a time with n, n−1, …, n−k+1 live points, each
// shrinking ln X by 1/n on average; the k replacements, drawn from the
// prior above the k-th worst likelihood, restore n points uniform within
// the new contour. At the end the remaining live points are removed the
// same way with n, n−1, …, 1.
//
// Constrained moves: each replacement starts from a randomly chosen
// surviving live point and makes Steps slice-sampling moves (Neal 2003,
// stepping out with width 3 and shrinkage), each along a random direction
// drawn isotropically in coordinates whitened by the live points'
// covariance (Handley et al. 2015), so strongly correlated posteriors cost
// no more than round ones.
//
// The run stops when Δ ln Z = ln(1 + L_max X / Z) < Tolerance (status
// Converged), at MaxEvaluations (NotConverged), or when ctx is cancelled
// (Interrupted, after a checkpoint if configured). LogZErr = √(H / Live)
// (Skilling 2006, §9).
//
// References:
//   - Skilling, J. 2006, Bayesian Analysis 1, 833 (algorithm, §3; the
//     information H and the error of ln Z, §9).
//   - Neal, R. M. 2003, Ann. Stat. 31, 705 (slice sampling; stepping out
//     and shrinkage, §4, Figs. 3 and 5).
//   - Handley, W. J., Hobson, M. P. & Lasenby, A. N. 2015, MNRAS 453,
//     4384 (slice sampling in whitened coordinates for nested sampling).
func Nested(ctx context.Context, p Problem, s NestedSettings) (*NestedResult, error) {
	if err := p.validate(); err != nil {
		return nil, err
	}
	cfg, err := s.config(&p)
	if err != nil {
		return nil, err
	}
	fp := fmt.Sprintf("live=%d seed=%d steps=%d batch=%d", cfg.live, cfg.seed, cfg.steps, cfg.batch)
	cp, err := newCheckpointer(s.Checkpoint, "nested", p.Dim, fp)
	if err != nil {
		return nil, err
	}
	ns := &nested{p: &p, cfg: cfg}
	if s.Checkpoint.Resume {
		if err := cp.load(&ns.st); err != nil {
			return nil, err
		}
		ns.pcg = &rand.PCG{}
		if err := ns.pcg.UnmarshalBinary(ns.st.RNG); err != nil {
			return nil, fmt.Errorf("fit: resume: random state: %w", err)
		}
		if len(ns.st.U) != cfg.live {
			return nil, errors.New("fit: resume: checkpoint live-point count does not match")
		}
		ns.rnd = rand.New(ns.pcg)
		// A run stopped at its cap continues when resumed with a
		// larger (or no) MaxEvaluations.
		if ns.st.Done && ns.st.Status == NotConverged && (cfg.maxEvals == 0 || ns.st.Evaluations < cfg.maxEvals) {
			ns.st.Done = false
		}
	} else if err := ns.init(); err != nil {
		return nil, err
	}
	rep := newReporter(s.Progress)
	for !ns.st.Done {
		if ctx.Err() != nil {
			ns.st.Status = Interrupted
			break
		}
		if err := ns.iterate(); err != nil {
			return nil, err
		}
		remain := ns.remaining()
		switch {
		case remain < cfg.tol:
			ns.st.Done, ns.st.Status = true, Converged
		case cfg.maxEvals > 0 && ns.st.Evaluations >= cfg.maxEvals:
			ns.st.Done, ns.st.Status = true, NotConverged
		}
		rep.update(ns.report(remain, false))
		if cp.due() && !ns.st.Done {
			if err := ns.saveTo(cp); err != nil {
				return nil, err
			}
		}
	}
	if err := ns.saveTo(cp); err != nil {
		return nil, err
	}
	res := ns.result()
	rep.update(ns.report(ns.remaining(), true))
	return res, nil
}

// nested is a running sampler.
type nested struct {
	p   *Problem
	cfg nestedConfig
	st  nestedState
	pcg *rand.PCG
	rnd *rand.Rand
}

func (ns *nested) init() error {
	n, dim := ns.cfg.live, ns.p.Dim
	ns.pcg = rand.NewPCG(ns.cfg.seed, 0)
	ns.rnd = rand.New(ns.pcg)
	ns.st.U = make([][]float64, n)
	ns.st.Theta = make([][]float64, n)
	ns.st.LogL = make([]float64, n)
	for i := range n {
		u := make([]float64, dim)
		for d := range u {
			u[d] = openUnit(ns.rnd)
		}
		ns.st.U[i] = u
		ns.st.Theta[i] = make([]float64, dim)
	}
	errs := make([]error, n)
	parallelFor(n, func(i int) {
		ns.p.Prior.Transform(ns.st.Theta[i], ns.st.U[i])
		ll := ns.p.LogLike(ns.st.Theta[i])
		if math.IsNaN(ll) {
			errs[i] = fmt.Errorf("fit: log-likelihood is NaN at %v", ns.st.Theta[i])
		}
		ns.st.LogL[i] = ll
	})
	ns.st.Evaluations = int64(n)
	ns.st.LogZ = math.Inf(-1)
	return errors.Join(errs...)
}

func (ns *nested) saveTo(cp *checkpointer) error {
	if !cp.enabled() {
		return nil
	}
	b, err := ns.pcg.MarshalBinary()
	if err != nil {
		return err
	}
	ns.st.RNG = b
	return cp.save(&ns.st)
}

// kill records a dead point with n live points at its death and updates
// ln Z and H (Skilling 2006, §9).
func kill(st *nestedState, theta []float64, logL float64, n int) {
	lw := st.LogX + math.Log(-math.Expm1(-1/float64(n)))
	st.LogX -= 1 / float64(n)
	st.DeadTheta = append(st.DeadTheta, theta)
	st.DeadLogL = append(st.DeadLogL, logL)
	st.DeadLogW = append(st.DeadLogW, lw)
	lwl := lw + logL
	if math.IsInf(lwl, -1) {
		return
	}
	z := logAddExp(st.LogZ, lwl)
	h := math.Exp(lwl-z) * logL
	if !math.IsInf(st.LogZ, -1) {
		h += math.Exp(st.LogZ-z) * (st.H + st.LogZ)
	}
	st.H = h - z
	st.LogZ = z
}

func logAddExp(a, b float64) float64 {
	if a < b {
		a, b = b, a
	}
	if math.IsInf(a, -1) {
		return a
	}
	return a + math.Log1p(math.Exp(b-a))
}

// iterate replaces the Batch worst live points.
func (ns *nested) iterate() error {
	n, k, dim := ns.cfg.live, ns.cfg.batch, ns.p.Dim
	order := make([]int, n)
	for i := range order {
		order[i] = i
	}
	// Stable so that ties break by index, deterministically.
	sort.SliceStable(order, func(a, b int) bool { return ns.st.LogL[order[a]] < ns.st.LogL[order[b]] })
	dead := order[:k]
	alive := order[k:]
	lstar := ns.st.LogL[dead[k-1]]
	for j, i := range dead {
		kill(&ns.st, ns.st.Theta[i], ns.st.LogL[i], n-j)
	}
	ns.st.Iterations += k

	chol := liveCholesky(ns.st.U, alive, dim)
	type job struct {
		start int
		s1    uint64
		s2    uint64
	}
	jobs := make([]job, k)
	for j := range jobs {
		jobs[j] = job{start: alive[ns.rnd.IntN(len(alive))], s1: ns.rnd.Uint64(), s2: ns.rnd.Uint64()}
	}
	newU := make([][]float64, k)
	newT := make([][]float64, k)
	newL := make([]float64, k)
	evals := make([]int64, k)
	errs := make([]error, k)
	parallelFor(k, func(j int) {
		rnd := rand.New(rand.NewPCG(jobs[j].s1, jobs[j].s2))
		st := jobs[j].start
		newU[j], newT[j], newL[j], evals[j], errs[j] = ns.slice(rnd, ns.st.U[st], ns.st.Theta[st], ns.st.LogL[st], lstar, chol)
	})
	if err := errors.Join(errs...); err != nil {
		return err
	}
	for j, i := range dead {
		ns.st.U[i], ns.st.Theta[i], ns.st.LogL[i] = newU[j], newT[j], newL[j]
		ns.st.Evaluations += evals[j]
	}
	return nil
}

// liveCholesky returns the lower Cholesky factor of the covariance of the
// live points idx in the unit cube, as a dense row-major dim×dim slice.
func liveCholesky(u [][]float64, idx []int, dim int) []float64 {
	pts := make([][]float64, len(idx))
	for i, j := range idx {
		pts[i] = u[j]
	}
	_, cov := WeightedMeanCov(pts, nil)
	var ch mat.Cholesky
	for jitter := 0.0; ; {
		c := mat.NewSymDense(dim, nil)
		c.CopySym(cov)
		for d := range dim {
			c.SetSym(d, d, c.At(d, d)+jitter)
		}
		if ch.Factorize(c) {
			break
		}
		// Degenerate live points (e.g. a parameter the likelihood
		// pins to a point): regularise with a small isotropic term.
		if jitter == 0 {
			jitter = 1e-12
		} else {
			jitter *= 100
		}
	}
	var l mat.TriDense
	ch.LTo(&l)
	out := make([]float64, dim*dim)
	for i := range dim {
		for j := 0; j <= i; j++ {
			out[i*dim+j] = l.At(i, j)
		}
	}
	return out
}

// sliceWidth is the initial slice interval in whitened units.
const sliceWidth = 3.0

// maxSliceEvals bounds the work of one slice move.
const maxSliceEvals = 1000

// slice makes ns.cfg.steps slice-sampling moves from (u0, θ0) within the
// constraint ln L > lstar.
func (ns *nested) slice(rnd *rand.Rand, u0, theta0 []float64, ll0, lstar float64, chol []float64) (u, theta []float64, ll float64, evals int64, err error) {
	dim := ns.p.Dim
	x := slices.Clone(u0)
	theta = slices.Clone(theta0)
	ll = ll0
	dir := make([]float64, dim)
	nrm := make([]float64, dim)
	xt := make([]float64, dim)
	tt := make([]float64, dim)
	var llt float64
	inside := func(t float64) (bool, error) {
		for d := range xt {
			xt[d] = x[d] + t*dir[d]
			// Open interval: an unbounded prior maps 0 and 1 to ±Inf.
			if !(xt[d] > 0 && xt[d] < 1) {
				return false, nil
			}
		}
		ns.p.Prior.Transform(tt, xt)
		llt = ns.p.LogLike(tt)
		evals++
		if math.IsNaN(llt) {
			return false, fmt.Errorf("fit: log-likelihood is NaN at %v", tt)
		}
		return llt > lstar, nil
	}
	for range ns.cfg.steps {
		var s float64
		for d := range nrm {
			nrm[d] = rnd.NormFloat64()
			s += nrm[d] * nrm[d]
		}
		s = 1 / math.Sqrt(s)
		for i := range dim {
			var v float64
			for j := 0; j <= i; j++ {
				v += chol[i*dim+j] * nrm[j]
			}
			dir[i] = v * s
		}
		left := -rnd.Float64() * sliceWidth
		right := left + sliceWidth
		used := 0
		for ; used < maxSliceEvals; used++ {
			in, err := inside(left)
			if err != nil {
				return nil, nil, 0, evals, err
			}
			if !in {
				break
			}
			left -= sliceWidth
		}
		for ; used < maxSliceEvals; used++ {
			in, err := inside(right)
			if err != nil {
				return nil, nil, 0, evals, err
			}
			if !in {
				break
			}
			right += sliceWidth
		}
		for ; used < maxSliceEvals && right-left > 1e-12; used++ {
			t := left + rnd.Float64()*(right-left)
			in, err := inside(t)
			if err != nil {
				return nil, nil, 0, evals, err
			}
			if in {
				copy(x, xt)
				copy(theta, tt)
				ll = llt
				break
			}
			if t < 0 {
				left = t
			} else {
				right = t
			}
		}
	}
	return x, theta, ll, evals, nil
}

// remaining returns Δ ln Z = ln(1 + L_max X / Z).
func (ns *nested) remaining() float64 {
	lmax := slices.Max(ns.st.LogL)
	if math.IsInf(ns.st.LogZ, -1) {
		return math.Inf(1)
	}
	return math.Log1p(math.Exp(lmax + ns.st.LogX - ns.st.LogZ))
}

func (ns *nested) report(remain float64, final bool) Report {
	r := Report{
		Method:      "nested",
		Step:        ns.st.Iterations,
		Evaluations: int(ns.st.Evaluations),
		BestLogLike: slices.Max(ns.st.LogL),
		LogZ:        ns.st.LogZ,
		LogZRemain:  remain,
		Final:       final,
	}
	// Once the bulk of the posterior is passed the remaining evidence
	// shrinks by e every Live iterations.
	left := float64(ns.cfg.live) * math.Log(math.Max(remain, ns.cfg.tol)/ns.cfg.tol)
	if math.IsInf(left, 1) {
		r.Fraction = 0
	} else {
		it := float64(ns.st.Iterations)
		r.Fraction = it / (it + left)
	}
	if final && ns.st.Status != Interrupted {
		r.Fraction = 1
	}
	return r
}

// result adds the live points to a copy of the dead points and returns
// the evidence and weighted samples.
func (ns *nested) result() *NestedResult {
	st := ns.st
	st.DeadTheta = slices.Clone(st.DeadTheta)
	st.DeadLogL = slices.Clone(st.DeadLogL)
	st.DeadLogW = slices.Clone(st.DeadLogW)
	n := len(st.LogL)
	order := make([]int, n)
	for i := range order {
		order[i] = i
	}
	sort.SliceStable(order, func(a, b int) bool { return st.LogL[order[a]] < st.LogL[order[b]] })
	for j, i := range order {
		kill(&st, st.Theta[i], st.LogL[i], n-j)
	}
	r := &NestedResult{
		Status:      ns.st.Status,
		LogZ:        st.LogZ,
		H:           st.H,
		LogZErr:     math.Sqrt(math.Max(st.H, 0) / float64(n)),
		Live:        n,
		Iterations:  ns.st.Iterations,
		Evaluations: int(st.Evaluations),
		LogLike:     st.DeadLogL,
		LogWeights:  make([]float64, len(st.DeadLogL)),
		BestLogLike: math.Inf(-1),
	}
	r.Samples = make([][]float64, len(st.DeadTheta))
	for i, th := range st.DeadTheta {
		r.Samples[i] = slices.Clone(th)
		r.LogWeights[i] = st.DeadLogW[i] + st.DeadLogL[i] - st.LogZ
		if st.DeadLogL[i] > r.BestLogLike {
			r.BestLogLike = st.DeadLogL[i]
			r.Best = r.Samples[i]
		}
	}
	return r
}
