package fit

import (
	"context"
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"deflect/internal/par"
)

// EnsembleSettings configures Ensemble. The zero value of every field is
// its documented default.
type EnsembleSettings struct {
	// Walkers is the number of walkers, even and ≥ 2 Dim + 2; zero means
	// max(4 Dim, 16) rounded up to even.
	Walkers int
	// Seed seeds the walkers' random streams: walker k draws from
	// PCG(Seed, k), so a run is reproducible bit for bit whatever the
	// number of cores.
	Seed uint64
	// Stretch is the scale a of the stretch move; zero means 2.
	Stretch float64

	// MaxSteps caps the chain length; zero means 20000. A run stopped
	// by the cap has status NotConverged; resuming its checkpoint with a
	// larger MaxSteps continues it.
	MaxSteps int
	// TauFactor is the convergence criterion: the run stops when the
	// chain is longer than TauFactor times the largest integrated
	// autocorrelation time; zero means 50.
	TauFactor float64
	// Window is the constant c of the autocorrelation windowing; zero
	// means DefaultAutocorrWindow (5).
	Window float64
	// CheckEvery is the least number of steps between two estimates
	// of τ (the gap grows to a tenth of the chain length, or half the
	// steps still needed by the last estimate); zero means 100.
	CheckEvery int

	// BurnIn is the number of initial steps discarded from Samples;
	// zero means ⌈2 τ_max⌉, at most half the chain.
	BurnIn int
	// Thin keeps every Thin-th step in Samples; zero means
	// max(1, ⌊τ_min / 2⌋).
	Thin int

	// Start, if not nil, is the centre of the initial walker cloud,
	// each walker drawn from a normal of standard deviation StartScale
	// about it (redrawn until inside the prior's support). If nil the
	// walkers are drawn from the prior.
	Start []float64
	// StartScale is the per-parameter standard deviation of the initial
	// cloud; nil means 1% of each parameter's central 68% prior width.
	StartScale []float64

	// Checkpoint configures checkpoints and resuming.
	Checkpoint Checkpoint
	// Progress, if not nil, receives a report after every step.
	Progress Progress
}

// EnsembleResult is the outcome of an ensemble run.
type EnsembleResult struct {
	// Status says whether the chain converged (length > TauFactor τ),
	// stopped at MaxSteps, or was interrupted.
	Status Status
	// Walkers and Steps are the ensemble size and chain length.
	Walkers, Steps int
	// Chain holds the walker positions after each step,
	// Chain[step][walker][dim].
	Chain [][][]float64
	// LogPost and LogLike are ln L + ln π and ln L at each chain
	// position, [step][walker].
	LogPost, LogLike [][]float64
	// AcceptanceFraction is the fraction of accepted moves per walker
	// and Acceptance their mean.
	AcceptanceFraction []float64
	Acceptance         float64
	// Tau is the integrated autocorrelation time of each parameter in
	// steps, estimated from the whole chain; TauReliable is false when
	// the chain was too short for the windowing (Tau is then a lower
	// bound of sorts and should not be trusted).
	Tau         []float64
	TauReliable bool
	// BurnIn and Thin are the values used to make Samples.
	BurnIn, Thin int
	// Samples are the positions after burn-in, every Thin-th step, all
	// walkers, flattened: Samples[i][dim]; SampleLogLike their ln L.
	// The sample slices share memory with Chain.
	Samples       [][]float64
	SampleLogLike []float64
	// Best is the position of largest ln L + ln π met, BestLogPost and
	// BestLogLike its values.
	Best                     []float64
	BestLogPost, BestLogLike float64
	// Evaluations counts the calls of LogLike.
	Evaluations int
}

// ensembleState is everything a checkpoint holds.
type ensembleState struct {
	Step        int
	Pos         [][]float64
	LogPost     []float64
	LogLike     []float64
	Accepted    []int64
	RNG         [][]byte
	Chain       [][][]float64
	ChainLP     [][]float64
	ChainLL     [][]float64
	Evaluations int64
	NextCheck   int
	Tau         []float64
	TauOK       bool
	Done        bool
	Status      Status
}

