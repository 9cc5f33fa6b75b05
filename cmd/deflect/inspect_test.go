package main

import (
	"bytes"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"deflect/uv"
)

func TestInspect(t *testing.T) {
	tables := filepath.Join("..", "..", "testdata", "tables")
	a, b := filepath.Join(tables, "example.csv"), filepath.Join(tables, "example-klambda.txt")
	var out, errb bytes.Buffer
	if code := runMain([]string{"inspect", a, b}, &out, &errb); code != 0 {
		t.Fatalf("exit %d, stderr %s", code, errb.String())
	}
	text := out.String()
	for _, want := range []string{
		"[example array, band 6]", "rows", "1688 read:", "8 autocorrelations (u = v = 0)",
		"phase centre", "RA 150.000000°, Dec -12.500000°", "resolution", "λ/B_max, common practice", "0.6 λ/B_min", "primary beam", "1.13 λ/D, D = 12 m",
		"successive differences", "imaginary scatter on longest baselines", "w-term", "suggested grid",
	} {
		if !strings.Contains(text, want) {
			t.Errorf("output lacks %q:\n%s", want, text)
		}
	}

	out.Reset()
	if code := runMain([]string{"inspect", "--json", a, "--field", "5"}, &out, &errb); code != 0 {
		t.Fatalf("--json: exit %d, stderr %s", code, errb.String())
	}
	var sums []uv.Summary
	if err := json.Unmarshal(out.Bytes(), &sums); err != nil {
		t.Fatalf("--json output is not JSON: %v\n%s", err, out.String())
	}
	s := sums[0]
	// make_tables.py states weights 4× too small.
	if len(sums) != 1 || s.Autocorrelations != 8 || s.WeightScale == nil || s.WeightScale.Factor < 3.5 || s.WeightScale.Factor > 4.5 {
		t.Errorf("JSON summary %+v", s)
	}
	if s.Field != 5 || s.GridN*int(s.Pixel*1e6) < 5e6 {
		t.Errorf("--field 5: field %v, grid %d of %v″", s.Field, s.GridN, s.Pixel)
	}
	if !strings.Contains(out.String(), `"resolution_arcsec"`) {
		t.Errorf("JSON lacks resolution_arcsec")
	}
}

func TestInspectOverrides(t *testing.T) {
	// example-sign.tsv has no dish line: --dish gives the primary beam
	// (1.13 λ/D) and a grid; --freq overrides its 230 GHz.
	p := filepath.Join("..", "..", "testdata", "tables", "example-sign.tsv")
	var out, errb bytes.Buffer
	if code := runMain([]string{"inspect", p, "--json", "--dish", "6", "--freq", "1.15e11"}, &out, &errb); code != 0 {
		t.Fatalf("exit %d: %s", code, errb.String())
	}
	var sums []uv.Summary
	if err := json.Unmarshal(out.Bytes(), &sums); err != nil {
		t.Fatal(err)
	}
	s := sums[0]
	want := 1.13 * 299792458 / 1.15e11 / 6 * uv.ArcsecPerRadian
	if s.Dish != 6 || s.FreqMin != 1.15e11 || s.PrimaryBeam < want*(1-1e-12) || s.PrimaryBeam > want*(1+1e-12) || s.GridN == 0 {
		t.Errorf("dish %v, freq %v, primary beam %v (want %v), grid %d", s.Dish, s.FreqMin, s.PrimaryBeam, want, s.GridN)
	}
	if !strings.Contains(strings.Join(s.Notes, " "), "conjugated") {
		t.Errorf("notes %v lack the conjugation", s.Notes)
	}
}

func TestInspectFailures(t *testing.T) {
	dir := t.TempDir()
	bad := filepath.Join(dir, "obs.csv")
	os.WriteFile(bad, []byte("u,v,re,im,weight\n1,2,3,4,5\n1,2,1.2.3,4,5\n"), 0o644)
	tests := []struct {
		name   string
		args   []string
		code   int
		stderr string
	}{
		{"no file", []string{"inspect"}, 2, "no table given"},
		{"negative field", []string{"inspect", bad, "--field", "-1"}, 2, "--field must be a positive number"},
		{"bad row", []string{"inspect", bad}, 1, `obs.csv:3: column "re": "1.2.3" is not a number`},
		{"missing file", []string{"inspect", filepath.Join(dir, "none.csv")}, 1, "no such file"},
		{"skip bad", []string{"inspect", "--skip-bad", bad}, 0, ""},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			var out, errb bytes.Buffer
			if code := runMain(tc.args, &out, &errb); code != tc.code {
				t.Errorf("exit %d, want %d; stderr %s", code, tc.code, errb.String())
			}
			if !strings.Contains(errb.String(), tc.stderr) {
				t.Errorf("stderr %q lacks %q", errb.String(), tc.stderr)
			}
		})
	}
}

func TestInspectHelpSaysCommonPractice(t *testing.T) {
	var out bytes.Buffer
	runMain([]string{"inspect", "-h"}, &out, &out)
	if !strings.Contains(out.String(), "common practice") || !strings.Contains(out.String(), "√(0.1/(π |w|max))") {
		t.Errorf("help text:\n%s", out.String())
	}
}
