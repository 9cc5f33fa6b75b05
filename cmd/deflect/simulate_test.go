package main

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"testing"

	"deflect/uv"
)

const simulateModelDoc = `[sky]
pixel = 0.05
size = 64

[[lens]]
kind = "sie"
name = "g"
theta_e = 1.0
q = 0.8

[[source]]
kind = "point"
name = "s"
x = 0.1
y = 0.05
flux = 5.0
`

// TestSimulateArray runs "deflect simulate --array" twice with one seed
// and checks that the tables are identical and carry the metadata and the
// radiometer weights, and that existing files and bad usage are refused.
func TestSimulateArray(t *testing.T) {
	dir := t.TempDir()
	model := filepath.Join(dir, "m.toml")
	if err := os.WriteFile(model, []byte(simulateModelDoc), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(filepath.Join(dir, "placeholder.csv"), []byte("u,v,re,im,weight\n1,1,0,0,1\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	arr := filepath.Join("..", "..", "testdata", "arrays", "tiny.txt")
	var outs [][]byte
	for i := range 2 {
		out := filepath.Join(dir, []string{"a.csv", "b.csv"}[i])
		var so, se bytes.Buffer
		if rc := runMain([]string{"simulate", model, "-o", out, "--array", arr, "--dec", "10", "--ha", "-1,1", "--int", "300", "--freq", "100", "--seed", "4"}, &so, &se); rc != 0 {
			t.Fatalf("rc %d: %s", rc, se.String())
		}
		b, _ := os.ReadFile(out)
		outs = append(outs, b)
	}
	if !bytes.Equal(outs[0], outs[1]) {
		t.Error("same seed, different tables")
	}
	d, _, err := uv.ReadFile(filepath.Join(dir, "a.csv"), uv.ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if d.Meta.Label != "tiny" || d.Meta.Dish != 10 || !d.Meta.HasPhaseCentre || math.Abs(d.Meta.Freq-100e9) > 1 {
		t.Errorf("metadata %+v", d.Meta)
	}
	// Radiometer σ: 500 Jy / √(2 · 2e9 Hz · 300 s · 2 products).
	want := 500 / math.Sqrt(2*2e9*300*2)
	if w := d.Weight[0]; math.Abs(1/math.Sqrt(w)/want-1) > 1e-12 {
		t.Errorf("σ %g, radiometer %g", 1/math.Sqrt(w), want)
	}
	var so, se bytes.Buffer
	if rc := runMain([]string{"simulate", model, "-o", filepath.Join(dir, "a.csv"), "--array", arr}, &so, &se); rc == 0 {
		t.Error("overwrote an existing table without --force")
	}
	if rc := runMain([]string{"simulate", model, "-o", filepath.Join(dir, "c.csv")}, &so, &se); rc != 2 {
		t.Errorf("no --like or --array: rc %d, want 2", rc)
	}
}
