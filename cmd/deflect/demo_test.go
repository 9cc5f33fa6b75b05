package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestDemoRefusesNonEmptyDir(t *testing.T) {
	dir := t.TempDir()
	if err := os.WriteFile(filepath.Join(dir, "x"), []byte("keep"), 0o644); err != nil {
		t.Fatal(err)
	}
	var so, se bytes.Buffer
	if rc := runMain([]string{"demo", "-o", dir}, &so, &se); rc != 1 || !strings.Contains(se.String(), "not empty") {
		t.Errorf("rc %d, stderr %q: want a refusal", rc, se.String())
	}
}

// TestDemo runs the whole demo (about a minute on two cores) and checks
// that its outputs exist and that the probe calls the embedded central
// image, which is there by construction, real.
func TestDemo(t *testing.T) {
	if os.Getenv("DEFLECT_LONG_TESTS") != "1" {
		t.Skip("set DEFLECT_LONG_TESTS=1 to run the whole demo")
	}
	dir := filepath.Join(t.TempDir(), "demo")
	var so, se bytes.Buffer
	if rc := runMain([]string{"demo", "-o", dir}, &so, &se); rc != 0 {
		t.Fatalf("rc %d: %s", rc, se.String())
	}
	t.Log(so.String())
	for _, f := range []string{"data/array-A.csv", "data/array-B.csv", "inspect.txt", "fit-halo.json", "fit-nohalo.json",
		"compare.txt", "probe/probe.json", "probe/probe.png", "summary.txt"} {
		if _, err := os.Stat(filepath.Join(dir, f)); err != nil {
			t.Errorf("missing output: %v", err)
		}
	}
	b, err := os.ReadFile(filepath.Join(dir, "probe", "probe.json"))
	if err != nil {
		t.Fatal(err)
	}
	var res struct {
		Verdict string `json:"verdict"`
		Summary string `json:"summary"`
		Direct  struct {
			SNR float64 `json:"snr"`
		} `json:"direct"`
	}
	if err := json.Unmarshal(b, &res); err != nil {
		t.Fatal(err)
	}
	if res.Verdict != "real" {
		t.Errorf("demo verdict %q: %s", res.Verdict, res.Summary)
	}
}

// BenchmarkDemo times the whole demo, the figure quoted in README (run
// with -benchtime 1x).
func BenchmarkDemo(b *testing.B) {
	for _, quick := range []bool{false, true} {
		name := "full"
		if quick {
			name = "quick"
		}
		b.Run(name, func(b *testing.B) {
			for b.Loop() {
				dir := filepath.Join(b.TempDir(), "demo")
				args := []string{"demo", "-o", dir}
				if quick {
					args = append(args, "--quick")
				}
				var so, se bytes.Buffer
				if rc := runMain(args, &so, &se); rc != 0 {
					b.Fatalf("rc %d: %s", rc, se.String())
				}
			}
		})
	}
}
