package fit

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// Problem is what the samplers need of a model: the number of free
// parameters, the log-likelihood and the prior. The samplers know nothing of
// lenses; they see only θ, a vector of Dim float64.
type Problem struct {
	// Dim is the number of free parameters.
	Dim int

	// LogLike returns ln L(θ), the natural logarithm of the likelihood,
	// including its normalisation when evidences are to be compared. It
	// may return −Inf for an impossible θ; NaN is an error. LogLike is
	// called from several goroutines at once and must be safe for
	// concurrent use; it must not retain or modify theta.
	LogLike func(theta []float64) float64

	// Prior is the prior distribution of θ.
	Prior Prior
}

// Prior is a prior probability distribution over the parameter space.
type Prior interface {
	// Transform maps a point of the unit hypercube [0, 1]^Dim to
	// parameter space, dst = T(unit), such that T(U) for U uniform on
	// the hypercube is distributed as the prior (nested sampling needs
	// this).
	Transform(dst, unit []float64)

	// LogPdf returns the natural logarithm of the normalised prior
	// density at theta, −Inf outside the support.
	LogPdf(theta []float64) float64

	// Sample fills dst with a random draw from the prior.
	Sample(dst []float64, rnd *rand.Rand)
}

// ParamPrior is the prior of a single parameter. Independent ParamPriors
// make a Prior through Priors.
type ParamPrior interface {
	// Quantile returns the inverse of the cumulative distribution
	// function at p ∈ [0, 1].
	Quantile(p float64) float64

	// LogProb returns the natural logarithm of the normalised density
	// at x, −Inf outside the support.
	LogProb(x float64) float64
}

// Priors is a product of independent one-parameter priors, element i being
// the prior of θ_i. It implements Prior by the inverse-CDF transform of each
// coordinate.
type Priors []ParamPrior

var (
	_ Prior      = Priors{}
	_ ParamPrior = Uniform{}
	_ ParamPrior = Normal{}
	_ ParamPrior = LogUniform{}
)

// Transform sets dst[i] = p[i].Quantile(unit[i]).
func (p Priors) Transform(dst, unit []float64) {
	if len(dst) != len(p) || len(unit) != len(p) {
		panic("fit: Priors.Transform length mismatch")
	}
	for i, pp := range p {
		dst[i] = pp.Quantile(unit[i])
	}
}

// LogPdf returns Σ_i ln p_i(θ_i).
func (p Priors) LogPdf(theta []float64) float64 {
	if len(theta) != len(p) {
		panic("fit: Priors.LogPdf length mismatch")
	}
	var s float64
	for i, pp := range p {
		s += pp.LogProb(theta[i])
		if math.IsInf(s, -1) {
			return s
		}
	}
	return s
}

// Sample draws each coordinate independently by the inverse-CDF method.
func (p Priors) Sample(dst []float64, rnd *rand.Rand) {
	if len(dst) != len(p) {
		panic("fit: Priors.Sample length mismatch")
	}
	for i, pp := range p {
		dst[i] = pp.Quantile(openUnit(rnd))
	}
}

// Validate reports the first element whose parameters are invalid.
func (p Priors) Validate() error {
	for i, pp := range p {
		if v, ok := pp.(interface{ Validate() error }); ok {
			if err := v.Validate(); err != nil {
				return fmt.Errorf("parameter %d: %w", i, err)
			}
		}
	}
	return nil
}

// Uniform is the uniform prior on [Min, Max].
type Uniform struct {
	Min, Max float64
}

// Validate reports whether Min < Max, both finite.
func (u Uniform) Validate() error {
	if !(u.Min < u.Max) || math.IsInf(u.Min, 0) || math.IsInf(u.Max, 0) {
		return fmt.Errorf("uniform prior needs finite min < max, have min = %g, max = %g", u.Min, u.Max)
	}
	return nil
}

// Quantile returns Min + p (Max − Min).
func (u Uniform) Quantile(p float64) float64 {
	return u.Min + p*(u.Max-u.Min)
}

// LogProb returns −ln(Max − Min) inside [Min, Max], −Inf outside.
func (u Uniform) LogProb(x float64) float64 {
	if x < u.Min || x > u.Max || math.IsNaN(x) {
		return math.Inf(-1)
	}
	return -math.Log(u.Max - u.Min)
}

// LogUniform is the prior uniform in ln x on [Min, Max], 0 < Min < Max:
//
//	p(x) = 1 / (x ln(Max/Min)).
type LogUniform struct {
	Min, Max float64
}

