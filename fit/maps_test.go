package fit

import (
	"context"
	"image/png"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/plot/vg"

	"deflect/plots"
)

// pngSize decodes the PNG header of path.
func pngSize(t *testing.T, path string) (w, h int) {
	t.Helper()
	f, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	cfg, err := png.DecodeConfig(f)
	if err != nil {
		t.Fatalf("%s: %v", path, err)
	}
	return cfg.Width, cfg.Height
}

// pixels is the PNG size of a length at plots.DPI (vgimg rounds to the
// nearest pixel).
func pixels(l vg.Length) int { return int(float64(l)/72*plots.DPI + 0.5) }

// TestRunFiguresMCMC runs a short ensemble fit and checks every figure
// the run writes: trace and autocorrelation from the chain, the
// visibility and magnification figures at their natural pixel size.
func TestRunFiguresMCMC(t *testing.T) {
	m, dir := newTiny(t)
	m.Fit.MaxSteps, m.Fit.Walkers = 40, 8
	out := filepath.Join(dir, "mc")
	r, err := Run(context.Background(), m, RunOptions{Method: "mcmc", OutDir: out, DerivedSamples: -1})
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range []string{"trace.png", "autocorr.png", "sim-vis.png", "magnification.png", "sim-dirty.png", "source-plane.png", "corner.png"} {
		if _, err := os.Stat(filepath.Join(out, f)); err != nil {
			t.Errorf("missing figure: %v", err)
		}
		if !strings.Contains(strings.Join(r.Files, " "), f) {
			t.Errorf("%s not listed in Files %q", f, r.Files)
		}
	}
	for _, n := range r.Notes {
		if strings.HasPrefix(n, "no ") {
			t.Errorf("note: %s", n)
		}
	}
	// Expected sizes: the figures drawn again from the same inputs.
	vis, k, err := r.Like.visibilityRows(r.BestEval, 0, maxVisRows)
	if err != nil || k != 1 {
		t.Fatalf("visibility rows: k = %d, %v", k, err)
	}
	vf, err := plots.VisibilityFigure(vis)
	if err != nil {
		t.Fatal(err)
	}
	mf, err := plots.MagnificationFigure(plots.MagnificationMap{Mu: r.Like.magnificationMap(r.BestEval)})
	if err != nil {
		t.Fatal(err)
	}
	for name, f := range map[string]*plots.Figure{"sim-vis.png": vf, "magnification.png": mf} {
		fw, fh := f.Size()
		if w, h := pngSize(t, filepath.Join(out, name)); w != pixels(fw) || h != pixels(fh) {
			t.Errorf("%s is %d×%d px, want %d×%d", name, w, h, pixels(fw), pixels(fh))
		}
	}
}

// TestVisibilityRowsChi2 checks the model visibilities of the visibility
// figure: at the simulation's truth, Σ w |d − V|² over the rows is the
// likelihood's χ² of the compressed data (the compression is exact;
// tolerance 1e-4 relative for the NUFFT at 1e-7), and its mean per real
// datum is ≈ 1 for data simulated with the stated noise (common practice:
// χ²/N = 1 ± √(2/N)).
func TestVisibilityRowsChi2(t *testing.T) {
	m, dir := newTiny(t)
	l, err := NewLikelihood(m, LikelihoodOptions{CacheDir: filepath.Join(dir, "cache")})
	if err != nil {
		t.Fatal(err)
	}
	ev, err := l.Evaluate(m.Start())
	if err != nil {
		t.Fatal(err)
	}
	vis, k, err := l.visibilityRows(ev, 0, maxVisRows)
	if err != nil {
		t.Fatal(err)
	}
	if k != 1 || len(vis.U) != l.Datasets[0].Visibilities {
		t.Fatalf("k = %d, %d rows, want 1 and %d", k, len(vis.U), l.Datasets[0].Visibilities)
	}
	chi2 := 0.0
	for j := range vis.U {
		dr, di := vis.Re[j]-vis.ModelRe[j], vis.Im[j]-vis.ModelIm[j]
		chi2 += vis.Weight[j] * (dr*dr + di*di)
	}
	de := ev.Datasets[0]
	want := de.Chi2 / (de.NoiseScale * de.NoiseScale)
	if math.Abs(chi2-want) > 1e-4*want {
		t.Errorf("Σ w|d − V|² = %.6g, likelihood χ² %.6g", chi2, want)
	}
	n := 2 * float64(len(vis.U))
	if red := chi2 / n; math.Abs(red-1) > 5*math.Sqrt(2/n) {
		t.Errorf("χ²/N = %.4g over %g data, want 1 ± %.3g", red, n, 5*math.Sqrt(2/n))
	}
}

