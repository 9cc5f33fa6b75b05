package fit

import (
	"bytes"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"time"

	"deflect/internal/atomicfile"
)

// Output file names in a fit's directory.
const (
	SummaryFile   = "summary.txt"
	PosteriorFile = "posterior.csv"
	RunFile       = "run.json"
)

// RunRecord is run.json: what is needed to reproduce a fit.
type RunRecord struct {
	Version    string            `json:"deflect_version"`
	Model      string            `json:"model_file"`
	ModelHash  string            `json:"model_sha256"`
	Data       map[string]string `json:"data_sha256"`
	Method     string            `json:"method"`
	Seed       uint64            `json:"seed"`
	Finished   string            `json:"finished_utc"`
	Timing     Timing            `json:"timing_s"`
	Host       string            `json:"host"`
	GoVersion  string            `json:"go_version"`
	OS         string            `json:"os_arch"`
	CPUs       int               `json:"cpus"`
	GOMAXPROCS int               `json:"gomaxprocs"`
}

func fileHash(path string) string {
	f, err := os.Open(path)
	if err != nil {
		return "unreadable: " + err.Error()
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return "unreadable: " + err.Error()
	}
	return hex.EncodeToString(h.Sum(nil))
}

func runRecord(m *Model, l *Likelihood, r *Result, opt RunOptions, seed uint64) *RunRecord {
	host, _ := os.Hostname()
	rec := &RunRecord{Version: opt.Version, Model: m.Path, ModelHash: fileHash(m.Path), Data: map[string]string{},
		Method: r.Method, Seed: seed, Finished: time.Now().UTC().Format(time.RFC3339), Host: host,
		GoVersion: runtime.Version(), OS: runtime.GOOS + "/" + runtime.GOARCH, CPUs: runtime.NumCPU(),
		GOMAXPROCS: runtime.GOMAXPROCS(0)}
	for _, d := range m.Data {
		rec.Data[d.File] = fileHash(d.File)
	}
	return rec
}

// write writes every output file into r.Dir.
func (r *Result) write(opt RunOptions) error {
	dir := r.Dir
	put := func(name string, fill func(w io.Writer) error) error {
		r.Files = append(r.Files, name)
		return atomicfile.Write(filepath.Join(dir, name), true, fill)
	}
	if err := put(BestFitFile, func(w io.Writer) error {
		vals := map[*Param]float64{}
		all := r.Like.pm.values(nil, r.Best)
		for i, q := range r.Model.Params {
			vals[q] = all[i]
		}
		return WriteModel(w, r.Model, vals, r.Like.Grid, r.Like.RefFreq, dir)
	}); err != nil {
		return err
	}
	if err := put(PosteriorFile, r.writePosterior); err != nil {
		return err
	}
	if !opt.NoMaps {
		files, err := writeMaps(dir, r)
		r.Files = append(r.Files, files...)
		if err != nil {
			return err
		}
	}
	if err := put(SummaryFile, func(w io.Writer) error { _, err := io.WriteString(w, r.SummaryText()); return err }); err != nil {
		return err
	}
	r.Files = append(r.Files, ResultFile, RunFile)
	r.run.Timing = r.Timing
	raw, err := json.Marshal(jsonSafe{r})
	if err != nil {
		return err
	}
	var buf bytes.Buffer
	if err := json.Indent(&buf, raw, "", "  "); err != nil {
		return err
	}
	buf.WriteByte('\n')
	if err := atomicfile.WriteBytes(filepath.Join(dir, ResultFile), true, buf.Bytes()); err != nil {
		return err
	}
	b, err := json.MarshalIndent(r.run, "", "  ")
	if err != nil {
		return err
	}
	return atomicfile.WriteBytes(filepath.Join(dir, RunFile), true, append(b, '\n'))
}

// jsonSafe marshals a Result with NaN and ±Inf written as null.
type jsonSafe struct{ r *Result }