// Validate reports whether 0 < Min < Max, both finite.
func (u LogUniform) Validate() error {
	if !(u.Min > 0 && u.Min < u.Max) || math.IsInf(u.Max, 0) {
		return fmt.Errorf("log-uniform prior needs 0 < min < max, have min = %g, max = %g", u.Min, u.Max)
	}
	return nil
}

// Quantile returns Min (Max/Min)^p.
func (u LogUniform) Quantile(p float64) float64 {
	x := math.Exp(math.Log(u.Min) + p*math.Log(u.Max/u.Min))
	// Keep the end points exact despite rounding in exp.
	return math.Min(math.Max(x, u.Min), u.Max)
}

// LogProb returns −ln x − ln ln(Max/Min) inside [Min, Max], −Inf outside.
func (u LogUniform) LogProb(x float64) float64 {
	if x < u.Min || x > u.Max || math.IsNaN(x) {
		return math.Inf(-1)
	}
	return -math.Log(x) - math.Log(math.Log(u.Max/u.Min))
}

// Normal is the normal prior of mean Mean and standard deviation SD,
// truncated to [Min, Max] unless Min and Max are both zero (the zero value
// means untruncated; use ±Inf for a one-sided truncation).
//
// Quantile and LogProb use erfc and its inverse on the side of the mean
// where the truncation lies, so truncations far in a tail (say at 10 SD)
// keep full relative precision.
type Normal struct {
	Mean, SD float64
	Min, Max float64
}

// Validate reports whether SD > 0 and, when truncated, Min < Max with the
// interval carrying non-zero probability in float64.
func (n Normal) Validate() error {
	if !(n.SD > 0) || math.IsInf(n.SD, 0) || math.IsNaN(n.Mean) || math.IsInf(n.Mean, 0) {
		return fmt.Errorf("normal prior needs finite mean and sd > 0, have mean = %g, sd = %g", n.Mean, n.SD)
	}
	if n.truncated() {
		if !(n.Min < n.Max) {
			return fmt.Errorf("truncated normal prior needs min < max, have min = %g, max = %g", n.Min, n.Max)
		}
		if !(n.logMass() > math.Inf(-1)) {
			return fmt.Errorf("truncated normal prior: [%g, %g] holds no probability for mean %g, sd %g", n.Min, n.Max, n.Mean, n.SD)
		}
	}
	return nil
}

func (n Normal) truncated() bool { return n.Min != 0 || n.Max != 0 }

func (n Normal) bounds() (a, b float64) {
	if !n.truncated() {
		return math.Inf(-1), math.Inf(1)
	}
	return (n.Min - n.Mean) / n.SD, (n.Max - n.Mean) / n.SD
}

// phi returns Φ(z) = ½ erfc(−z/√2), accurate in the lower tail.
func phi(z float64) float64 { return 0.5 * math.Erfc(-z/math.Sqrt2) }

// phiC returns 1 − Φ(z) = ½ erfc(z/√2), accurate in the upper tail.
func phiC(z float64) float64 { return 0.5 * math.Erfc(z/math.Sqrt2) }

// upperQuantile returns z with Q(z) = 1 − Φ(z) = s for s ∈ [0, ½]. The
// standard library's Erfcinv is computed as Erfinv(1 − x) and loses all
// precision for small x, so the upper quantile is found by Newton's method
// on ln Q(z), which erfc gives to full relative precision down to
// s ≈ 1e-308, from the rational approximation of Abramowitz & Stegun
// 26.2.23 (absolute error < 4.5e-4).
//
// References:
//   - Abramowitz, M. & Stegun, I. A. 1964, Handbook of Mathematical
//     Functions, NBS AMS 55, eq. 26.2.23.
func upperQuantile(s float64) float64 {
	switch {
	case s <= 0:
		return math.Inf(1)
	case s >= 0.5:
		return 0
	}
	t := math.Sqrt(-2 * math.Log(s))
	z := t - (2.515517+0.802853*t+0.010328*t*t)/(1+1.432788*t+0.189269*t*t+0.001308*t*t*t)
	ls := math.Log(s)
	for range 50 {
		q := phiC(z)
		if q == 0 {
			break
		}
		// f(z) = ln Q(z) − ln s, f'(z) = −φ(z)/Q(z).
		dz := (math.Log(q) - ls) * q / (math.Exp(-0.5*z*z) / math.Sqrt(2*math.Pi))
		z += dz
		if math.Abs(dz) <= 1e-15*math.Max(1, math.Abs(z)) {
			break
		}
	}
	return z
}

