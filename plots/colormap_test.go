package plots

import (
	"fmt"
	"image/color"
	"math"
	"os/exec"
	"strconv"
	"strings"
	"testing"
)

// lightness returns CIE L* (D65) of an 8-bit sRGB colour, written
// independently of the package's Lab→sRGB code: sRGB decoding and the
// luminance row (0.2126729, 0.7151522, 0.0721750) from IEC 61966-2-1,
// L* = 116 f(Y) − 16 from CIE 15:2004.
func lightness(c color.NRGBA) float64 {
	return lightnessF(float64(c.R)/255, float64(c.G)/255, float64(c.B)/255)
}

// lightnessF is lightness for channels in [0, 1].
func lightnessF(r, g, b float64) float64 {
	dec := func(x float64) float64 {
		if x <= 0.04045 {
			return x / 12.92
		}
		return math.Pow((x+0.055)/1.055, 2.4)
	}
	y := 0.2126729*dec(r) + 0.7151522*dec(g) + 0.0721750*dec(b)
	if y > 216.0/24389 {
		return 116*math.Cbrt(y) - 16
	}
	return 24389.0 / 27 * y
}

func TestViridisMatchesPublishedSamples(t *testing.T) {
	// The ten-step viridis samples (table entries round(255 k/9)), from
	// memory of the published table as listed by the viridisLite R package:
	// tolerance one 8-bit level per channel (viridisLite interpolates the
	// table at k/9 rather than taking the nearest entry).
	want := []uint32{0x440154, 0x482878, 0x3e4a89, 0x31688e, 0x26828e,
		0x1f9e89, 0x35b779, 0x6dcd59, 0xb4de2c, 0xfde725}
	for k, hex := range want {
		t.Run(fmt.Sprintf("t=%d/9", k), func(t *testing.T) {
			got := Viridis.At(float64(k) / 9)
			w := [3]int{int(hex >> 16), int(hex >> 8 & 0xff), int(hex & 0xff)}
			for ch, g := range [3]uint8{got.R, got.G, got.B} {
				if d := int(g) - w[ch]; d < -1 || d > 1 {
					t.Errorf("channel %d = %d, want %d ± 1", ch, g, w[ch])
				}
			}
		})
	}
	// The end entries of the published table, from memory (six decimals
	// as published; tolerance 1e-9, i.e. exact).
	for _, tc := range []struct {
		k   int
		rgb [3]float64
	}{{0, [3]float64{0.267004, 0.004874, 0.329415}}, {255, [3]float64{0.993248, 0.906157, 0.143936}}} {
		for ch, v := range Viridis.rgb[tc.k] {
			if math.Abs(v-tc.rgb[ch]) > 1e-9 {
				t.Errorf("entry %d channel %d = %v, want %v", tc.k, ch, v, tc.rgb[ch])
			}
		}
	}
}

// TestViridisMatchesMatplotlib compares the table with the one matplotlib
// ships (_cm_listed._viridis_data, six decimals, exact match wanted),
// when /usr/bin/python3 imports matplotlib (Debian python3-matplotlib);
// it is skipped otherwise.
func TestViridisMatchesMatplotlib(t *testing.T) {
	const py = "/usr/bin/python3"
	script := "from matplotlib import _cm_listed as c\nfor r, g, b in c._viridis_data: print(repr(r), repr(g), repr(b))\n"
	out, err := exec.Command(py, "-c", script).Output()
	if err != nil {
		t.Skipf("%s cannot import matplotlib (%v); apt-get install python3-matplotlib to run this check", py, err)
	}
	lines := strings.Split(strings.TrimSpace(string(out)), "\n")
	if len(lines) != 256 {
		t.Fatalf("matplotlib listed %d viridis entries, want 256", len(lines))
	}
	for k, l := range lines {
		f := strings.Fields(l)
		if len(f) != 3 {
			t.Fatalf("matplotlib line %d: %q", k+1, l)
		}
		for ch, s := range f {
			v, err := strconv.ParseFloat(s, 64)
			if err != nil {
				t.Fatalf("matplotlib line %d: %v", k+1, err)
			}
			if got := Viridis.rgb[k][ch]; got != v {
				t.Errorf("entry %d channel %d = %v, matplotlib %v", k, ch, got, v)
			}
		}
	}
}

func TestColorMapLightness(t *testing.T) {
	t.Run("viridis strictly increasing", func(t *testing.T) {
		prev, prev8 := -1.0, -1.0
		for k, c := range Viridis.rgb {
			l := lightnessF(c[0], c[1], c[2])
			if l <= prev {
				t.Fatalf("L*[%d] = %.3f not above L*[%d] = %.3f", k, l, k-1, prev)
			}
			prev = l
			// 8-bit entries: one green step moves L* by ≈ 0.3, so allow
			// that much backlash and no more.
			l8 := lightness(Viridis.table[k])
			if l8 < prev8-0.35 {
				t.Errorf("8-bit L*[%d] = %.3f drops below L*[%d] = %.3f by more than quantisation", k, l8, k-1, prev8)
			}
			prev8 = l8
		}
		// Published viridis runs from L* ≈ 16 to ≈ 92 (van der Walt & Smith
		// 2015, fig. of lightness): tolerance 3.
		if l0, l1 := lightness(Viridis.table[0]), lightness(Viridis.table[255]); math.Abs(l0-16) > 3 || math.Abs(l1-92) > 3 {
			t.Errorf("L* range %.1f…%.1f, want ≈16…92", l0, l1)
		}
	})
	t.Run("diverging symmetric and monotone", func(t *testing.T) {
		// Entries k and 255−k lie at t and 1 − t, so their L* must agree to
		// the published matrices' 7-digit rounding (1e-4) before quantisation.
		L := func(k int) float64 { c := Diverging.rgb[k]; return lightnessF(c[0], c[1], c[2]) }
		for k := range 128 {
			lo, hi := L(k), L(255-k)
			if math.Abs(lo-hi) > 1e-4 {
				t.Errorf("L*[%d] = %.6f, L*[%d] = %.6f: not symmetric", k, lo, 255-k, hi)
			}
			if k > 0 {
				if prev := L(k - 1); lo <= prev {
					t.Errorf("L* not increasing toward the centre at %d: %.2f after %.2f", k, lo, prev)
				}
			}
		}
		mid := Diverging.At(0.5)
		if lightness(mid) < 99 {
			t.Errorf("centre colour %v is not white", mid)
		}
		neg, pos := Diverging.At(0), Diverging.At(1)
		if !(neg.B > neg.R && pos.R > pos.B) {
			t.Errorf("ends %v, %v: want blue for negative, red for positive", neg, pos)
		}
	})
}

func TestColorMapAt(t *testing.T) {
	for _, tc := range []struct {
		name string
		t    float64
		want color.NRGBA
	}{
		{"below saturates", -3, Viridis.table[0]},
		{"above saturates", 7, Viridis.table[255]},
		{"NaN", math.NaN(), NaNColor},
		{"+Inf", math.Inf(1), Viridis.table[255]},
		{"-Inf", math.Inf(-1), Viridis.table[0]},
		{"middle", 0.5, Viridis.table[128]},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if got := Viridis.At(tc.t); got != tc.want {
				t.Errorf("At(%v) = %v, want %v", tc.t, got, tc.want)
			}
		})
	}
}
