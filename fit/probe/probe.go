package probe

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"deflect/fit"
	"deflect/uv"
)

// Options are the settings of Run. The zero value of every field is its
// documented default.
type Options struct {
	// X, Y is the probed position in arcsec and Radius (> 0) the radius
	// in arcsec within which the feature may lie.
	X, Y, Radius float64
	// Null is the number of null simulations; zero means 200.
	Null int
	// Seed seeds the null simulations and the posterior draws.
	Seed uint64
	// Weighting and Robust are the imaging weights of the user's image.
	Weighting uv.Weighting
	Robust    float64
	// Grid is the sky grid; the zero value means ModelGrid(m, data, 256).
	Grid uv.Grid
	// Models, when not nil, are the model test's fits: Models.A cannot
	// make a central image, Models.B can.
	Models *ModelTest
	// ModelNote, when Models is nil, says why there is no model test.
	ModelNote string
	// Thresholds of the verdict: a feature is "real" when its direct-test
	// S/N ≥ RealSNR (zero means 5), the false-alarm probability ≤
	// MaxFalseAlarm (zero means 0.01) and every split family is consistent
	// (p ≥ 0.01); "not significant" below NoneSNR (zero means 3).
	RealSNR, NoneSNR, MaxFalseAlarm float64
}

// Result holds every number of a probe.
type Result struct {
	X      float64 `json:"x_arcsec"`
	Y      float64 `json:"y_arcsec"`
	Radius float64 `json:"radius_arcsec"`
	// Grid is the sky grid of the images, Weighting their weighting.
	Pixel     float64 `json:"pixel_arcsec"`
	GridN     int     `json:"grid_n"`
	Weighting string  `json:"weighting"`
	// RefFreq and Alpha are the reference frequency (Hz) and spectral
	// index at which fluxes are quoted and compared.
	RefFreq float64 `json:"ref_freq_hz"`
	Alpha   float64 `json:"spectral_index"`
	Rows    int     `json:"visibilities"`
	// ImageNoise is the expected rms of the dirty image in Jy/beam.
	ImageNoise float64 `json:"image_noise_jy_per_beam"`

	Direct *Direct `json:"direct"`
	Null   *Null   `json:"null"`
	// ModelPeak is the peak of the base model's dirty image over the whole
	// grid (Jy/beam); Sidelobe = Null.BaseAt / ModelPeak the sidelobe
	// level at the observed peak in units of that peak, SidelobeSigma the
	// same in units of ImageNoise.
	ModelPeak     float64       `json:"model_dirty_peak_jy_per_beam"`
	Sidelobe      float64       `json:"sidelobe_fraction_of_peak"`
	SidelobeSigma float64       `json:"sidelobe_sigma"`
	Splits        []SplitFamily `json:"splits"`
	Models        *ModelTest    `json:"model_test,omitempty"`
	ModelNote     string        `json:"model_test_note,omitempty"`
	Predictions   []*Prediction `json:"predictions,omitempty"`

	// Verdict is "real", "not significant" or "inconclusive"; Summary the
	// sentence with its numbers; Reasons the individual findings.
	Verdict string   `json:"verdict"`
	Summary string   `json:"summary"`
	Reasons []string `json:"reasons"`

	// Image is the residual dirty image (data minus the base model) on the
	// cut-out, Jy/beam, and Cut its grid.
	Image []float64 `json:"-"`
	Cut   uv.Grid   `json:"-"`
}

