package uv

import (
	"fmt"
	"math"
	"slices"
)

// Summary describes a dataset the way an observer sizes up data before
// imaging or fitting: what was read, the frequency and baseline coverage,
// the angular scales it constrains, the weights and a suggested sky grid.
// Angles are in arcsec, frequencies in Hz, baselines in metres.
type Summary struct {
	Label string `json:"label"`
	File  string `json:"file"`
	// PhaseCentre is (RA, Dec) in degrees when the table gave one.
	PhaseCentre *[2]float64 `json:"phase_centre_deg,omitempty"`

	// Rows accounting, as in ReadReport.
	Rows             int      `json:"rows"`
	Used             int      `json:"used"`
	Flagged          int      `json:"flagged"`
	Autocorrelations int      `json:"autocorrelations"`
	Skipped          int      `json:"skipped"`
	SkippedLines     []int    `json:"skipped_lines,omitempty"`
	Excluded         []string `json:"excluded,omitempty"` // why rows are not used, one sentence each
	Notes            []string `json:"notes,omitempty"`

	// FreqMin and FreqMax bound the used rows' frequencies; NumFreqs counts
	// the distinct ones. Zero when the table gave no frequency.
	FreqMin  float64 `json:"freq_min_hz"`
	FreqMax  float64 `json:"freq_max_hz"`
	NumFreqs int     `json:"num_freqs"`

	// UVMin and UVMax bound √(u² + v²) in kλ over the used rows.
	UVMin float64 `json:"uv_min_klambda"`
	UVMax float64 `json:"uv_max_klambda"`
	// BaselineMin and BaselineMax are the shortest and longest projected
	// baselines in metres, |uv|·c/ν row by row (zero without a frequency).
	BaselineMin float64 `json:"baseline_min_m"`
	BaselineMax float64 `json:"baseline_max_m"`

	// Resolution ≈ λ/B_max = 1/|uv|max and LargestScale ≈ 0.6 λ/B_min =
	// 0.6/|uv|min, in arcsec (both common practice, not exact properties of
	// any one image).
	Resolution   float64 `json:"resolution_arcsec"`
	LargestScale float64 `json:"largest_recoverable_scale_arcsec"`

	// Dish is the antenna diameter in metres and PrimaryBeam the FWHM
	// 1.13 λ/D at the lowest frequency (the widest beam), in arcsec; both
	// zero when the dish is unknown.
	Dish        float64 `json:"dish_m"`
	PrimaryBeam float64 `json:"primary_beam_fwhm_arcsec"`

	// Weight statistics over the used rows, Jy⁻². WeightMedian is taken from
	// at most 10⁶ evenly spaced rows.
	WeightMin    float64 `json:"weight_min"`
	WeightMedian float64 `json:"weight_median"`
	WeightMax    float64 `json:"weight_max"`
	WeightSum    float64 `json:"weight_sum"`
	// Noise is the natural-weighting image noise (Σ w)^−½ in Jy/beam from
	// the stated weights; NoiseCorrected uses the weight-scale factor.
	Noise          float64 `json:"noise_jy_per_beam"`
	NoiseCorrected float64 `json:"noise_corrected_jy_per_beam,omitempty"`

	// WeightScale is the estimate from the data's scatter; WeightScaleError
	// says why there is none.
	WeightScale      *WeightScale `json:"weight_scale,omitempty"`
	WeightScaleError string       `json:"weight_scale_error,omitempty"`

	// WMax is the largest |w| in wavelengths and WTermRadius the field
	// radius θ in arcsec at which the neglected w-term phase π|w|θ² reaches
	// 0.1 rad, θ = √(0.1/(π |w|max)); both zero without a w column.
	WMax        float64 `json:"w_max_lambda,omitempty"`
	WTermRadius float64 `json:"w_term_radius_arcsec,omitempty"`

	// Pixel is the suggested pixel size (≤ Resolution/5, rounded down to 1,
	// 2, 2.5, 4 or 5 times a power of ten) and GridN the suggested even,
	// FFT-friendly (2^a·3^b·5^c) grid size covering Field, the primary-beam
	// FWHM or a field given with SetField; GridN is zero when neither is
	// known.
	Pixel float64 `json:"pixel_arcsec"`
	Field float64 `json:"field_arcsec"`
	GridN int     `json:"grid_n"`
}

