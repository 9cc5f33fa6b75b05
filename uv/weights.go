package uv

import (
	"errors"
	"math"
	"slices"
	"sort"
)

// Weight-scale estimators, as named in WeightScale.Method.
const (
	MethodDifferences = "successive differences"
	MethodImagScatter = "imaginary scatter on longest baselines"
)

// ErrTooFewSamples is returned by EstimateWeightScale when the data hold
// too few usable rows for either estimator.
var ErrTooFewSamples = errors.New("uv: too few unflagged rows to estimate the noise")

// minWeightSamples is the fewest values an estimate is made from.
const minWeightSamples = 50

// maxWeightRows bounds the rows an estimate uses; beyond it, whole
// baselines (or evenly spaced rows) are taken, so that memory and time stay
// small for 10⁸-row datasets while the statistical error, about
// √(2/(2·10⁶)) = 0.1%, stays negligible.
const maxWeightRows = 1000000

// WeightScale is an estimate, from the scatter of the data themselves, of
// how far a dataset's stated weights are from its true noise.
//
// With stated weights w_k = 1/σ_k² the estimate says the true rms of the
// real and of the imaginary part of row k is SigmaScale·σ_k, so the
// corrected weight is
//
//	w_k,true = Factor · w_k,   Factor = 1/SigmaScale².
type WeightScale struct {
	// Method is MethodDifferences or MethodImagScatter.
	Method string `json:"method"`
	// SigmaScale is the ratio of the true to the stated σ.
	SigmaScale float64 `json:"sigma_scale"`
	// Factor is the ratio of the true to the stated weights.
	Factor float64 `json:"factor"`
	// Samples is the number of real values the estimate used (each
	// difference or imaginary part is one).
	Samples int `json:"samples"`
	// RelError is the approximate relative standard error of Factor,
	// √(2/Samples) for a Gaussian variance estimate.
	RelError float64 `json:"rel_error"`
}

// EstimateWeightScale estimates the true noise of d's unflagged rows
// relative to their stated weights.
//
// Where d has ant1 and ant2 columns it uses successive differences: the
// rows of each baseline and channel (same ant1, ant2, spw, chan and
// frequency) in time order (file order when there is no time column) are
// differenced, which cancels the sky signal where it changes slowly from
// one integration to the next; each difference of the real and of the
// imaginary parts has variance σ_k² + σ_k+1² under the stated weights, so
//
//	z = Δ / √(1/w_k + 1/w_k+1),   Factor = 1 / ⟨z²⟩.
//
// Otherwise it uses the imaginary parts on the longest baselines (the
// longest fifth of the rows): there a source near the phase centre is
// resolved and nearly symmetric, so Im ≈ noise, z = Im·√w and again
// Factor = 1/⟨z²⟩ (about the median). That assumption fails for bright
// compact emission far from the phase centre; prefer tables with antenna
// columns.
//
// At most about 10⁶ rows are used (whole baselines, or evenly spaced rows),
// which bounds the time and memory for any dataset.
//
// Both estimators are made robust by a first σ from the median absolute
// deviation (σ = 1.4826·MAD for a Gaussian) and then a variance over the
// values within 5σ, which keeps the efficiency of the plain variance while
// ignoring outliers (jumps between scans, RFI).
func EstimateWeightScale(d *Dataset) (WeightScale, error) {
	if d.Ant1 != nil && d.Ant2 != nil {
		z := successiveDifferences(d)
		if len(z) >= minWeightSamples {
			return scaleFrom(MethodDifferences, z, false), nil
		}
	}
	z := longBaselineImag(d)
	if len(z) < minWeightSamples {
		return WeightScale{}, ErrTooFewSamples
	}
	return scaleFrom(MethodImagScatter, z, true), nil
}

// scaleFrom turns normalised values z (unit variance if the stated weights
// are right) into a WeightScale. z is reordered.
func scaleFrom(method string, z []float64, aboutMedian bool) WeightScale {
	centre := 0.0
	if aboutMedian {
		centre = median(z)
	}
	dev := make([]float64, len(z))
	for i, x := range z {
		dev[i] = math.Abs(x - centre)
	}
	sigma0 := 1.4826 * median(dev)
	var sum float64
	n := 0
	for _, x := range z {
		if e := x - centre; math.Abs(e) <= 5*sigma0 {
			sum += e * e
			n++
		}
	}
	v := sum / float64(n)
	// A Gaussian cut at ±5σ keeps a fraction 1 − 5.7·10⁻⁷ of the values and
	// a variance of (1 − 1.5·10⁻⁵)σ²; correct for it.
	v /= 1 - 1.5e-5
	return WeightScale{
		Method:     method,
		SigmaScale: math.Sqrt(v),
		Factor:     1 / v,
		Samples:    n,
		RelError:   math.Sqrt(2 / float64(n)),
	}
}

