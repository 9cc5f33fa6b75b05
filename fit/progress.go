package fit

import (
	"fmt"
	"io"
	"math"
	"os"
	"strings"
	"sync"
	"time"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"
)

// Report is a snapshot of a run's progress, passed to a Progress after each
// step of a sampler (MCMC step, nested-sampling batch, optimiser start).
// Fields that do not apply to the method are zero.
type Report struct {
	// Method is "optimize", "mcmc" or "nested".
	Method string
	// Step counts MCMC steps, nested-sampling iterations (dead points)
	// or finished optimiser starts.
	Step int
	// Evaluations is the number of log-likelihood calls so far.
	Evaluations int
	// Elapsed is the wall-clock time since the run (or the resumed run)
	// began.
	Elapsed time.Duration
	// BestLogLike is the largest ln L seen so far.
	BestLogLike float64
	// Fraction is the estimated fraction of the run done, in [0, 1]: for
	// MCMC the chain length over the target (50 τ, or the step cap),
	// for nested sampling an estimate from the remaining evidence.
	Fraction float64
	// Acceptance is the MCMC acceptance fraction so far.
	Acceptance float64
	// Tau is the largest integrated autocorrelation time estimated so
	// far (MCMC), in steps; zero before the first estimate.
	Tau float64
	// LogZ is the running evidence estimate ln Z and LogZRemain the
	// estimated ln Z still to come from the live points,
	// ln(1 + L_max X / Z) (nested sampling).
	LogZ, LogZRemain float64
	// Final is true on the last report of a run.
	Final bool
}

// Progress receives reports from a running sampler. Update is called from
// the sampler's goroutine, never concurrently, and should return quickly.
type Progress interface {
	Update(r Report)
}

// ProgressBar is a Progress drawing a one-line bar with
// github.com/schollz/progressbar on a terminal. A ProgressBar made for a
// writer that is not a terminal, or in quiet mode, draws nothing.
type ProgressBar struct {
	// Chi2, when non-nil, converts ln L to the χ² shown on the bar
	// (for a Gaussian likelihood χ² = −2 (ln L − ln norm)); otherwise the
	// bar shows ln L.
	Chi2 func(logLike float64) float64

	mu  sync.Mutex
	w   io.Writer
	bar *progressbar.ProgressBar
}

var _ Progress = (*ProgressBar)(nil)

// progressSteps is the resolution of the bar.
const progressSteps = 1000

// NewProgressBar returns a bar drawing on f (normally os.Stderr). It draws
// nothing when quiet is true or when f is not a terminal, so piping a run's
// output to a file keeps the file clean.
func NewProgressBar(f *os.File, quiet bool) *ProgressBar {
	if quiet || f == nil || !term.IsTerminal(int(f.Fd())) {
		return &ProgressBar{}
	}
	return newProgressBar(f)
}

// newProgressBar draws on any writer; tests use it with a buffer.
func newProgressBar(w io.Writer) *ProgressBar {
	return &ProgressBar{w: w}
}

// Enabled reports whether the bar draws anything.
func (b *ProgressBar) Enabled() bool { return b != nil && b.w != nil }

// Update redraws the bar from r; on the final report it finishes the line.
func (b *ProgressBar) Update(r Report) {
	if !b.Enabled() {
		return
	}
	b.mu.Lock()
	defer b.mu.Unlock()
	if b.bar == nil {
		b.bar = progressbar.NewOptions(progressSteps,
			progressbar.OptionSetWriter(b.w),
			progressbar.OptionSetPredictTime(true),
			progressbar.OptionSetElapsedTime(true),
			progressbar.OptionThrottle(200*time.Millisecond),
			progressbar.OptionSetWidth(20),
			progressbar.OptionShowDescriptionAtLineEnd(),
		)
	}
	b.bar.Describe(b.describe(r))
	f := r.Fraction
	if math.IsNaN(f) || f < 0 {
		f = 0
	}
	b.bar.Set(int(math.Min(f, 1) * progressSteps))
	if r.Final {
		b.bar.Finish()
		fmt.Fprintln(b.w)
	}
}

// describe formats the numbers shown beside the bar.
func (b *ProgressBar) describe(r Report) string {
	var s strings.Builder
	fmt.Fprintf(&s, "%s %d evals", r.Method, r.Evaluations)
	if !math.IsInf(r.BestLogLike, 0) && !math.IsNaN(r.BestLogLike) && r.Evaluations > 0 {
		if b.Chi2 != nil {
			fmt.Fprintf(&s, ", best χ² %.6g", b.Chi2(r.BestLogLike))
		} else {
			fmt.Fprintf(&s, ", best ln L %.6g", r.BestLogLike)
		}
	}
	switch r.Method {
	case "mcmc":
		fmt.Fprintf(&s, ", step %d, acceptance %.2f", r.Step, r.Acceptance)
		if r.Tau > 0 {
			fmt.Fprintf(&s, ", τ %.1f", r.Tau)
		}
	case "nested":
		fmt.Fprintf(&s, ", ln Z %.3f, remaining Δln Z %.3g", r.LogZ, r.LogZRemain)
	case "optimize":
		fmt.Fprintf(&s, ", start %d", r.Step)
	}
	return s.String()
}

// reporter wraps an optional Progress with the run's clock and a throttle,
// so samplers can call it unconditionally.
type reporter struct {
	p     Progress
	start time.Time
}

func newReporter(p Progress) reporter { return reporter{p: p, start: time.Now()} }

func (r *reporter) update(rep Report) {
	if r.p == nil {
		return
	}
	rep.Elapsed = time.Since(r.start)
	r.p.Update(rep)
}
