package fit

import (
	"bytes"
	"context"
	"math/rand/v2"
	"os"
	"strings"
	"testing"
)

// recorder is a Progress keeping every report.
type recorder struct{ reports []Report }

func (r *recorder) Update(rep Report) { r.reports = append(r.reports, rep) }

func TestProgressReports(t *testing.T) {
	rnd := rand.New(rand.NewPCG(3, 1))
	g := newGaussian(2, rnd, false)
	p := g.problem(g.box(6, 0))
	var mc, ns, op recorder
	if _, err := Ensemble(context.Background(), p, EnsembleSettings{Seed: 1, MaxSteps: 200, Progress: &mc}); err != nil {
		t.Fatal(err)
	}
	if _, err := Nested(context.Background(), p, NestedSettings{Seed: 1, Progress: &ns}); err != nil {
		t.Fatal(err)
	}
	if _, err := Optimize(context.Background(), p, OptimizeSettings{Progress: &op}, rand.New(rand.NewPCG(1, 1))); err != nil {
		t.Fatal(err)
	}
	for name, r := range map[string]*recorder{"mcmc": &mc, "nested": &ns, "optimize": &op} {
		if len(r.reports) < 2 {
			t.Fatalf("%s: %d reports", name, len(r.reports))
		}
		last := r.reports[len(r.reports)-1]
		if !last.Final || last.Fraction != 1 || last.Method != name {
			t.Errorf("%s: last report %+v", name, last)
		}
		prev := 0
		for _, rep := range r.reports {
			if rep.Evaluations < prev || rep.Fraction < 0 || rep.Fraction > 1 {
				t.Fatalf("%s: report %+v after %d evaluations", name, rep, prev)
			}
			prev = rep.Evaluations
		}
	}
	if mc.reports[len(mc.reports)-1].Step != 200 || len(mc.reports) != 201 {
		t.Errorf("mcmc: %d reports, last step %d", len(mc.reports), mc.reports[len(mc.reports)-1].Step)
	}
	if last := ns.reports[len(ns.reports)-1]; last.LogZRemain >= 0.01 {
		t.Errorf("nested: final remaining Δln Z %g", last.LogZRemain)
	}
}

func TestProgressBar(t *testing.T) {
	var buf bytes.Buffer
	b := newProgressBar(&buf)
	b.Chi2 = func(ll float64) float64 { return -2 * ll }
	b.Update(Report{Method: "nested", Evaluations: 1234, BestLogLike: -50, LogZ: -12.5, LogZRemain: 0.3, Fraction: 0.5})
	b.Update(Report{Method: "nested", Evaluations: 2000, BestLogLike: -50, LogZ: -12.4, LogZRemain: 0.001, Fraction: 1, Final: true})
	out := buf.String()
	for _, want := range []string{"nested 2000 evals", "best χ² 100", "ln Z -12.400"} {
		if !strings.Contains(out, want) {
			t.Errorf("bar output lacks %q:\n%q", want, out)
		}
	}
	// Not a terminal (a regular file) or quiet: nothing drawn.
	f, err := os.CreateTemp(t.TempDir(), "stderr")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	for _, quiet := range []bool{false, true} {
		nb := NewProgressBar(f, quiet)
		if nb.Enabled() {
			t.Errorf("bar enabled on a regular file (quiet %v)", quiet)
		}
		nb.Update(Report{Method: "mcmc", Final: true})
	}
	if st, _ := f.Stat(); st.Size() != 0 {
		t.Errorf("disabled bar wrote %d bytes", st.Size())
	}
}
