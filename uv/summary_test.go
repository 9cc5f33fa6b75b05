package uv

import (
	"math"
	"strings"
	"testing"
)

func TestSummarize(t *testing.T) {
	// Two baselines of 100 m and 1000 m at ν = c·10⁹ Hz (λ = 1 mm exactly):
	// |uv| = 10⁵ and 10⁶ λ. Common practice: resolution λ/B_max = 10⁻⁶ rad,
	// largest recoverable scale 0.6 λ/B_min = 6·10⁻⁶ rad; primary-beam FWHM
	// 1.13 λ/D for D = 12 m.
	const nu = speedOfLight * 1e3
	text := "# label: sim\n# dish: 12\n# freq: " + fmtG(nu) + "\n" +
		"u_m,v_m,w_m,re,im,weight,flag\n" +
		"60,80,10,1,0,4,0\n" + // 100 m
		"0,1000,-20,1,0,4,0\n" + // 1000 m
		"0,0,0,1,0,4,0\n" + // autocorrelation
		"300,400,5,1,0,0,1\n" + // flagged, weight 0 allowed
		"1,2,3,4,bad,0\n" // skipped
	d, rep := mustRead(t, text, ReadOptions{SkipBad: true})
	s := Summarize(d, rep)
	checks := []struct {
		name      string
		got, want float64
	}{
		{"rows", float64(s.Rows), 5},
		{"used", float64(s.Used), 2},
		{"flagged", float64(s.Flagged), 1},
		{"autocorrelations", float64(s.Autocorrelations), 1},
		{"skipped", float64(s.Skipped), 1},
		{"uv min kλ", s.UVMin, 100},
		{"uv max kλ", s.UVMax, 1000},
		{"baseline min m", s.BaselineMin, 100},
		{"baseline max m", s.BaselineMax, 1000},
		{"freq min", s.FreqMin, nu},
		{"resolution", s.Resolution, 1e-6 * ArcsecPerRadian},
		{"largest scale", s.LargestScale, 0.6e-5 * ArcsecPerRadian},
		{"primary beam", s.PrimaryBeam, 1.13 * 1e-3 / 12 * ArcsecPerRadian},
		{"weight sum", s.WeightSum, 8},
		{"weight median", s.WeightMedian, 4},
		// Natural-weighting image noise (Σ w)^−½ (issue 3's definition).
		{"noise", s.Noise, 1 / math.Sqrt(8)},
		// |w|max = 20 m = 2·10⁴ λ; θ = √(0.1/(π |w|max)) rad.
		{"w max", s.WMax, 2e4},
		{"w-term radius", s.WTermRadius, math.Sqrt(0.1/(math.Pi*2e4)) * ArcsecPerRadian},
		// Resolution 0.2063″/5 = 0.04126″, rounded down to 0.04″.
		{"pixel", s.Pixel, 0.04},
	}
	for _, c := range checks {
		closeTo(t, c.name, c.got, c.want, 1e-12)
	}
	// Field: the 19.43″ primary beam at 0.04″ pixels needs 486 pixels;
	// the next even 2^a·3^b·5^c size is 486 = 2·3⁵.
	if s.Field != s.PrimaryBeam || s.GridN != 486 {
		t.Errorf("field %v, grid %d; want the primary beam %v and 486", s.Field, s.GridN, s.PrimaryBeam)
	}
	s.SetField(10)
	if s.GridN != 250 {
		t.Errorf("10″ field at 0.04″: grid %d, want 250", s.GridN)
	}
	ex := strings.Join(s.Excluded, "; ")
	for _, want := range []string{"1 flagged", "1 autocorrelations", "1 bad rows skipped, first at lines [9]"} {
		if !strings.Contains(ex, want) {
			t.Errorf("excluded %q lacks %q", ex, want)
		}
	}
	if s.WeightScale != nil || s.WeightScaleError == "" {
		t.Errorf("two rows: weight scale %+v, want an error saying why none", s.WeightScale)
	}
}

func TestSummarizeWithWeightScale(t *testing.T) {
	d := simulatedObservation(newTestRand(9), 12, 60, 0.001, 2, true)
	s := Summarize(d, nil)
	if s.WeightScale == nil || s.WeightScale.Method != MethodDifferences {
		t.Fatalf("weight scale %+v (%s)", s.WeightScale, s.WeightScaleError)
	}
	closeTo(t, "corrected noise", s.NoiseCorrected, s.Noise/math.Sqrt(s.WeightScale.Factor), 1e-12)
	if s.Used+s.Flagged != d.Len() || s.GridN != 0 {
		t.Errorf("used %d + flagged %d ≠ %d, or grid %d without dish or field", s.Used, s.Flagged, d.Len(), s.GridN)
	}
}

func TestNicePixelAndFFTSize(t *testing.T) {
	for _, tc := range []struct{ x, want float64 }{
		{0.04126, 0.04}, {0.026, 0.025}, {0.099, 0.05}, {0.1, 0.1}, {3.7, 2.5}, {7, 5}, {19.9, 10}, {1.99e-3, 1e-3},
	} {
		closeTo(t, "NicePixel", NicePixel(tc.x), tc.want, 1e-12)
	}
	for _, tc := range []struct{ in, want int }{{0, 2}, {1, 2}, {7, 8}, {250, 250}, {251, 256}, {486, 486}, {1001, 1024}, {1025, 1080}} {
		if got := FFTSize(tc.in); got != tc.want {
			t.Errorf("FFTSize(%d) = %d, want %d", tc.in, got, tc.want)
		}
	}
}