// Run probes the position of opt in data (data[i] the dataset of m.Data[i]).
// The base model is m at theta with its emission inside Radius of the
// position removed: the best fit "without the feature". The direct test,
// null simulations and split tests run on it; the model test and the
// predictions come from opt.Models when given.
func Run(m *fit.Model, theta []float64, data []*uv.Dataset, opt Options) (*Result, error) {
	if len(data) == 0 {
		return nil, errors.New("probe: no data")
	}
	g := opt.Grid
	if g.N == 0 {
		var err error
		if g, err = ModelGrid(m, data, 256); err != nil {
			return nil, err
		}
	}
	if opt.Radius <= 0 {
		return nil, fmt.Errorf("probe: radius %g arcsec must be > 0", opt.Radius)
	}
	nNull := opt.Null
	if nNull == 0 {
		nNull = 200
	}
	realSNR, noneSNR, maxFA := opt.RealSNR, opt.NoneSNR, opt.MaxFalseAlarm
	if realSNR == 0 {
		realSNR = 5
	}
	if noneSNR == 0 {
		noneSNR = 3
	}
	if maxFA == 0 {
		maxFA = 0.01
	}
	sky := NewSky(m, g, data)
	cut := Disc{X: opt.X, Y: opt.Y, R: opt.Radius}
	rows := &Rows{RefFreq: sky.RefFreq, Alpha: SpectralIndex(m, theta)}
	for i, d := range data {
		base, err := sky.Visibilities(theta, i, d, cut)
		if err != nil {
			return nil, fmt.Errorf("probe: model visibilities of %s: %w", d.Meta.Label, err)
		}
		scale := 1.0
		if i < len(m.Data) && m.Data[i].FluxScale != nil {
			scale = ParamValue(m, theta, m.Data[i].FluxScale)
		}
		rows.Add(d, base, scale)
	}
	res := &Result{X: opt.X, Y: opt.Y, Radius: opt.Radius, Pixel: g.Pixel, GridN: g.N,
		Weighting: opt.Weighting.String(), RefFreq: rows.RefFreq, Alpha: rows.Alpha, Rows: rows.Len()}

	var err error
	if res.Direct, err = DirectTest(rows, opt.X, opt.Y, opt.Radius, g.Pixel/2); err != nil {
		return nil, err
	}
	im, err := NewImager(rows, g, opt.Weighting, opt.Robust, opt.X, opt.Y, opt.Radius)
	if err != nil {
		return nil, err
	}
	res.ImageNoise = im.Noise
	resid := make([]complex128, rows.Len())
	for k := range resid {
		resid[k] = rows.Data[k] - rows.Base[k]
	}
	res.Image, res.Cut = im.Image(nil, resid), im.Cut
	if res.Null, err = NullTest(rows, im, nNull, opt.Seed); err != nil {
		return nil, err
	}
	// The base model's dirty image over the whole grid, for its peak.
	all := &uv.Dataset{U: rows.U, V: rows.V, Weight: rows.W, Re: make([]float64, rows.Len()), Im: make([]float64, rows.Len())}
	for k, b := range rows.Base {
		all.Re[k], all.Im[k] = real(b), imag(b)
	}
	if di, err := uv.MakeDirty(all, g, uv.ImagingOptions{Weighting: opt.Weighting, Robust: opt.Robust}); err == nil {
		for _, v := range di.Image {
			res.ModelPeak = math.Max(res.ModelPeak, v)
		}
	}
	if res.ModelPeak > 0 {
		res.Sidelobe = res.Null.BaseAt / res.ModelPeak
	}
	res.SidelobeSigma = res.Null.BaseAt / im.Noise
	res.Splits = SplitTests(rows, res.Direct.X, res.Direct.Y)

	res.Models = opt.Models
	if opt.Models != nil {
		// The direct-test flux of a model's emission inside the radius:
		// its visibilities minus those with the disc cut, fitted as a
		// point at the measured position with the data's weights.
		pointFit := func(pm *fit.Model, th []float64) (float64, error) {
			ps := NewSky(pm, g, data)
			cr := &Rows{RefFreq: rows.RefFreq, Alpha: SpectralIndex(pm, th)}
			for i, d := range data {
				full, err := ps.Visibilities(th, i, d, Disc{})
				if err != nil {
					return 0, err
				}
				rest, err := ps.Visibilities(th, i, d, cut)
				if err != nil {
					return 0, err
				}
				c := &uv.Dataset{Meta: d.Meta, U: d.U, V: d.V, Weight: d.Weight, Flag: d.Flag,
					Freqs: d.Freqs, FreqIndex: d.FreqIndex, Re: make([]float64, d.Len()), Im: make([]float64, d.Len())}
				for k := range full {
					v := full[k] - rest[k]
					c.Re[k], c.Im[k] = real(v), imag(v)
				}
				scale := 1.0
				if i < len(pm.Data) && pm.Data[i].FluxScale != nil {
					scale = ParamValue(pm, th, pm.Data[i].FluxScale)
				}
				cr.Add(c, nil, scale)
			}
			return cr.FluxAt(res.Direct.X, res.Direct.Y).Value, nil
		}
		for _, mf := range []*ModelFit{opt.Models.A, opt.Models.B} {
			p, err := Predict(mf, g, sky.RefFreq, opt.X, opt.Y, opt.Radius, 16, opt.Seed, pointFit)
			if err != nil {
				return nil, fmt.Errorf("probe: prediction of %s: %w", mf.Name, err)
			}
			res.Predictions = append(res.Predictions, p)
		}
	} else {
		res.ModelNote = opt.ModelNote
		if res.ModelNote == "" {
			res.ModelNote = "model test not run: name the pair of model files (without and with a central image) with --models A.toml,B.toml"
		}
	}
	res.verdict(realSNR, noneSNR, maxFA)
	return res, nil
}