// ensembleConfig holds the settings with defaults applied.
type ensembleConfig struct {
	walkers    int
	seed       uint64
	a          float64
	maxSteps   int
	tauFactor  float64
	window     float64
	checkEvery int
	burnIn     int
	thin       int
	start      []float64
	startScale []float64
}

func (s *EnsembleSettings) config(p *Problem) (ensembleConfig, error) {
	c := ensembleConfig{
		walkers: s.Walkers, seed: s.Seed, a: s.Stretch, maxSteps: s.MaxSteps,
		tauFactor: s.TauFactor, window: s.Window, checkEvery: s.CheckEvery,
		burnIn: s.BurnIn, thin: s.Thin,
	}
	if c.walkers == 0 {
		c.walkers = max(4*p.Dim, 16)
		c.walkers += c.walkers % 2
	}
	if c.walkers%2 != 0 || c.walkers < 2*p.Dim+2 {
		return c, fmt.Errorf("fit: ensemble of %d walkers for %d parameters, want an even number ≥ %d", c.walkers, p.Dim, 2*p.Dim+2)
	}
	if c.a == 0 {
		c.a = 2
	}
	if !(c.a > 1) {
		return c, fmt.Errorf("fit: stretch scale %g, want > 1", c.a)
	}
	if c.maxSteps == 0 {
		c.maxSteps = 20000
	}
	if c.tauFactor == 0 {
		c.tauFactor = 50
	}
	if c.window == 0 {
		c.window = DefaultAutocorrWindow
	}
	if c.checkEvery == 0 {
		c.checkEvery = 100
	}
	if c.maxSteps < 0 || c.tauFactor < 0 || c.window < 0 || c.checkEvery < 0 || c.burnIn < 0 || c.thin < 0 {
		return c, errors.New("fit: negative ensemble setting")
	}
	if s.Start != nil {
		if len(s.Start) != p.Dim {
			return c, fmt.Errorf("fit: start has %d values for %d parameters", len(s.Start), p.Dim)
		}
		c.start = slices.Clone(s.Start)
		if math.IsInf(p.Prior.LogPdf(c.start), -1) {
			return c, fmt.Errorf("fit: start %v is outside the prior's support", c.start)
		}
		if s.StartScale != nil {
			if len(s.StartScale) != p.Dim {
				return c, fmt.Errorf("fit: start scale has %d values for %d parameters", len(s.StartScale), p.Dim)
			}
			c.startScale = slices.Clone(s.StartScale)
		} else {
			c.startScale = priorWidths(p)
			for i := range c.startScale {
				c.startScale[i] *= 0.01
			}
		}
	}
	return c, nil
}

// priorWidths returns half the central 68% width of each parameter's prior,
// from the Transform along each axis through the prior median.
func priorWidths(p *Problem) []float64 {
	u := make([]float64, p.Dim)
	lo := make([]float64, p.Dim)
	hi := make([]float64, p.Dim)
	w := make([]float64, p.Dim)
	for i := range u {
		u[i] = 0.5
	}
	for i := range w {
		u[i] = 0.158655
		p.Prior.Transform(lo, u)
		u[i] = 0.841345
		p.Prior.Transform(hi, u)
		u[i] = 0.5
		w[i] = math.Abs(hi[i]-lo[i]) / 2
	}
	return w
}