// logMass returns ln P(a ≤ Z ≤ b) for the standardised bounds.
func (n Normal) logMass() float64 {
	a, b := n.bounds()
	switch {
	case a > 0:
		return math.Log(phiC(a) - phiC(b))
	case b < 0:
		return math.Log(phi(b) - phi(a))
	default:
		return math.Log1p(-phi(a) - phiC(b))
	}
}

// Quantile returns the inverse CDF of the (truncated) normal. With
// standardised bounds a, b it interpolates both the CDF and the survival
// function,
//
//	q = (1−p) Φ(a) + p Φ(b),  s = (1−p) Q(a) + p Q(b),  Q = 1 − Φ,
//
// and inverts whichever is below ½ with erfcinv, so neither tail loses
// precision.
func (n Normal) Quantile(p float64) float64 {
	a, b := n.bounds()
	q := (1-p)*phi(a) + p*phi(b)
	var z float64
	if q < 0.5 {
		z = -upperQuantile(q)
	} else {
		z = upperQuantile((1-p)*phiC(a) + p*phiC(b))
	}
	x := n.Mean + n.SD*z
	if n.truncated() {
		x = math.Min(math.Max(x, n.Min), n.Max)
	}
	return x
}

// LogProb returns ln p(x): −½z² − ln(SD √(2π)) − ln(mass inside [Min, Max]),
// z = (x − Mean)/SD, and −Inf outside [Min, Max].
func (n Normal) LogProb(x float64) float64 {
	if math.IsNaN(x) {
		return math.Inf(-1)
	}
	lp := -0.5*sq((x-n.Mean)/n.SD) - math.Log(n.SD) - 0.5*math.Log(2*math.Pi)
	if n.truncated() {
		if x < n.Min || x > n.Max {
			return math.Inf(-1)
		}
		lp -= n.logMass()
	}
	return lp
}

func sq(x float64) float64 { return x * x }

// openUnit returns a uniform draw from the open interval (0, 1), so that
// quantiles of unbounded priors stay finite.
func openUnit(rnd *rand.Rand) float64 {
	for {
		if u := rnd.Float64(); u > 0 {
			return u
		}
	}
}

// validate checks p and returns a descriptive error for bad input.
func (p Problem) validate() error {
	if p.Dim < 1 {
		return fmt.Errorf("fit: problem dimension %d, want ≥ 1", p.Dim)
	}
	if p.LogLike == nil {
		return fmt.Errorf("fit: problem has no LogLike")
	}
	if p.Prior == nil {
		return fmt.Errorf("fit: problem has no Prior")
	}
	if ps, ok := p.Prior.(Priors); ok && len(ps) != p.Dim {
		return fmt.Errorf("fit: %d priors for %d parameters", len(ps), p.Dim)
	}
	if v, ok := p.Prior.(interface{ Validate() error }); ok {
		if err := v.Validate(); err != nil {
			return fmt.Errorf("fit: prior: %w", err)
		}
	}
	return nil
}

// logPost returns ln L(θ) + ln π(θ) and the log-likelihood, skipping the
// likelihood outside the prior's support. called reports whether LogLike
// was evaluated.
func (p *Problem) logPost(theta []float64) (lp, ll float64, called bool) {
	pr := p.Prior.LogPdf(theta)
	if math.IsInf(pr, -1) || math.IsNaN(pr) {
		return math.Inf(-1), math.Inf(-1), false
	}
	ll = p.LogLike(theta)
	return ll + pr, ll, true
}

// Status says how a run ended; it is kept apart from the error, which
// reports failures.
type Status int

const (
	// Converged means the run met its stopping criterion.
	Converged Status = iota
	// NotConverged means the run stopped at a cap (steps, iterations or
	// evaluations) before its stopping criterion was met; the results
	// are usable with caution.
	NotConverged
	// Interrupted means the run was cancelled through its context; a
	// checkpoint, if configured, holds its state for resuming.
	Interrupted
)

// String returns "converged", "not converged" or "interrupted".
func (s Status) String() string {
	switch s {
	case Converged:
		return "converged"
	case NotConverged:
		return "not converged"
	case Interrupted:
		return "interrupted"
	}
	return fmt.Sprintf("Status(%d)", int(s))
}
