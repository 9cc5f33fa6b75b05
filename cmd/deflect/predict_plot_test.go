package main

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"testing"

	"deflect/lensmodel"
	"deflect/plots"
)

// "deflect predict -o DIR" writes the two-plane figure (page width) and
// the magnification map (column width), as PNG by default and as SVG or
// PDF with --format, and refuses to replace them without --force.
func TestPredictFigures(t *testing.T) {
	out := filepath.Join(t.TempDir(), "out")
	args := []string{"--lens", "sie:x=0.2,y=-0.1,theta_e=1.2,q=0.7,pa=30", "--lens", "shear:gamma=0.05,angle=100",
		"--source", "0.05,0.02", "-o", out}
	if _, stderr, code := runPredict(t, args...); code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	px := func(l float64) int { return int(math.Ceil(l * plots.DPI)) }
	checkPNG(t, filepath.Join(out, "predict.png"), px(7), px(3.2))
	checkPNG(t, filepath.Join(out, "magnification.png"), px(3.3), px(2.9))
	if _, _, code := runPredict(t, args...); code != 1 {
		t.Errorf("rerun without --force: exit %d, want 1", code)
	}
	if _, stderr, code := runPredict(t, append(args, "--force", "--format", "svg")...); code != 0 {
		t.Fatalf("--force --format svg: exit %d: %s", code, stderr)
	}
	for _, f := range []string{"predict.svg", "magnification.svg"} {
		if b, err := os.ReadFile(filepath.Join(out, f)); err != nil || !bytes.Contains(b, []byte("<svg")) {
			t.Errorf("%s: %v", f, err)
		}
	}
	if _, _, code := runPredict(t, append(args, "--force", "--format", "gif")...); code != 2 {
		t.Errorf("--format gif: exit %d, want 2", code)
	}
}

// The magnification map of a singular isothermal sphere is
// μ = 1/(1 − θ_E/r) = r/(r − θ_E) at distance r from its centre
// (Schneider, Ehlers & Falco 1992, Gravitational Lenses, sect. 8.1.4),
// pixel by pixel, on a grid centred on the critical curve.
func TestPredictMagnificationMap(t *testing.T) {
	const thetaE, cx, cy = 1.3, 0.4, -0.25
	lens := lensmodel.Lens{lensmodel.SIE{X: cx, Y: cy, ThetaE: thetaE, Q: 1}}
	curves, err := lensmodel.CriticalCurves(lens, lensmodel.CurveOptions{CentreX: cx, CentreY: cy})
	if err != nil {
		t.Fatal(err)
	}
	crit, caus := predictCurves(curves)
	if len(crit) == 0 || len(caus) == 0 {
		t.Fatalf("%d critical curves, %d caustics", len(crit), len(caus))
	}
	r := &predictResult{SourceX: 0.1, SourceY: 0}
	const n = 64
	im := predictMagnificationMap(lens, crit, r, n)
	if im.N != n || len(im.Values) != n*n {
		t.Fatalf("map %d², %d values", im.N, len(im.Values))
	}
	// Centred on the circle r = θ_E about the lens, 1.3 × its diameter.
	if math.Abs(im.X0-cx) > 1e-3 || math.Abs(im.Y0-cy) > 1e-3 || math.Abs(im.Pixel*n-1.3*2*thetaE) > 1e-2 {
		t.Errorf("map centre (%g, %g), width %g; want (%g, %g), %g", im.X0, im.Y0, im.Pixel*n, cx, cy, 2.6*thetaE)
	}
	checked := 0
	for j := range n {
		for i := range n {
			x, y := im.XY(i, j)
			rr := math.Hypot(x-cx, y-cy)
			if rr < 1e-3 || math.Abs(rr-thetaE) < 1e-3 {
				continue
			}
			want := rr / (rr - thetaE)
			if got := im.Values[j*n+i]; math.Abs(got-want) > 1e-9*math.Abs(want) {
				t.Fatalf("pixel (%d, %d) at r = %g: μ = %g, want %g", i, j, rr, got, want)
			}
			checked++
		}
	}
	if checked < n*n-10 {
		t.Errorf("only %d pixels checked", checked)
	}
	// Closed curves end where they start.
	k := 0
	for _, c := range curves {
		if c.Image.Len() < 2 {
			continue
		}
		if p := crit[k]; c.Closed && (p[0] != p[len(p)-1] || len(p) != c.Image.Len()+1) {
			t.Errorf("closed curve %d: %d points, ends %v %v", k, len(p), p[0], p[len(p)-1])
		}
		k++
	}
}