// Ensemble samples the posterior π(θ) L(θ) with the affine-invariant
// ensemble sampler of Goodman & Weare (2010) and its stretch move: walker
// X_k moves to
//
//	Y = X_j + Z (X_k − X_j),  g(z) ∝ 1/√z on [1/a, a],
//
// X_j a random walker of the other half-ensemble, accepted with probability
// min(1, Z^{n−1} p(Y)/p(X_k)) (Goodman & Weare eq. 7). Each half-ensemble
// moves in parallel across GOMAXPROCS goroutines given the other half
// (Foreman-Mackey et al. 2013, §3); every walker has its own random stream,
// so the result does not depend on the number of cores.
//
// Every so often the integrated autocorrelation time τ of each parameter is
// estimated (AutocorrTime); the run stops with status Converged when the
// chain is longer than TauFactor (50) times the largest τ and every
// estimate is reliable, with NotConverged at MaxSteps, and with Interrupted
// when ctx is cancelled (after writing a checkpoint if configured). An
// interrupted run returns its partial chain and a nil error.
//
// References:
//   - Goodman, J. & Weare, J. 2010, Comm. App. Math. Comp. Sci. 5, 65
//     (stretch move, eqs. 7–10; autocorrelation time, §5).
//   - Foreman-Mackey, D., Hogg, D. W., Lang, D. & Goodman, J. 2013,
//     PASP 125, 306 (parallel stretch move, §3, Algorithm 3).
func Ensemble(ctx context.Context, p Problem, s EnsembleSettings) (*EnsembleResult, error) {
	if err := p.validate(); err != nil {
		return nil, err
	}
	cfg, err := s.config(&p)
	if err != nil {
		return nil, err
	}
	fp := fmt.Sprintf("walkers=%d seed=%d stretch=%g", cfg.walkers, cfg.seed, cfg.a)
	cp, err := newCheckpointer(s.Checkpoint, "mcmc", p.Dim, fp)
	if err != nil {
		return nil, err
	}
	e := &ensemble{p: &p, cfg: cfg}
	if s.Checkpoint.Resume {
		if err := cp.load(&e.st); err != nil {
			return nil, err
		}
		if err := e.restoreRNG(); err != nil {
			return nil, err
		}
		// A run stopped at its cap continues when resumed with a
		// larger MaxSteps.
		if e.st.Done && e.st.Status == NotConverged && e.st.Step < cfg.maxSteps {
			e.st.Done = false
		}
	} else if err := e.init(); err != nil {
		return nil, err
	}
	rep := newReporter(s.Progress)
	for !e.st.Done {
		if ctx.Err() != nil {
			e.st.Status = Interrupted
			break
		}
		if err := e.step(); err != nil {
			return nil, err
		}
		e.checkConvergence()
		rep.update(e.report(false))
		if cp.due() && !e.st.Done {
			if err := e.saveTo(cp); err != nil {
				return nil, err
			}
		}
	}
	if err := e.saveTo(cp); err != nil {
		return nil, err
	}
	res := e.result()
	rep.update(e.report(true))
	return res, nil
}

// ensemble is a running sampler.
type ensemble struct {
	p    *Problem
	cfg  ensembleConfig
	st   ensembleState
	pcg  []*rand.PCG
	rnd  []*rand.Rand
	best float64 // largest ln L + ln π in the chain
	// bestLL is the largest ln L in the chain, for progress reports.
	bestLL float64
}

func (e *ensemble) init() error {
	nw, dim := e.cfg.walkers, e.p.Dim
	e.pcg = make([]*rand.PCG, nw)
	e.rnd = make([]*rand.Rand, nw)
	for k := range nw {
		e.pcg[k] = rand.NewPCG(e.cfg.seed, uint64(k))
		e.rnd[k] = rand.New(e.pcg[k])
	}
	e.st.Pos = make([][]float64, nw)
	e.st.LogPost = make([]float64, nw)
	e.st.LogLike = make([]float64, nw)
	e.st.Accepted = make([]int64, nw)
	e.st.NextCheck = e.cfg.checkEvery
	errs := make([]error, nw)
	evals := make([]int64, nw)
	parallelFor(nw, func(k int) {
		x := make([]float64, dim)
		for try := 0; ; try++ {
			if try == 1000 {
				errs[k] = fmt.Errorf("fit: walker %d: no start with finite posterior in 1000 draws", k)
				return
			}
			if e.cfg.start != nil {
				for i := range x {
					x[i] = e.cfg.start[i] + e.cfg.startScale[i]*e.rnd[k].NormFloat64()
				}
			} else {
				e.p.Prior.Sample(x, e.rnd[k])
			}
			lp, ll, called := e.p.logPost(x)
			if called {
				evals[k]++
			}
			if math.IsNaN(ll) {
				errs[k] = fmt.Errorf("fit: log-likelihood is NaN at %v", x)
				return
			}
			if !math.IsInf(lp, -1) {
				e.st.Pos[k], e.st.LogPost[k], e.st.LogLike[k] = x, lp, ll
				return
			}
		}
	})
	for k := range nw {
		e.st.Evaluations += evals[k]
	}
	e.best, e.bestLL = math.Inf(-1), math.Inf(-1)
	return errors.Join(errs...)
}

