package fit

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"sort"
)

// Result is the outcome of Run: parameter estimates, the fit quality per
// dataset, the evidence, derived physical quantities and the run's record.
// It is what result.json holds (posterior samples are in posterior.csv).
type Result struct {
	Method      string `json:"method"`
	Status      string `json:"status"`
	Seed        uint64 `json:"seed"`
	Evaluations int    `json:"evaluations"`

	// Params lists every parameter of the model, free ones with their
	// posterior summaries.
	Params []ParamSummary `json:"params"`
	// Best is the free-parameter vector of the best fit (largest
	// ln L + ln π among the samples), BestLogLike and BestLogPost the
	// values there.
	Best        []float64 `json:"best_theta"`
	BestLogLike float64   `json:"best_loglike"`
	BestLogPost float64   `json:"best_logpost"`

	Datasets []DatasetSummary `json:"datasets"`
	// Chi2 is the total χ² at the best fit with each dataset's noise
	// scale applied; Data the number of real data values, twice the
	// complex visibilities; ReducedChi2 = Chi2/(Data − FreeParams).
	Chi2        float64 `json:"chi2"`
	Data        int     `json:"data_values"`
	FreeParams  int     `json:"free_params"`
	ReducedChi2 float64 `json:"reduced_chi2"`
	// BIC = −2 ln L_max + k ln n with n = Data (both parts of every
	// visibility counted) and ln L_max the normalised log-likelihood.
	BIC float64 `json:"bic"`

	Evidence *Evidence `json:"evidence,omitempty"`
	MCMC     *MCMCInfo `json:"mcmc,omitempty"`
	Derived  []Derived `json:"derived,omitempty"`

	Grid    GridInfo `json:"grid"`
	RefFreq float64  `json:"ref_freq_hz"`
	Timing  Timing   `json:"timing_s"`
	Notes   []string `json:"notes,omitempty"`
	// Files lists the files written into the output directory.
	Files []string `json:"files,omitempty"`

	// Model, Like and BestEval are set by Run (not by LoadResult): the
	// model, its likelihood and the evaluation at Best with its per-group
	// model images.
	Model    *Model      `json:"-"`
	Like     *Likelihood `json:"-"`
	BestEval *Evaluation `json:"-"`
	// Dir is the output directory.
	Dir string `json:"-"`

	post posterior
	run  *RunRecord
}

// ParamSummary is one parameter's estimate.
type ParamSummary struct {
	Name   string `json:"name"`
	Unit   string `json:"unit,omitempty"`
	Free   bool   `json:"free"`
	SameAs string `json:"same_as,omitempty"`
	Prior  string `json:"prior,omitempty"`
	// Best is the best-fit value (the fixed value of a fixed parameter).
	Best float64 `json:"best"`
	// Median and the 68% interval [Lo, Hi] (16th and 84th weighted
	// percentiles), Mean and SD of the posterior; free parameters only.
	Median float64 `json:"median,omitempty"`
	Lo     float64 `json:"lo68,omitempty"`
	Hi     float64 `json:"hi68,omitempty"`
	Mean   float64 `json:"mean,omitempty"`
	SD     float64 `json:"sd,omitempty"`
}

// DatasetSummary is one dataset's fit quality at the best fit.
type DatasetSummary struct {
	Label        string  `json:"label"`
	File         string  `json:"file"`
	Visibilities int     `json:"visibilities"`
	Groups       int     `json:"freq_groups"`
	FreqMin      float64 `json:"freq_min_hz"`
	FreqMax      float64 `json:"freq_max_hz"`
	// Chi2 is with the stated weights; NoiseScale s; Chi2Scaled = Chi2/s²
	// and ReducedChi2 = Chi2Scaled/(2 Visibilities).
	Chi2        float64 `json:"chi2"`
	NoiseScale  float64 `json:"noise_scale"`
	Chi2Scaled  float64 `json:"chi2_scaled"`
	ReducedChi2 float64 `json:"reduced_chi2"`
	LogLike     float64 `json:"loglike"`
	// ImageNoise is the natural-weighting image noise s (Σw)^−½ in Jy/beam.
	ImageNoise float64 `json:"image_noise_jy_per_beam"`
	Cache      string  `json:"cache"`
}

// Evidence is the nested-sampling evidence.
type Evidence struct {
	LogZ             float64 `json:"logz"`
	LogZErr          float64 `json:"logz_err"`
	H                float64 `json:"information_nats"`
	Live             int     `json:"live_points"`
	Iterations       int     `json:"iterations"`
	EffectiveSamples float64 `json:"effective_samples"`
}

// MCMCInfo describes an ensemble run.
type MCMCInfo struct {
	Walkers     int       `json:"walkers"`
	Steps       int       `json:"steps"`
	Acceptance  float64   `json:"acceptance"`
	Tau         []float64 `json:"autocorr_time"`
	TauReliable bool      `json:"autocorr_reliable"`
	BurnIn      int       `json:"burn_in"`
	Thin        int       `json:"thin"`
}

