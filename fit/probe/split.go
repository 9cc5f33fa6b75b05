package probe

import (
	"math"
	"slices"

	"gonum.org/v1/gonum/stat/distuv"
)

// Split is the direct test at a fixed position on one subset of the data.
type Split struct {
	Name string  `json:"name"`
	Rows int     `json:"rows"`
	Flux Flux    `json:"flux"`
	SNR  float64 `json:"snr"`
}

// SplitFamily is a partition of the data into disjoint subsets and the
// consistency of their fluxes: χ² = Σ_i (F_i − F̄)²/σ_i² about the weighted
// mean F̄ = Σ F_i/σ_i² / Σ 1/σ_i², with len(Splits) − 1 degrees of freedom,
// and P its upper-tail probability. Fluxes from different frequencies are
// compared at the reference frequency through the source's spectral index
// (see Rows).
type SplitFamily struct {
	Name   string  `json:"name"`
	Splits []Split `json:"splits"`
	Mean   Flux    `json:"weighted_mean"`
	Chi2   float64 `json:"chi2"`
	DOF    int     `json:"dof"`
	P      float64 `json:"p_value"`
}

// SplitTests repeats the direct test at (x, y) on each dataset alone (when
// there are several), on the first and second half in time of every dataset
// (split at each dataset's median time stamp; left out when a dataset has no
// times) and on the short and long baselines (split at the median uv
// distance of all rows).
func SplitTests(r *Rows, x, y float64) []SplitFamily {
	var fams []SplitFamily
	if len(r.Labels) > 1 {
		var ss []Split
		for i, l := range r.Labels {
			ss = append(ss, split(r, l, func(k int) bool { return r.Set[k] == i }, x, y))
		}
		fams = append(fams, family("dataset", ss))
	}
	haveTime := true
	medT := make([]float64, len(r.Labels))
	for i := range r.Labels {
		var ts []float64
		for k, s := range r.Set {
			if s == i {
				ts = append(ts, r.Time[k])
			}
		}
		if len(ts) == 0 || slices.ContainsFunc(ts, math.IsNaN) {
			haveTime = false
			break
		}
		slices.Sort(ts)
		medT[i] = ts[len(ts)/2]
		if ts[0] == ts[len(ts)-1] {
			haveTime = false
		}
	}
	if haveTime {
		fams = append(fams, family("time", []Split{
			split(r, "first half", func(k int) bool { return r.Time[k] < medT[r.Set[k]] }, x, y),
			split(r, "second half", func(k int) bool { return r.Time[k] >= medT[r.Set[k]] }, x, y),
		}))
	}
	q := make([]float64, r.Len())
	for k := range q {
		q[k] = math.Hypot(r.U[k], r.V[k])
	}
	sorted := slices.Clone(q)
	slices.Sort(sorted)
	med := sorted[len(sorted)/2]
	fams = append(fams, family("uv distance", []Split{
		split(r, "short baselines", func(k int) bool { return q[k] < med }, x, y),
		split(r, "long baselines", func(k int) bool { return q[k] >= med }, x, y),
	}))
	return fams
}

func split(r *Rows, name string, keep func(int) bool, x, y float64) Split {
	s := r.Subset(keep)
	if s.Len() == 0 {
		return Split{Name: name, Flux: Flux{Value: math.NaN(), Err: math.Inf(1)}, SNR: math.NaN()}
	}
	f := s.FluxAt(x, y)
	return Split{Name: name, Rows: s.Len(), Flux: f, SNR: f.SNR()}
}

func family(name string, ss []Split) SplitFamily {
	var sw, swf float64
	for _, s := range ss {
		if s.Rows == 0 {
			continue
		}
		w := 1 / (s.Flux.Err * s.Flux.Err)
		sw += w
		swf += w * s.Flux.Value
	}
	f := SplitFamily{Name: name, Splits: ss, Mean: Flux{Value: swf / sw, Err: 1 / math.Sqrt(sw)}}
	for _, s := range ss {
		if s.Rows == 0 {
			continue
		}
		d := (s.Flux.Value - f.Mean.Value) / s.Flux.Err
		f.Chi2 += d * d
		f.DOF++
	}
	f.DOF--
	f.P = 1
	if f.DOF > 0 {
		f.P = distuv.ChiSquared{K: float64(f.DOF)}.Survival(f.Chi2)
	}
	return f
}