func (e *ensemble) restoreRNG() error {
	nw := e.cfg.walkers
	if len(e.st.RNG) != nw || len(e.st.Pos) != nw {
		return errors.New("fit: resume: checkpoint walker count does not match")
	}
	e.pcg = make([]*rand.PCG, nw)
	e.rnd = make([]*rand.Rand, nw)
	for k := range nw {
		e.pcg[k] = &rand.PCG{}
		if err := e.pcg[k].UnmarshalBinary(e.st.RNG[k]); err != nil {
			return fmt.Errorf("fit: resume: walker %d random state: %w", k, err)
		}
		e.rnd[k] = rand.New(e.pcg[k])
	}
	e.best = math.Inf(-1)
	for _, lp := range e.st.LogPost {
		e.best = math.Max(e.best, lp)
	}
	e.bestLL = math.Inf(-1)
	for _, row := range e.st.ChainLP {
		for _, lp := range row {
			e.best = math.Max(e.best, lp)
		}
	}
	for _, row := range e.st.ChainLL {
		for _, ll := range row {
			e.bestLL = math.Max(e.bestLL, ll)
		}
	}
	return nil
}

func (e *ensemble) saveTo(cp *checkpointer) error {
	if !cp.enabled() {
		return nil
	}
	e.st.RNG = make([][]byte, len(e.pcg))
	for k, g := range e.pcg {
		b, err := g.MarshalBinary()
		if err != nil {
			return err
		}
		e.st.RNG[k] = b
	}
	return cp.save(&e.st)
}

// step moves both half-ensembles once and appends the positions to the
// chain.
func (e *ensemble) step() error {
	nw, dim := e.cfg.walkers, e.p.Dim
	half := nw / 2
	a := e.cfg.a
	errs := make([]error, nw)
	evals := make([]int64, nw)
	for h := range 2 {
		lo, other := h*half, (1-h)*half
		parallelFor(half, func(i int) {
			k := lo + i
			rnd := e.rnd[k]
			j := other + rnd.IntN(half)
			z := sq((a-1)*rnd.Float64()+1) / a
			y := make([]float64, dim)
			xk, xj := e.st.Pos[k], e.st.Pos[j]
			for d := range y {
				y[d] = xj[d] + z*(xk[d]-xj[d])
			}
			lp, ll, called := e.p.logPost(y)
			if called {
				evals[k]++
			}
			if math.IsNaN(ll) {
				errs[k] = fmt.Errorf("fit: log-likelihood is NaN at %v", y)
				return
			}
			lnr := float64(dim-1)*math.Log(z) + lp - e.st.LogPost[k]
			if math.Log(rnd.Float64()) < lnr {
				e.st.Pos[k], e.st.LogPost[k], e.st.LogLike[k] = y, lp, ll
				e.st.Accepted[k]++
			}
		})
		if err := errors.Join(errs...); err != nil {
			return err
		}
	}
	for k := range nw {
		e.st.Evaluations += evals[k]
	}
	row := make([]float64, nw*dim)
	pos := make([][]float64, nw)
	for k := range nw {
		pos[k] = row[k*dim : (k+1)*dim : (k+1)*dim]
		copy(pos[k], e.st.Pos[k])
		e.best = math.Max(e.best, e.st.LogPost[k])
		e.bestLL = math.Max(e.bestLL, e.st.LogLike[k])
	}
	e.st.Chain = append(e.st.Chain, pos)
	e.st.ChainLP = append(e.st.ChainLP, slices.Clone(e.st.LogPost))
	e.st.ChainLL = append(e.st.ChainLL, slices.Clone(e.st.LogLike))
	e.st.Step++
	return nil
}