func (j jsonSafe) MarshalJSON() ([]byte, error) {
	type plain Result
	c := *j.r
	c.Derived = append([]Derived(nil), j.r.Derived...)
	for i := range c.Derived {
		d := &c.Derived[i]
		d.Best, d.Median, d.Lo, d.Hi = jsonFinite(d.Best), jsonFinite(d.Median), jsonFinite(d.Lo), jsonFinite(d.Hi)
	}
	c.BestLogLike, c.BestLogPost = jsonFinite(c.BestLogLike), jsonFinite(c.BestLogPost)
	c.Chi2, c.ReducedChi2, c.BIC = jsonFinite(c.Chi2), jsonFinite(c.ReducedChi2), jsonFinite(c.BIC)
	if j.r.MCMC != nil {
		mc := *j.r.MCMC
		mc.Tau = append([]float64(nil), mc.Tau...)
		for i := range mc.Tau {
			mc.Tau[i] = jsonFinite(mc.Tau[i])
		}
		c.MCMC = &mc
	}
	c.Params = append([]ParamSummary(nil), j.r.Params...)
	for i := range c.Params {
		p := &c.Params[i]
		p.Best, p.Median, p.Lo, p.Hi, p.Mean, p.SD = jsonFinite(p.Best), jsonFinite(p.Median), jsonFinite(p.Lo), jsonFinite(p.Hi), jsonFinite(p.Mean), jsonFinite(p.SD)
	}
	b, err := json.Marshal((*plain)(&c))
	if err != nil {
		return nil, err
	}
	return bytes.ReplaceAll(b, []byte(nanMarker), []byte("null")), nil
}

// nanMarker stands for a non-finite value until it is replaced by null.
const nanMarker = "-1.2345678901234567e+308"

func jsonFinite(x float64) float64 {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		v, _ := strconv.ParseFloat(nanMarker, 64)
		return v
	}
	return x
}

// writePosterior writes the samples: one column per free parameter, then
// the normalised weight and ln L (empty where not computed).
func (r *Result) writePosterior(w io.Writer) error {
	var b strings.Builder
	for _, q := range r.Model.Free {
		b.WriteString(q.Name)
		b.WriteByte(',')
	}
	b.WriteString("weight,loglike\n")
	p := r.post
	for i, s := range p.samples {
		for _, v := range s {
			b.WriteString(strconv.FormatFloat(v, 'g', -1, 64))
			b.WriteByte(',')
		}
		wt := 1 / float64(len(p.samples))
		if p.weights != nil {
			wt = p.weights[i]
		}
		b.WriteString(strconv.FormatFloat(wt, 'g', -1, 64))
		b.WriteByte(',')
		if ll := p.loglike[i]; !math.IsNaN(ll) {
			b.WriteString(strconv.FormatFloat(ll, 'g', -1, 64))
		}
		b.WriteByte('\n')
	}
	_, err := io.WriteString(w, b.String())
	return err
}