// baselineKey identifies a baseline and channel.
type baselineKey struct {
	a1, a2, spw int16
	chn         int32
	freq        uint32
}

// successiveDifferences returns the normalised differences of the real and
// imaginary parts between successive unflagged rows of each baseline and
// channel, in time order.
func successiveDifferences(d *Dataset) []float64 {
	n := d.Len()
	group := make([]int32, n)
	ids := make(map[baselineKey]int32)
	for k := range n {
		key := baselineKey{a1: d.Ant1[k], a2: d.Ant2[k]}
		if d.Spw != nil {
			key.spw = d.Spw[k]
		}
		if d.Chan != nil {
			key.chn = d.Chan[k]
		}
		if d.FreqIndex != nil {
			key.freq = d.FreqIndex[k]
		}
		id, ok := ids[key]
		if !ok {
			id = int32(len(ids))
			ids[key] = id
		}
		group[k] = id
	}
	// Every take-th baseline-channel group is used, about maxWeightRows
	// rows in all.
	take := int32(max(1, (n+maxWeightRows-1)/maxWeightRows))
	// Counting sort by group keeps file order within each group.
	start := make([]int, len(ids)+1)
	for _, g := range group {
		if g%take == 0 {
			start[g+1]++
		}
	}
	for i := 1; i < len(start); i++ {
		start[i] += start[i-1]
	}
	order := make([]int32, start[len(ids)])
	next := slices.Clone(start[:len(ids)])
	for k, g := range group {
		if g%take == 0 {
			order[next[g]] = int32(k)
			next[g]++
		}
	}
	group = nil
	var z []float64
	for g := range len(ids) {
		rows := order[start[g]:start[g+1]]
		if d.Time != nil && !sort.SliceIsSorted(rows, func(i, j int) bool { return d.Time[rows[i]] < d.Time[rows[j]] }) {
			sort.SliceStable(rows, func(i, j int) bool { return d.Time[rows[i]] < d.Time[rows[j]] })
		}
		prev := -1
		for _, r := range rows {
			k := int(r)
			if d.Flagged(k) {
				prev = -1
				continue
			}
			if prev >= 0 {
				s := math.Sqrt(1/d.Weight[prev] + 1/d.Weight[k])
				z = append(z, (d.Re[k]-d.Re[prev])/s, (d.Im[k]-d.Im[prev])/s)
			}
			prev = k
		}
	}
	return z
}

// longBaselineImag returns Im·√w for the unflagged rows on the longest
// fifth of the baselines (by |u, v|).
func longBaselineImag(d *Dataset) []float64 {
	n := d.Len()
	// The threshold comes from at most 100 000 evenly spaced rows, so that
	// memory stays small for any dataset.
	stride := max(1, n/100000)
	var q []float64
	for k := 0; k < n; k += stride {
		if !d.Flagged(k) {
			q = append(q, d.U[k]*d.U[k]+d.V[k]*d.V[k])
		}
	}
	if len(q) == 0 {
		return nil
	}
	slices.Sort(q)
	cut := q[len(q)*4/5]
	// Every take-th row beyond the cut, about maxWeightRows in all.
	take := max(1, n/5/maxWeightRows)
	var z []float64
	seen := 0
	for k := range n {
		if !d.Flagged(k) && d.U[k]*d.U[k]+d.V[k]*d.V[k] >= cut {
			if seen%take == 0 {
				z = append(z, d.Im[k]*math.Sqrt(d.Weight[k]))
			}
			seen++
		}
	}
	return z
}

// median returns the median of x, reordering x.
func median(x []float64) float64 {
	if len(x) == 0 {
		return math.NaN()
	}
	slices.Sort(x)
	n := len(x)
	if n%2 == 1 {
		return x[n/2]
	}
	return (x[n/2-1] + x[n/2]) / 2
}