func (r *Result) verdict(realSNR, noneSNR, maxFA float64) {
	d, n := r.Direct, r.Null
	fa := n.FalseAlarm
	faText := fmt.Sprintf("false-alarm probability %.3g ± %.2g (%d of %d null simulations at least as bright)", fa, n.FalseAlarmErr, n.Exceed, n.N)
	if n.Exceed == 0 {
		faText = fmt.Sprintf("false-alarm probability < %.3g (95%% bound 3/N; none of %d null simulations as bright)", n.UpperLimit95, n.N)
	}
	imgP := fmt.Sprintf("p = %.3g", n.ImageFalseAlarm)
	if n.ImageExceed == 0 {
		imgP = fmt.Sprintf("p < %.3g", n.UpperLimit95)
	}
	r.Reasons = append(r.Reasons,
		fmt.Sprintf("direct test: %.3g ± %.2g mJy at (%.3f, %.3f)\", %.1fσ in the visibilities (%.1fσ at the probed position itself)",
			d.Flux.Value*1e3, d.Flux.Err*1e3, d.X, d.Y, d.SNR, d.FixedSNR),
		"null test: residual dirty-image peak "+fmt.Sprintf("%.3g mJy/beam (%.1fσ); ", n.Observed*1e3, n.Observed/r.ImageNoise)+faText,
		fmt.Sprintf("dirty image (no model subtracted): peak %.3g mJy/beam (%.1fσ) at (%.3f, %.3f)\", reached by %d of %d null simulations (%s); sidelobes of the other images there: %.3g mJy/beam = %.1fσ = %.2g of the model's dirty peak",
			n.ImagePeak*1e3, n.ImagePeak/r.ImageNoise, n.ImageX, n.ImageY, n.ImageExceed, n.N, imgP, n.BaseAt*1e3, r.SidelobeSigma, r.Sidelobe))
	nSplit, okSplit, posSplit := 0, 0, 0
	for _, f := range r.Splits {
		for _, s := range f.Splits {
			nSplit++
			if s.Flux.Value > 0 {
				posSplit++
			}
		}
		if f.P >= 0.01 {
			okSplit += len(f.Splits)
		}
		var parts []string
		for _, s := range f.Splits {
			parts = append(parts, fmt.Sprintf("%s %.3g ± %.2g mJy", s.Name, s.Flux.Value*1e3, s.Flux.Err*1e3))
		}
		r.Reasons = append(r.Reasons, fmt.Sprintf("split by %s: %s; χ² = %.2f for %d dof, p = %.3g", f.Name, strings.Join(parts, ", "), f.Chi2, f.DOF, f.P))
	}
	modelText := ""
	modelSupports := true
	if mt := r.Models; mt != nil {
		r.Reasons = append(r.Reasons, fmt.Sprintf("model test: Δχ² = %.1f, ΔBIC = %.1f, ln B = %.1f (%s) for %s over %s",
			mt.DeltaChi2, mt.DeltaBIC, mt.LnBayes, mt.LnBayesFrom, mt.B.Name, mt.A.Name))
		modelSupports = mt.DeltaBIC > 0
		for _, p := range r.Predictions {
			if !p.Present {
				r.Reasons = append(r.Reasons, fmt.Sprintf("prediction of %s: no central image (%s); %.3g mJy inside the radius",
					p.Model, p.Note, p.Flux*1e3))
				continue
			}
			dev, errOnly := "", ""
			flux := fmt.Sprintf("%.3g ± %.2g mJy", p.Flux*1e3, p.FluxErr*1e3)
			point := fmt.Sprintf("%.3g ± %.2g mJy", p.PointFlux*1e3, p.PointFluxErr*1e3)
			if p.Samples < 2 {
				// No posterior draws: the model's uncertainty is unknown,
				// not zero.
				flux = fmt.Sprintf("%.3g mJy (uncertainty unavailable: no posterior draws nor Laplace covariance)", p.Flux*1e3)
				point = fmt.Sprintf("%.3g mJy", p.PointFlux*1e3)
				errOnly = " of the measurement alone"
			}
			if s := math.Hypot(p.PointFluxErr, d.Flux.Err); s > 0 {
				dev = fmt.Sprintf(", measured within %.1fσ%s", math.Abs(d.Flux.Value-p.PointFlux)/s, errOnly)
				if p.Model == mt.B.Name {
					modelText = fmt.Sprintf(", predicted by %s within %.1fσ%s", p.Model, math.Abs(d.Flux.Value-p.PointFlux)/s, errOnly)
				}
			}
			r.Reasons = append(r.Reasons, fmt.Sprintf("prediction of %s: central image at (%.3f, %.3f)\", μ = %.3g, %s inside the radius, of which a point fit at the measured position recovers %s%s",
				p.Model, p.X, p.Y, p.Mu, flux, point, dev))
		}
	} else {
		r.Reasons = append(r.Reasons, r.ModelNote)
	}
	faShort := fmt.Sprintf("false-alarm probability %.2g", fa)
	if n.Exceed == 0 {
		faShort = fmt.Sprintf("false-alarm probability < %.2g", n.UpperLimit95)
	}
	switch {
	case d.SNR >= realSNR && fa <= maxFA && okSplit == nSplit && posSplit == nSplit && modelSupports:
		r.Verdict = "real"
		r.Summary = fmt.Sprintf("real: %.1fσ in the visibilities, consistent in all %d splits, %s%s", d.SNR, nSplit, faShort, modelText)
	case d.SNR < noneSNR || fa > 0.05:
		r.Verdict = "not significant"
		r.Summary = fmt.Sprintf("not significant: %.1fσ in the visibilities, %s", d.SNR, faShort)
		if n.ImagePeak >= 3*r.ImageNoise && n.BaseAt >= 0.5*n.ImagePeak {
			r.Summary += fmt.Sprintf("; the image's %.1fσ spot is the dirty beam's sidelobe of the other images (%.1fσ there from the model alone)",
				n.ImagePeak/r.ImageNoise, r.SidelobeSigma)
		}
	default:
		r.Verdict = "inconclusive"
		r.Summary = fmt.Sprintf("inconclusive: %.1fσ in the visibilities, consistent in %d of %d splits, %s", d.SNR, okSplit, nSplit, faShort)
		if !modelSupports {
			r.Summary += ", the model test does not prefer a central image"
		}
	}
}

// Report writes the human-readable report of r.
func (r *Result) Report() string {
	var b strings.Builder
	fmt.Fprintf(&b, "probe at (%.3f, %.3f)\" within %.3g\", %d visibilities, %s weighting, fluxes at %.4g GHz with spectral index %.2f\n",
		r.X, r.Y, r.Radius, r.Rows, r.Weighting, r.RefFreq/1e9, r.Alpha)
	for _, s := range r.Reasons {
		fmt.Fprintf(&b, "  - %s\n", s)
	}
	fmt.Fprintf(&b, "verdict: %s\n", r.Summary)
	return b.String()
}