// GridInfo is the sky grid of a fit.
type GridInfo struct {
	N     int     `json:"n"`
	Pixel float64 `json:"pixel_arcsec"`
	X0    float64 `json:"x0_arcsec"`
	Y0    float64 `json:"y0_arcsec"`
}

// Timing holds wall-clock seconds.
type Timing struct {
	Load   float64 `json:"load"`
	Sample float64 `json:"sample"`
	Total  float64 `json:"total"`
}

// ResultFile is the name of the machine-readable result in an output
// directory.
const ResultFile = "result.json"

// LoadResult reads result.json from a fit's output directory. The model
// with its best-fit values is BestFitModel; the samples are in Posterior.
func LoadResult(dir string) (*Result, error) {
	b, err := os.ReadFile(filepath.Join(dir, ResultFile))
	if err != nil {
		return nil, err
	}
	var r Result
	if err := json.Unmarshal(b, &r); err != nil {
		return nil, fmt.Errorf("%s: %w", filepath.Join(dir, ResultFile), err)
	}
	r.Dir = dir
	return &r, nil
}

// BestFitModel reads bestfit.toml from the result's directory: the model
// file with every free parameter starting at its best fit, so that
// NewLikelihood(m, …).Evaluate(m.Start()) gives the best-fit lens, source
// and model images of every dataset.
func (r *Result) BestFitModel() (*Model, error) {
	if r.Dir == "" {
		return nil, fmt.Errorf("fit: result has no directory")
	}
	return ReadModel(filepath.Join(r.Dir, BestFitFile))
}

// Param returns the summary of the parameter named name ("g1.theta_e").
func (r *Result) Param(name string) (ParamSummary, bool) {
	for _, p := range r.Params {
		if p.Name == name {
			return p, true
		}
	}
	return ParamSummary{}, false
}

// summarise fills the result from the sampler's posterior.
func (r *Result) summarise(post posterior, opt RunOptions) error {
	m, l := r.Model, r.Like
	p := l.Problem()
	r.post = post
	// Best fit: the largest ln L + ln π among the samples and the
	// sampler's own best.
	cands := append([][]float64{post.best}, post.samples...)
	bestLP := math.Inf(-1)
	for i, th := range cands {
		if th == nil {
			continue
		}
		var ll float64
		if i > 0 && !math.IsNaN(post.loglike[i-1]) {
			ll = post.loglike[i-1]
		} else if i == 0 || len(cands) < 50 {
			ll = l.LogLike(th)
		} else {
			continue
		}
		if lp := ll + p.Prior.LogPdf(th); lp > bestLP {
			bestLP, r.Best = lp, append([]float64(nil), th...)
		}
	}
	if r.Best == nil {
		return fmt.Errorf("fit: no sample with finite posterior")
	}
	ev, err := l.Evaluate(r.Best)
	if err != nil {
		return fmt.Errorf("fit: best fit: %w", err)
	}
	r.BestEval = ev
	r.BestLogLike, r.BestLogPost = ev.LogLike, ev.LogLike+p.Prior.LogPdf(r.Best)
	r.Grid = GridInfo{N: l.Grid.N, Pixel: l.Grid.Pixel, X0: l.Grid.X0, Y0: l.Grid.Y0}
	r.RefFreq = l.RefFreq
	r.Notes = append(append([]string(nil), l.Notes...), r.Notes...)
	if n := l.Invalid(); n > 0 {
		r.Notes = append(r.Notes, fmt.Sprintf("%d likelihood evaluations met invalid parameter combinations (ln L = −∞)", n))
	}

	// Parameters.
	vals := l.pm.values(nil, r.Best)
	freeAt := map[*Param]int{}
	for i, q := range m.Free {
		freeAt[q] = i
	}
	w := post.weights
	if w == nil {
		w = make([]float64, len(post.samples))
		for i := range w {
			w[i] = 1 / float64(len(w))
		}
	}
	col := make([]float64, len(post.samples))
	for _, q := range m.Params {
		ps := ParamSummary{Name: q.Name, Unit: paramUnit(m, q), Free: q.Free && q.Tied == nil, SameAs: q.SameAs,
			Best: l.pm.get(vals, q)}
		if ps.Free {
			ps.Prior = priorString(q)
			k := freeAt[q]
			for i, s := range post.samples {
				col[i] = s[k]
			}
			qs := weightedQuantiles(col, w, 0.16, 0.5, 0.84)
			ps.Lo, ps.Median, ps.Hi = qs[0], qs[1], qs[2]
			ps.Mean, ps.SD = weightedMeanSD(col, w)
		}
		r.Params = append(r.Params, ps)
	}

	// Datasets.
	r.FreeParams = len(m.Free)
	for i, dd := range l.Datasets {
		de := ev.Datasets[i]
		ds := DatasetSummary{Label: dd.Label, File: dd.Data.File, Visibilities: dd.Visibilities, Groups: len(dd.Groups),
			Chi2: de.Chi2, NoiseScale: de.NoiseScale, Chi2Scaled: de.Chi2 / (de.NoiseScale * de.NoiseScale),
			LogLike: de.LogLike, Cache: dd.Cache.String()}
		ds.ReducedChi2 = ds.Chi2Scaled / float64(2*dd.Visibilities)
		var sw float64
		ds.FreqMin = math.Inf(1)
		for _, g := range dd.Groups {
			sw += g.SumWeights()
			a, b := g.FreqRange()
			ds.FreqMin, ds.FreqMax = math.Min(ds.FreqMin, a), math.Max(ds.FreqMax, b)
		}
		ds.ImageNoise = de.NoiseScale / math.Sqrt(sw)
		r.Datasets = append(r.Datasets, ds)
		r.Chi2 += ds.Chi2Scaled
		r.Data += 2 * dd.Visibilities
	}
	if dof := r.Data - r.FreeParams; dof > 0 {
		r.ReducedChi2 = r.Chi2 / float64(dof)
	}
	r.BIC = -2*r.BestLogLike + float64(r.FreeParams)*math.Log(float64(r.Data))

	if opt.DerivedSamples >= 0 {
		n := opt.DerivedSamples
		if n == 0 {
			n = 200
		}
		r.Derived = derivedQuantities(l, r.Best, post, w, n, r.Seed)
	}
	return nil
}

