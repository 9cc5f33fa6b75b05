package probe

import (
	"encoding/csv"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"

	"deflect/fit"
)

// FromFitDir returns the fit in the directory dir written by "deflect fit":
// its best fit and model from bestfit.toml and result.json, the evidence
// when the fit was a nested-sampling run (else NaN, with a note), and up to
// 200 equally weighted posterior draws resampled (systematically, seeded
// by seed) from posterior.csv.
func FromFitDir(dir, name string, seed uint64) (*ModelFit, error) {
	r, err := fit.LoadResult(dir)
	if err != nil {
		return nil, err
	}
	m, err := fit.ReadModel(filepath.Join(dir, fit.BestFitFile))
	if err != nil {
		return nil, err
	}
	mf := &ModelFit{Name: name, Model: m, Theta: m.Start(), Chi2: r.Chi2, LogLike: r.BestLogLike,
		Visibilities: r.Data / 2, Evaluations: r.Evaluations, LogZ: math.NaN()}
	if len(r.Best) == len(m.Free) {
		mf.Theta = r.Best
	}
	for _, q := range m.Free {
		mf.ParamNames = append(mf.ParamNames, q.Name)
	}
	if r.Evidence != nil {
		mf.LogZ, mf.LogZErr, mf.LogZMethod = r.Evidence.LogZ, r.Evidence.LogZErr, "nested sampling"
	} else {
		mf.LogZMethod = "none"
		mf.LogZNote = fmt.Sprintf("the fit in %s used method %q, which gives no evidence; refit with method = \"nested\"", dir, r.Method)
	}
	mf.Samples, err = readPosterior(filepath.Join(dir, fit.PosteriorFile), len(m.Free), 200, seed)
	if err != nil {
		return nil, err
	}
	mf.finish(len(m.Free))
	mf.BIC = r.BIC
	return mf, nil
}

// readPosterior reads posterior.csv (free parameters, weight, loglike) and
// resamples n equally weighted draws from it.
func readPosterior(path string, dim, n int, seed uint64) ([][]float64, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil {
		return nil, fmt.Errorf("%s: %w", path, err)
	}
	if len(rows) < 2 {
		return nil, fmt.Errorf("%s: no samples", path)
	}
	var samples [][]float64
	var weights []float64
	for i, row := range rows[1:] {
		if len(row) < dim+1 {
			return nil, fmt.Errorf("%s:%d: %d fields, want %d parameters and a weight", path, i+2, len(row), dim)
		}
		th := make([]float64, dim)
		for j := range th {
			if th[j], err = strconv.ParseFloat(row[j], 64); err != nil {
				return nil, fmt.Errorf("%s:%d: field %d: %w", path, i+2, j+1, err)
			}
		}
		w, err := strconv.ParseFloat(row[dim], 64)
		if err != nil || w < 0 {
			return nil, fmt.Errorf("%s:%d: weight %q", path, i+2, row[dim])
		}
		samples, weights = append(samples, th), append(weights, w)
	}
	var tot float64
	for _, w := range weights {
		tot += w
	}
	if !(tot > 0) {
		return nil, fmt.Errorf("%s: weights sum to %g", path, tot)
	}
	// Systematic resampling: one uniform offset.
	rnd := rand.New(rand.NewPCG(seed, 13))
	out := make([][]float64, 0, n)
	u := rnd.Float64() / float64(n)
	var c float64
	j := 0
	for i, w := range weights {
		c += w / tot
		for j < n && u+float64(j)/float64(n) < c {
			out = append(out, samples[i])
			j++
		}
	}
	for len(out) < n {
		out = append(out, samples[len(samples)-1])
	}
	return out, nil
}
