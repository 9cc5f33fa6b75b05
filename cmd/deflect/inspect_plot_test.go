package main

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"deflect/plots"
	"deflect/uv"
)

// "deflect inspect --plots DIR" writes the coverage figure of all tables
// (column width square) and two visibility figures per table (page width,
// 2.4 in plus the title band), refuses a non-empty DIR without --force,
// and keeps stdout pure JSON with --json.
func TestInspectPlots(t *testing.T) {
	tables := filepath.Join("..", "..", "testdata", "tables")
	a, b := filepath.Join(tables, "example.csv"), filepath.Join(tables, "example-klambda.txt")
	dir := filepath.Join(t.TempDir(), "figs")
	var so, se bytes.Buffer
	args := []string{"inspect", a, b, "--plots", dir}
	if code := runMain(args, &so, &se); code != 0 {
		t.Fatalf("exit %d: %s", code, se.String())
	}
	entries, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, e := range entries {
		names = append(names, e.Name())
	}
	if len(names) != 5 {
		t.Errorf("wrote %v, want the coverage and 2 × 2 visibility figures", names)
	}
	px := func(l float64) int { return int(math.Ceil(l * plots.DPI)) }
	checkPNG(t, filepath.Join(dir, "uv-coverage.png"), px(3.3), px(3.3))
	label := fileLabel("example array, band 6", a, map[string]bool{})
	for _, s := range []string{"reim", "ampphase"} {
		checkPNG(t, filepath.Join(dir, label+".vis-"+s+".png"), px(7), px(2.4+0.22))
	}
	if !strings.Contains(so.String(), "wrote "+filepath.Join(dir, "uv-coverage.png")) {
		t.Errorf("output does not list the coverage figure:\n%s", so.String())
	}

	// Refused without --force (the directory is not empty), then replaced
	// with it, as SVG, with the JSON summary alone on stdout.
	if code := runMain(args, &so, &se); code != 1 {
		t.Errorf("rerun without --force: exit %d, want 1", code)
	}
	so.Reset()
	se.Reset()
	args = append(args, "--force", "--format", "svg", "--json")
	if code := runMain(args, &so, &se); code != 0 {
		t.Fatalf("--force --format svg: exit %d: %s", code, se.String())
	}
	var sums []uv.Summary
	if err := json.Unmarshal(so.Bytes(), &sums); err != nil || len(sums) != 2 {
		t.Errorf("--json stdout with --plots: %v (%d summaries)", err, len(sums))
	}
	if b, err := os.ReadFile(filepath.Join(dir, "uv-coverage.svg")); err != nil || !bytes.Contains(b, []byte("<svg")) {
		t.Errorf("svg coverage figure: %v", err)
	}
	if !strings.Contains(se.String(), "wrote ") {
		t.Errorf("--json: the files written are not listed on stderr: %s", se.String())
	}

	for _, tc := range []struct {
		name string
		args []string
	}{
		{"format without --plots", []string{"inspect", a, "--format", "pdf"}},
		{"force without --plots", []string{"inspect", a, "--force"}},
		{"bad format", []string{"inspect", a, "--plots", filepath.Join(t.TempDir(), "x"), "--format", "jpeg"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if code := runMain(tc.args, &so, &se); code != 2 {
				t.Errorf("exit %d, want 2", code)
			}
		})
	}
}