// TestRunFigureFormatSVG writes every figure as SVG with Format "svg".
func TestRunFigureFormatSVG(t *testing.T) {
	m, dir := newTiny(t)
	out := filepath.Join(dir, "svg")
	r, err := Run(context.Background(), m, RunOptions{Method: "optimize", OutDir: out, Format: "svg", DerivedSamples: -1,
		Likelihood: LikelihoodOptions{CacheDir: filepath.Join(dir, "cache")}})
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range []string{"sim-dirty.svg", "sim-vis.svg", "magnification.svg", "source-plane.svg"} {
		b, err := os.ReadFile(filepath.Join(out, f))
		if err != nil {
			t.Errorf("missing figure: %v", err)
			continue
		}
		if !strings.Contains(string(b[:min(len(b), 512)]), "<svg") {
			t.Errorf("%s does not start as SVG", f)
		}
	}
	for _, f := range r.Files {
		if strings.HasSuffix(f, ".png") {
			t.Errorf("%s written as PNG with Format svg", f)
		}
	}
	if _, err := Run(context.Background(), m, RunOptions{Method: "optimize", Format: "gif"}); err == nil || !strings.Contains(err.Error(), "gif") {
		t.Errorf("Format gif: err = %v", err)
	}
}

// TestVisibilityRowsThinned caps the rows: every k-th row is kept, the
// first included, and its model is the full table's model at that row.
func TestVisibilityRowsThinned(t *testing.T) {
	m, dir := newTiny(t)
	l, err := NewLikelihood(m, LikelihoodOptions{CacheDir: filepath.Join(dir, "cache")})
	if err != nil {
		t.Fatal(err)
	}
	ev, err := l.Evaluate(m.Start())
	if err != nil {
		t.Fatal(err)
	}
	all, _, err := l.visibilityRows(ev, 0, maxVisRows)
	if err != nil {
		t.Fatal(err)
	}
	n := len(all.U)
	limit := n / 3
	sub, k, err := l.visibilityRows(ev, 0, limit)
	if err != nil {
		t.Fatal(err)
	}
	if want := (n + limit - 1) / limit; k != want || len(sub.U) != (n+k-1)/k {
		t.Fatalf("cap %d of %d rows: k = %d (want %d), %d rows kept (want %d)", limit, n, k, want, len(sub.U), (n+k-1)/k)
	}
	for j := range sub.U {
		a := j * k
		if sub.U[j] != all.U[a] || sub.Re[j] != all.Re[a] || math.Abs(sub.ModelRe[j]-all.ModelRe[a]) > 1e-6*math.Abs(all.ModelRe[0]) {
			t.Fatalf("kept row %d is not row %d of the table", j, a)
		}
	}
}

// TestSourcePlaneSigma checks that a pixelated source's σ map reaches the
// source plane in the same orientation as its brightness (east left:
// node i of a row is drawn at column N−1−i): with σ set equal to the
// reconstruction, the two maps must agree pixel for pixel.
func TestSourcePlaneSigma(t *testing.T) {
	dir := t.TempDir()
	writeSimDoc(t, dir, tinyModel, gridOf(32, 0.08), tinySim)
	mp := filepath.Join(dir, "pixels.toml")
	writeFile(t, mp, pixelModel)
	m, err := ReadModel(mp)
	if err != nil {
		t.Fatal(err)
	}
	l, err := NewLikelihood(m, LikelihoodOptions{})
	if err != nil {
		t.Fatal(err)
	}
	ev, err := l.Evaluate([]float64{0.7})
	if err != nil {
		t.Fatal(err)
	}
	sp, err := SourcePlaneOf(ev)
	if err != nil {
		t.Fatal(err)
	}
	if ev.Pixels.Sigma == nil && sp.Sigma != nil {
		t.Errorf("σ map without an inversion σ")
	}
	ev.Pixels.Sigma = append([]float64(nil), ev.Pixels.Source...)
	sp, err = SourcePlaneOf(ev)
	if err != nil {
		t.Fatal(err)
	}
	if len(sp.Sigma) != len(sp.Brightness) {
		t.Fatalf("σ map of %d pixels, brightness %d", len(sp.Sigma), len(sp.Brightness))
	}
	for k := range sp.Sigma {
		if sp.Sigma[k] != sp.Brightness[k] {
			t.Fatalf("pixel %d: σ %g, brightness %g", k, sp.Sigma[k], sp.Brightness[k])
		}
	}
}
