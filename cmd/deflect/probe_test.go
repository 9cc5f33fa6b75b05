package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

const probeModel = `[sky]
pixel = 0.05
size = 96

[[data]]
file = "obs.csv"

[[lens]]
kind = "sie"
name = "g"
theta_e = 1.0
q = 0.8
pa = 20.0
core = 0.15

[[source]]
kind = "point"
name = "s"
x = 0.05
y = 0.03
flux = 1.0
`

// TestProbeCommand simulates a table with "deflect simulate", probes it with
// "deflect probe" and checks the outputs and the refusal to overwrite.
func TestProbeCommand(t *testing.T) {
	dir := t.TempDir()
	model := filepath.Join(dir, "m.toml")
	obs := filepath.Join(dir, "obs.csv")
	if err := os.WriteFile(model, []byte(probeModel), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(obs, []byte("u,v,re,im,weight\n1,1,0,0,1\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	arr := filepath.Join("..", "..", "testdata", "arrays", "array-a.txt")
	var so, se bytes.Buffer
	if rc := runMain([]string{"simulate", model, "-o", obs, "--force", "--array", arr, "--dec", "-40", "--ha", "-1,1", "--int", "300", "--freq", "150"}, &so, &se); rc != 0 {
		t.Fatalf("simulate rc %d: %s", rc, se.String())
	}
	out := filepath.Join(dir, "probe")
	so.Reset()
	se.Reset()
	args := []string{"probe", model, "--radius", "0.2", "--null", "20", "-o", out}
	if rc := runMain(args, &so, &se); rc != 0 {
		t.Fatalf("probe rc %d: %s", rc, se.String())
	}
	if !strings.Contains(so.String(), "verdict:") {
		t.Errorf("no verdict in the report:\n%s", so.String())
	}
	b, err := os.ReadFile(filepath.Join(out, "probe.json"))
	if err != nil {
		t.Fatal(err)
	}
	var res map[string]any
	if err := json.Unmarshal(b, &res); err != nil {
		t.Fatal(err)
	}
	for _, k := range []string{"direct", "null", "splits", "verdict", "summary", "sidelobe_sigma"} {
		if _, ok := res[k]; !ok {
			t.Errorf("probe.json lacks %q", k)
		}
	}
	if fi, err := os.Stat(filepath.Join(out, "probe.png")); err != nil || fi.Size() < 1000 {
		t.Errorf("probe.png: %v", err)
	}
	if rc := runMain(args, &so, &se); rc != 1 {
		t.Errorf("second run into a non-empty directory: rc %d, want 1", rc)
	}
	// --force rewrites the directory, here with an SVG panel.
	se.Reset()
	svgArgs := append(append([]string{}, args...), "--force", "--format", "svg", "--no-model-test")
	if rc := runMain(svgArgs, &so, &se); rc != 0 {
		t.Fatalf("probe --force --format svg rc %d: %s", rc, se.String())
	}
	if b, err := os.ReadFile(filepath.Join(out, "probe.svg")); err != nil || !bytes.Contains(b, []byte("<svg")) {
		t.Errorf("probe.svg: %v, not an SVG document", err)
	}
	if rc := runMain([]string{"probe", model, "--format", "gif", "-o", filepath.Join(dir, "p2")}, &so, &se); rc != 2 {
		t.Errorf("bad --format: rc %d, want 2", rc)
	}
	if rc := runMain([]string{"probe", model, "--at", "x"}, &so, &se); rc != 2 {
		t.Errorf("bad --at: rc %d, want 2", rc)
	}
}