// SummaryText returns summary.txt: the run, each parameter, each dataset's
// fit quality, the evidence and the derived quantities.
func (r *Result) SummaryText() string {
	var b strings.Builder
	fmt.Fprintf(&b, "deflect fit of %s\n", r.modelPath())
	fmt.Fprintf(&b, "method %s (%s), seed %d, %d likelihood evaluations, %.1f s\n", r.Method, r.Status, r.Seed, r.Evaluations, r.Timing.Total)
	fmt.Fprintf(&b, "grid %d × %d pixels of %g arcsec; reference frequency %s\n", r.Grid.N, r.Grid.N, r.Grid.Pixel, fmtFreq(r.RefFreq))
	interval := "posterior median and 68% interval"
	if r.Method == "optimize" {
		interval = "Laplace approximation about the optimum: median and 68% interval"
	}
	fmt.Fprintf(&b, "\nParameters (best fit = largest ln L + ln π; %s)\n", interval)
	fmt.Fprintf(&b, "  %-24s %-7s %14s %14s %14s   %s\n", "parameter", "unit", "best fit", "median", "−/+ 68%", "prior")
	for _, p := range r.Params {
		unit := p.Unit
		if unit == "" {
			unit = "—"
		}
		switch {
		case p.Free:
			fmt.Fprintf(&b, "  %-24s %-7s %14.6g %14.6g %14s   %s\n", p.Name, unit, p.Best, p.Median,
				fmt.Sprintf("−%.3g/+%.3g", p.Median-p.Lo, p.Hi-p.Median), p.Prior)
		case p.SameAs != "":
			fmt.Fprintf(&b, "  %-24s %-7s %14.6g %14s %14s   = %s\n", p.Name, unit, p.Best, "", "", p.SameAs)
		}
	}
	b.WriteString("  (fixed parameters are listed in bestfit.toml)\n")
	b.WriteString("\nFit quality at the best fit (χ² with each dataset's noise scale s; 2 real values per visibility)\n")
	fmt.Fprintf(&b, "  %-14s %12s %6s %8s %14s %10s %14s\n", "dataset", "visibilities", "groups", "s", "χ²", "χ²/(2N)", "σ_img (μJy/b)")
	for _, d := range r.Datasets {
		fmt.Fprintf(&b, "  %-14s %12d %6d %8.4g %14.6g %10.4f %14.4g\n", d.Label, d.Visibilities, d.Groups, d.NoiseScale, d.Chi2Scaled, d.ReducedChi2, d.ImageNoise*1e6)
	}
	fmt.Fprintf(&b, "  %-14s %12d %6s %8s %14.6g %10.4f   (χ²/(n − k), n = %d, k = %d)\n", "total", r.Data/2, "", "", r.Chi2, r.ReducedChi2, r.Data, r.FreeParams)
	fmt.Fprintf(&b, "  ln L_max = %.6f (normalised); BIC = −2 ln L_max + k ln n = %.4f\n", r.BestLogLike, r.BIC)
	if e := r.Evidence; e != nil {
		fmt.Fprintf(&b, "\nEvidence: ln Z = %.4f ± %.4f (information H = %.3g nats, %d live points, %.0f effective samples)\n",
			e.LogZ, e.LogZErr, e.H, e.Live, e.EffectiveSamples)
	} else {
		b.WriteString("\nEvidence: not computed (use method = \"nested\")\n")
	}
	if mc := r.MCMC; mc != nil {
		fmt.Fprintf(&b, "MCMC: %d walkers × %d steps, acceptance %.3f, burn-in %d, thin %d, τ reliable: %t\n",
			mc.Walkers, mc.Steps, mc.Acceptance, mc.BurnIn, mc.Thin, mc.TauReliable)
	}
	if len(r.Derived) > 0 {
		b.WriteString("\nDerived quantities (best fit; median and 68% interval over posterior draws)\n")
		for _, d := range r.Derived {
			unit := d.Unit
			if unit == "" {
				unit = "—"
			}
			val := "—"
			if !math.IsNaN(d.Median) {
				val = fmt.Sprintf("%.5g (−%.3g/+%.3g)", d.Median, d.Median-d.Lo, d.Hi-d.Median)
			}
			best := "—"
			if !math.IsNaN(d.Best) {
				best = fmt.Sprintf("%.5g", d.Best)
			}
			fmt.Fprintf(&b, "  %-34s %-7s %12s  %-28s %s\n", d.Name, unit, best, val, d.Note)
		}
	}
	if len(r.Notes) > 0 {
		b.WriteString("\nNotes\n")
		for _, n := range r.Notes {
			fmt.Fprintf(&b, "  - %s\n", n)
		}
	}
	return b.String()
}

func (r *Result) modelPath() string {
	if r.Model != nil {
		return r.Model.Path
	}
	return "(model)"
}

func fmtFreq(f float64) string {
	if f <= 0 {
		return "unknown"
	}
	return fmt.Sprintf("%.6g GHz", f/1e9)
}