// checkConvergence estimates τ on schedule and decides whether to stop.
func (e *ensemble) checkConvergence() {
	n := e.st.Step
	if n >= e.st.NextCheck || n >= e.cfg.maxSteps {
		e.st.Tau, e.st.TauOK = chainTaus(e.st.Chain, 0, e.cfg.window)
		target := e.cfg.tauFactor * slices.Max(e.st.Tau)
		if e.st.TauOK && float64(n) > target {
			e.st.Done, e.st.Status = true, Converged
			return
		}
		// The next estimate comes after CheckEvery steps or a tenth of
		// the chain, or half way to the length the current τ asks for
		// when that is further: τ costs O(n log n) per estimate, and an
		// estimate far short of the target cannot pass.
		gap := max(e.cfg.checkEvery, n/10)
		if e.st.TauOK && !math.IsInf(target, 0) {
			gap = max(gap, int((target-float64(n))/2))
		}
		e.st.NextCheck = n + gap
	}
	if n >= e.cfg.maxSteps {
		e.st.Done, e.st.Status = true, NotConverged
	}
}

func (e *ensemble) acceptance() float64 {
	if e.st.Step == 0 {
		return 0
	}
	var s int64
	for _, a := range e.st.Accepted {
		s += a
	}
	return float64(s) / float64(e.st.Step*e.cfg.walkers)
}

func (e *ensemble) report(final bool) Report {
	r := Report{
		Method:      "mcmc",
		Step:        e.st.Step,
		Evaluations: int(e.st.Evaluations),
		BestLogLike: math.Inf(-1),
		Acceptance:  e.acceptance(),
		Final:       final,
	}
	r.BestLogLike = e.bestLL
	f := float64(e.st.Step) / float64(e.cfg.maxSteps)
	if len(e.st.Tau) > 0 {
		r.Tau = slices.Max(e.st.Tau)
		f = math.Max(f, float64(e.st.Step)/(e.cfg.tauFactor*r.Tau))
	}
	r.Fraction = math.Min(f, 1)
	if final && e.st.Status != Interrupted {
		r.Fraction = 1
	}
	return r
}

// result assembles the EnsembleResult from the state.
func (e *ensemble) result() *EnsembleResult {
	nw, n := e.cfg.walkers, e.st.Step
	r := &EnsembleResult{
		Status:             e.st.Status,
		Walkers:            nw,
		Steps:              n,
		Chain:              e.st.Chain,
		LogPost:            e.st.ChainLP,
		LogLike:            e.st.ChainLL,
		AcceptanceFraction: make([]float64, nw),
		Acceptance:         e.acceptance(),
		Evaluations:        int(e.st.Evaluations),
		BestLogPost:        math.Inf(-1),
		BestLogLike:        math.Inf(-1),
	}
	for k, a := range e.st.Accepted {
		if n > 0 {
			r.AcceptanceFraction[k] = float64(a) / float64(n)
		}
	}
	if n < 2 {
		return r
	}
	if e.st.Tau == nil || len(e.st.Chain) != n || !e.st.Done {
		e.st.Tau, e.st.TauOK = chainTaus(e.st.Chain, 0, e.cfg.window)
	}
	r.Tau, r.TauReliable = slices.Clone(e.st.Tau), e.st.TauOK
	for i, row := range e.st.ChainLP {
		for k, lp := range row {
			if lp > r.BestLogPost {
				r.BestLogPost, r.BestLogLike = lp, e.st.ChainLL[i][k]
				r.Best = e.st.Chain[i][k]
			}
		}
	}
	r.Best = slices.Clone(r.Best)
	r.BurnIn = e.cfg.burnIn
	if r.BurnIn == 0 {
		r.BurnIn = min(int(math.Ceil(2*slices.Max(r.Tau))), n/2)
	}
	r.Thin = e.cfg.thin
	if r.Thin == 0 {
		r.Thin = max(1, int(slices.Min(r.Tau)/2))
	}
	for i := r.BurnIn; i < n; i += r.Thin {
		for k := range nw {
			r.Samples = append(r.Samples, e.st.Chain[i][k])
			r.SampleLogLike = append(r.SampleLogLike, e.st.ChainLL[i][k])
		}
	}
	return r
}

// parallelFor calls f(i) for i in [0, n) on up to GOMAXPROCS goroutines.
// Callers make f's effect independent of scheduling.
func parallelFor(n int, f func(i int)) { par.Items(n, func(_, i int) { f(i) }) }
