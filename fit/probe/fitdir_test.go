package probe

import (
	"context"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"deflect/fit"
)

// TestFromFitDir fits a small model with fit.Run (method optimize) into a
// directory and reads it back: the best fit, χ² and BIC agree with the
// run's result, and posterior draws come from posterior.csv.
func TestFromFitDir(t *testing.T) {
	if testing.Short() {
		t.Skip("runs a fit")
	}
	dir := t.TempDir()
	truth := scenario(t, dir, "truth.toml", 0.15, false)
	for _, f := range []string{"a.csv", "b.csv"} {
		os.WriteFile(filepath.Join(dir, f), []byte("u,v,re,im,weight\n1,1,0,0,1\n"), 0o644)
	}
	makeData(t, dir, truth, denseCoverage, 1e4, 3)
	doc, _ := os.ReadFile(truth)
	s := strings.Replace(string(doc), "flux = 10.0", "flux = {start = 9.0, min = 1.0, max = 30.0}", 1)
	s += "\n[fit]\nmethod = \"optimize\"\nstarts = 1\nseed = 1\n"
	path := filepath.Join(dir, "free.toml")
	if err := os.WriteFile(path, []byte(s), 0o644); err != nil {
		t.Fatal(err)
	}
	m, err := fit.ReadModel(path)
	if err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "fit")
	r, err := fit.Run(context.Background(), m, fit.RunOptions{OutDir: out, NoMaps: true, DerivedSamples: -1})
	if err != nil {
		t.Fatal(err)
	}
	mf, err := FromFitDir(out, "free", 1)
	if err != nil {
		t.Fatal(err)
	}
	if len(mf.Theta) != 1 || math.Abs(mf.Theta[0]-r.Best[0]) > 1e-9*math.Abs(r.Best[0]) {
		t.Errorf("best fit %v, run's %v", mf.Theta, r.Best)
	}
	if mf.Chi2 != r.Chi2 || mf.BIC != r.BIC {
		t.Errorf("χ² %g BIC %g, run's %g %g", mf.Chi2, mf.BIC, r.Chi2, r.BIC)
	}
	if len(mf.Samples) != 200 || mf.LogZMethod != "none" || !math.IsNaN(mf.LogZ) {
		t.Errorf("%d samples, ln Z %v by %q", len(mf.Samples), mf.LogZ, mf.LogZMethod)
	}
	if math.Abs(mf.Theta[0]-10) > 0.5 {
		t.Errorf("fitted flux %.3f mJy, truth 10", mf.Theta[0])
	}
}
