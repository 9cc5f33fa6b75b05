package uv

import (
	"bytes"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"deflect/internal/pyref"
)

// tablePython returns a python3 that imports astropy, or skips the test
// (fails it when DEFLECT_REQUIRE_ASTROPY=1).
func tablePython(t *testing.T) string {
	t.Helper()
	return pyref.Python(t, "astropy.io.fits", "numpy")
}

func runPython(t *testing.T, py, script string, args ...string) string {
	t.Helper()
	cmd := exec.Command(py, append([]string{"-c", script}, args...)...)
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	if err := cmd.Run(); err != nil {
		t.Fatalf("python: %v\n%s", err, errb.String())
	}
	return out.String()
}

func TestFITSTableReadByAstropy(t *testing.T) {
	// astropy.io.fits (5.x) is an independent FITS implementation: it must
	// find our columns, units and keywords, with every value exact.
	py := tablePython(t)
	d := randomDataset(50, true, 21)
	// Values that need all 17 digits: fitsio alone would write 6.
	d.Meta.Freq, d.Meta.RA, d.Meta.Dec, d.Meta.Dish = 2.3000015625123457e11, 201.36512345678912, -43.019876543210987, 12.345678901234567
	p := filepath.Join(t.TempDir(), "obs.fits")
	if err := WriteTableFile(p, false, d); err != nil {
		t.Fatal(err)
	}
	const script = `
import sys
from astropy.io import fits
with fits.open(sys.argv[1]) as f:
    h = f[1].header
    print(f[1].name, h["LABEL"], repr(h["FREQ"]), repr(h["DISH"]), repr(h["OBSRA"]), repr(h["OBSDEC"]), h["SIGN"], sep="|")
    cols = f[1].columns
    print(",".join(c.name for c in cols))
    print(",".join(c.unit or "" for c in cols))
    data = f[1].data
    for k in (0, 17, 49):
        print(",".join(repr(float(data[c.name][k])) if c.format != "L" else str(int(data[c.name][k])) for c in cols))
`
	lines := strings.Split(strings.TrimSpace(runPython(t, py, script, p)), "\n")
	if len(lines) != 6 {
		t.Fatalf("astropy printed %q", lines)
	}
	m := d.Meta
	hdr := strings.Split(lines[0], "|")
	if len(hdr) != 7 || hdr[0] != "VISIBILITIES" || hdr[1] != m.Label || hdr[6] != "-1" {
		t.Errorf("header %q", lines[0])
	} else {
		for i, want := range []float64{m.Freq, m.Dish, m.RA, m.Dec} {
			if x, err := strconv.ParseFloat(hdr[2+i], 64); err != nil || x != want {
				t.Errorf("keyword %d: astropy reads %q, want %v exactly", i, hdr[2+i], want)
			}
		}
	}
	if lines[1] != "u,v,w,re,im,weight,freq,time,ant1,ant2,spw,chan,flag" {
		t.Errorf("columns %q", lines[1])
	}
	if lines[2] != "lambda,lambda,lambda,Jy,Jy,Jy-2,Hz,s,,,,," {
		t.Errorf("units %q", lines[2])
	}
	for i, k := range []int{0, 17, 49} {
		var want []float64
		want = append(want, d.U[k], d.V[k], d.W[k], d.Re[k], d.Im[k], d.Weight[k], d.FreqAt(k), d.Time[k],
			float64(d.Ant1[k]), float64(d.Ant2[k]), float64(d.Spw[k]), float64(d.Chan[k]))
		if d.Flag[k] {
			want = append(want, 1)
		} else {
			want = append(want, 0)
		}
		for j, f := range strings.Split(lines[3+i], ",") {
			x, err := strconv.ParseFloat(f, 64)
			if err != nil || x != want[j] {
				t.Errorf("row %d column %d: astropy reads %q, want %v", k, j, f, want[j])
			}
		}
	}
}

func TestFITSTableWrittenByAstropy(t *testing.T) {
	// A table written by astropy with other column types (float32 u, v in
	// metres, int32 antennas, upper-case names, sigma) is read with the same
	// conversions as text.
	py := tablePython(t)
	p := filepath.Join(t.TempDir(), "ext.fits")
	const script = `
import sys
import numpy as np
from astropy.io import fits
cols = [
    fits.Column(name="U_M", format="E", array=np.array([1.5, 0.0, -3.25], dtype=np.float32)),
    fits.Column(name="V_M", format="E", array=np.array([2.0, 0.0, 4.0], dtype=np.float32)),
    fits.Column(name="REAL", format="D", array=np.array([0.5, 1.0, -0.25])),
    fits.Column(name="IMAG", format="D", array=np.array([0.125, 0.0, 0.375])),
    fits.Column(name="SIGMA", format="D", array=np.array([0.5, 0.5, 0.25])),
    fits.Column(name="ANT1", format="J", array=np.array([0, 1, 2], dtype=np.int32)),
    fits.Column(name="ANT2", format="J", array=np.array([3, 1, 4], dtype=np.int32)),
    fits.Column(name="FLAG", format="L", array=np.array([False, False, True])),
    fits.Column(name="NOTE", format="8A", array=np.array(["a", "b", "c"])),
]
t = fits.BinTableHDU.from_columns(cols, name="VIS")
t.header["FREQ"] = 299792458000.0
t.header["LABEL"] = "made by astropy"
t.header["SIGN"] = 1
fits.HDUList([fits.PrimaryHDU(), t]).writeto(sys.argv[1])
`
	runPython(t, py, script, p)
	d, rep, err := ReadFile(p, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	// ν = 1000 c: one metre is 1000 λ; sign +1 conjugates; σ → 1/σ².
	if d.Len() != 2 || rep.Autocorrelations != 1 || d.Meta.Label != "made by astropy" {
		t.Fatalf("%d rows, report %+v, meta %+v", d.Len(), rep, d.Meta)
	}
	checks := []struct {
		name      string
		got, want float64
	}{
		{"u", d.U[0], 1500}, {"v", d.V[1], 4000}, {"re", d.Re[1], -0.25}, {"im (conjugated)", d.Im[0], -0.125},
		{"weight", d.Weight[1], 16}, {"ant2", float64(d.Ant2[1]), 4},
	}
	for _, c := range checks {
		if c.got != c.want {
			t.Errorf("%s = %v, want %v", c.name, c.got, c.want)
		}
	}
	if !d.Flagged(1) || d.Flagged(0) || !strings.Contains(strings.Join(rep.Unknown, ","), "NOTE") {
		t.Errorf("flags %v, unknown columns %v", d.Flag, rep.Unknown)
	}
}
