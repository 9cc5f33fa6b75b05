package main

import (
	"bytes"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"deflect/uv"
)

// writeFitCase writes a table of a 2 mJy point-like Gaussian seen through
// a weak lens (simulated as a plain point at the phase centre: the fit
// need not be good, only run) and a model file with two free parameters.
func writeFitCase(t *testing.T, dir, name string, thetaE string) string {
	t.Helper()
	rnd := rand.New(rand.NewPCG(1, 1))
	d := &uv.Dataset{Meta: uv.Meta{Label: "arr", Freq: 230e9, Dish: 12}}
	for range 400 {
		r, phi := 3e5*math.Sqrt(rnd.Float64()), 2*math.Pi*rnd.Float64()
		d.U = append(d.U, r*math.Cos(phi))
		d.V = append(d.V, r*math.Sin(phi))
	}
	vis := uv.PredictPoints(nil, d.U, d.V, uv.PrimaryBeam{}, []float64{0}, []float64{0}, []float64{2e-3})
	for k := range vis {
		d.Re = append(d.Re, real(vis[k])+1e-3*rnd.NormFloat64())
		d.Im = append(d.Im, imag(vis[k])+1e-3*rnd.NormFloat64())
		d.Weight = append(d.Weight, 1e6)
	}
	if _, err := os.Stat(filepath.Join(dir, "arr.csv")); err != nil {
		if err := uv.WriteTableFile(filepath.Join(dir, "arr.csv"), false, d); err != nil {
			t.Fatal(err)
		}
	}
	model := `[sky]
pixel = 0.1
size = 32
[[data]]
file = "arr.csv"
[[lens]]
kind = "sie"
theta_e = ` + thetaE + `
[[source]]
kind = "gaussian"
flux = {start = 2.0, min = 0.5, max = 5.0}
fwhm = {start = 0.3, min = 0.1, max = 1.0}
[fit]
method = "optimize"
starts = 1
`
	path := filepath.Join(dir, name)
	if err := os.WriteFile(path, []byte(model), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

func TestFitAndCompareCommands(t *testing.T) {
	dir := t.TempDir()
	ma := writeFitCase(t, dir, "a.toml", "0.05")
	mb := writeFitCase(t, dir, "b.toml", "{start = 0.05, min = 0.01, max = 0.2}")
	cache := filepath.Join(dir, "cache")
	for _, c := range []struct{ model, out string }{{ma, "fa"}, {mb, "fb"}} {
		var out, errb bytes.Buffer
		args := []string{"fit", c.model, "-o", filepath.Join(dir, c.out), "--cache", cache, "--quiet"}
		if code := runMain(args, &out, &errb); code != 0 {
			t.Fatalf("deflect %v: exit %d: %s", args, code, errb.String())
		}
		if !strings.Contains(out.String(), "Fit quality") {
			t.Errorf("fit output lacks the summary:\n%s", out.String())
		}
	}
	// A second fit into the same directory is refused (exit 1).
	var out, errb bytes.Buffer
	if code := runMain([]string{"fit", ma, "-o", filepath.Join(dir, "fa"), "--cache", cache}, &out, &errb); code != 1 || !strings.Contains(errb.String(), "not empty") {
		t.Errorf("fit into a non-empty directory: exit %d, stderr %q", code, errb.String())
	}
	out.Reset()
	if code := runMain([]string{"compare", filepath.Join(dir, "fa"), filepath.Join(dir, "fb")}, &out, &errb); code != 0 {
		t.Fatalf("compare: exit %d: %s", code, errb.String())
	}
	for _, want := range []string{"ln B    = — (needs nested", "ΔBIC", "Kass & Raftery", "depends on the priors"} {
		if !strings.Contains(out.String(), want) {
			t.Errorf("compare output lacks %q:\n%s", want, out.String())
		}
	}
}

func TestFitHelpKinds(t *testing.T) {
	var out, errb bytes.Buffer
	if code := runMain([]string{"fit", "-h", "kinds"}, &out, &errb); code != 0 || !strings.Contains(out.String(), `kind = "sie"`) {
		t.Errorf("fit -h kinds: exit %d, output %q", code, out.String())
	}
	out.Reset()
	if code := runMain([]string{"fit", "-h"}, &out, &errb); code != 0 || !strings.Contains(out.String(), "usage: deflect fit") {
		t.Errorf("fit -h: exit %d, output %q", code, out.String())
	}
	if code := runMain([]string{"fit", "a.toml"}, &out, &errb); code != 2 {
		t.Errorf("fit without -o: exit %d, want 2", code)
	}
}