// Summarize computes the summary of d; rep is its read report (nil when
// the dataset did not come from a file).
func Summarize(d *Dataset, rep *ReadReport) Summary {
	s := Summary{Label: d.Meta.Label, File: d.Meta.Source, Dish: d.Meta.Dish}
	if d.Meta.HasPhaseCentre {
		s.PhaseCentre = &[2]float64{d.Meta.RA, d.Meta.Dec}
	}
	if rep != nil {
		s.File = rep.File
		s.Rows, s.Used, s.Flagged = rep.Rows, rep.Used, rep.Flagged
		s.Autocorrelations, s.Skipped = rep.Autocorrelations, rep.Skipped
		s.SkippedLines = rep.SkippedLines
		s.Notes = rep.Notes
	} else {
		s.Rows = d.Len()
		for k := range d.Len() {
			if d.Flagged(k) {
				s.Flagged++
			}
		}
		s.Used = d.Len() - s.Flagged
	}
	if s.Flagged > 0 {
		s.Excluded = append(s.Excluded, fmt.Sprintf("%d flagged rows (kept in the dataset, left out of fits and images)", s.Flagged))
	}
	if s.Autocorrelations > 0 {
		s.Excluded = append(s.Excluded, fmt.Sprintf("%d autocorrelations (u = v = 0)", s.Autocorrelations))
	}
	if s.Skipped > 0 {
		s.Excluded = append(s.Excluded, fmt.Sprintf("%d bad rows skipped, first at lines %v", s.Skipped, s.SkippedLines))
	}

	uvMin2, uvMax2 := math.Inf(1), 0.0
	bMin, bMax := math.Inf(1), 0.0
	fMin, fMax := math.Inf(1), 0.0
	wMin, wMax, wSum, absW := math.Inf(1), 0.0, 0.0, 0.0
	usedFreq := make(map[float64]bool) // without a freq column: Meta.Freq only
	usedIdx := make([]bool, len(d.Freqs))
	used := 0
	for k := range d.Len() {
		if d.Flagged(k) {
			continue
		}
		used++
		q := d.U[k]*d.U[k] + d.V[k]*d.V[k]
		uvMin2, uvMax2 = math.Min(uvMin2, q), math.Max(uvMax2, q)
		if f := d.FreqAt(k); f > 0 {
			fMin, fMax = math.Min(fMin, f), math.Max(fMax, f)
			b := math.Sqrt(q) * speedOfLight / f
			bMin, bMax = math.Min(bMin, b), math.Max(bMax, b)
			if d.FreqIndex != nil {
				usedIdx[d.FreqIndex[k]] = true
			} else {
				usedFreq[f] = true
			}
		}
		w := d.Weight[k]
		wMin, wMax, wSum = math.Min(wMin, w), math.Max(wMax, w), wSum+w
		if d.W != nil {
			absW = math.Max(absW, math.Abs(d.W[k]))
		}
	}
	if used == 0 {
		s.Notes = append(s.Notes, "no unflagged rows: nothing to summarise")
		return s
	}
	s.UVMin, s.UVMax = math.Sqrt(uvMin2)/1e3, math.Sqrt(uvMax2)/1e3
	s.Resolution = ArcsecPerRadian / math.Sqrt(uvMax2)
	s.LargestScale = 0.6 * ArcsecPerRadian / math.Sqrt(uvMin2)
	if fMax > 0 {
		s.FreqMin, s.FreqMax, s.NumFreqs = fMin, fMax, len(usedFreq)
		for _, u := range usedIdx {
			if u {
				s.NumFreqs++
			}
		}
		s.BaselineMin, s.BaselineMax = bMin, bMax
		if s.Dish > 0 {
			s.PrimaryBeam = NewPrimaryBeam(s.Dish, fMin).FWHM
		}
	}
	s.WeightMin, s.WeightMax, s.WeightSum = wMin, wMax, wSum
	s.WeightMedian = weightMedian(d)
	s.Noise = 1 / math.Sqrt(wSum)
	if ws, err := EstimateWeightScale(d); err == nil {
		s.WeightScale = &ws
		s.NoiseCorrected = s.Noise / math.Sqrt(ws.Factor)
	} else {
		s.WeightScaleError = err.Error()
	}
	if d.W != nil {
		s.WMax = absW
		if absW > 0 {
			s.WTermRadius = WTermRadius(absW)
		}
	}
	s.Pixel = NicePixel(s.Resolution / 5)
	s.SetField(0)
	return s
}

// SetField sets the field the suggested grid covers to field arcsec (a
// full width), or to the primary-beam FWHM when field is zero, and updates
// GridN.
func (s *Summary) SetField(field float64) {
	if field <= 0 {
		field = s.PrimaryBeam
	}
	s.Field = field
	s.GridN = 0
	if field > 0 && s.Pixel > 0 {
		s.GridN = FFTSize(int(math.Ceil(field/s.Pixel - 1e-9)))
	}
}

// WTermRadius returns the field radius θ in arcsec at which the w-term
// phase error π |w| θ² (θ in radians; the small-angle form of
// 2π w (√(1 − l² − m²) − 1)) reaches 0.1 rad for the largest |w| wMax in
// wavelengths:
//
//	θ = √(0.1 / (π |w|max)).
func WTermRadius(wMax float64) float64 {
	return math.Sqrt(0.1/(math.Pi*wMax)) * ArcsecPerRadian
}

// NicePixel rounds x (> 0) down to 1, 2, 2.5, 4 or 5 times a power of ten.
func NicePixel(x float64) float64 {
	if !(x > 0) || math.IsInf(x, 0) {
		return 0
	}
	p := math.Pow(10, math.Floor(math.Log10(x)))
	m := x / p
	for _, c := range []float64{10, 5, 4, 2.5, 2, 1} {
		if m >= c*(1-1e-12) {
			return c * p
		}
	}
	return p
}

// FFTSize returns the smallest even n ≥ max(min, 2) whose only prime
// factors are 2, 3 and 5, sizes for which FFTs are fast.
func FFTSize(min int) int {
	n := max(min, 2)
	if n%2 == 1 {
		n++
	}
	for ; ; n += 2 {
		m := n
		for _, p := range []int{2, 3, 5} {
			for m%p == 0 {
				m /= p
			}
		}
		if m == 1 {
			return n
		}
	}
}

// weightMedian returns the median weight of the unflagged rows of d, from
// at most 10⁶ evenly spaced rows.
func weightMedian(d *Dataset) float64 {
	stride := max(1, d.Len()/1000000)
	var w []float64
	for k := 0; k < d.Len(); k += stride {
		if !d.Flagged(k) {
			w = append(w, d.Weight[k])
		}
	}
	if len(w) == 0 {
		return 0
	}
	return median(slices.Clip(w))
}