// paramUnit returns the unit of q from the kind tables.
func paramUnit(m *Model, q *Param) string {
	for _, group := range []struct {
		comps []Component
		kinds []kindDef
	}{{m.Lenses, lensKinds}, {m.Sources, sourceKinds}} {
		for _, c := range group.comps {
			for key, p := range c.Params {
				if p != q {
					continue
				}
				if kd := findKind(group.kinds, c.Kind); kd != nil {
					for _, pd := range kd.params {
						if pd.key == key {
							return pd.unit
						}
					}
				}
			}
		}
	}
	for _, d := range m.Data {
		if q == d.DX || q == d.DY {
			return "arcsec"
		}
	}
	return ""
}

func priorString(q *Param) string {
	switch q.Prior {
	case PriorNormal:
		s := fmt.Sprintf("normal(%g, %g)", q.Mean, q.SD)
		if !math.IsInf(q.Min, -1) || !math.IsInf(q.Max, 1) {
			s += fmt.Sprintf(" on [%g, %g]", q.Min, q.Max)
		}
		return s
	case PriorLogUniform:
		return fmt.Sprintf("log-uniform[%g, %g]", q.Min, q.Max)
	}
	return fmt.Sprintf("uniform[%g, %g]", q.Min, q.Max)
}

// weightedQuantiles returns the weighted quantiles of x, interpolating
// linearly in the cumulative weight at the centres of the sorted samples.
func weightedQuantiles(x, w []float64, q ...float64) []float64 {
	out := make([]float64, len(q))
	if len(x) == 0 {
		for i := range out {
			out[i] = math.NaN()
		}
		return out
	}
	idx := make([]int, len(x))
	for i := range idx {
		idx[i] = i
	}
	sort.SliceStable(idx, func(a, b int) bool { return x[idx[a]] < x[idx[b]] })
	var tot float64
	for _, v := range w {
		tot += v
	}
	cum := make([]float64, len(x))
	var acc float64
	for k, i := range idx {
		cum[k] = (acc + 0.5*w[i]) / tot
		acc += w[i]
	}
	for j, p := range q {
		k := sort.SearchFloat64s(cum, p)
		switch {
		case k == 0:
			out[j] = x[idx[0]]
		case k == len(x):
			out[j] = x[idx[len(x)-1]]
		default:
			f := (p - cum[k-1]) / (cum[k] - cum[k-1])
			out[j] = x[idx[k-1]] + f*(x[idx[k]]-x[idx[k-1]])
		}
	}
	return out
}

func weightedMeanSD(x, w []float64) (mean, sd float64) {
	var sw float64
	for i, v := range x {
		mean += w[i] * v
		sw += w[i]
	}
	mean /= sw
	for i, v := range x {
		sd += w[i] * (v - mean) * (v - mean)
	}
	return mean, math.Sqrt(sd / sw)
}

// equalWeight resamples the posterior into n equally weighted samples by
// systematic resampling with a fixed seed (nil weights: every
// len/n-th sample).
func equalWeight(samples [][]float64, w []float64, n int, u0 float64) [][]float64 {
	if len(samples) == 0 {
		return nil
	}
	n = min(n, len(samples))
	out := make([][]float64, 0, n)
	var tot float64
	for _, v := range w {
		tot += v
	}
	var acc float64
	k := 0
	for i := range n {
		target := (float64(i) + u0) / float64(n) * tot
		for k < len(samples)-1 && acc+w[k] < target {
			acc += w[k]
			k++
		}
		out = append(out, slices.Clone(samples[k]))
	}
	return out
}
