package fit

import (
	"errors"
	"fmt"
	"math"
	"sync"
	"sync/atomic"

	"deflect/lensmodel"
	"deflect/source"
	"deflect/uv"
)

// Likelihood is the Gaussian likelihood of a model across its datasets,
// evaluated through the compressed, exact χ² of every frequency group:
//
//	ln L(θ) = Σ_d Σ_g [ −χ²_dg(θ)/(2 s_d²) + LogNorm_dg − 2 N_dg ln s_d ],
//
// N_dg the complex visibilities of group g of dataset d, LogNorm_dg the
// normalisation −Σ ln(2π/w_k) of its stated weights and s_d the dataset's
// noise scale (true σ = s_d × stated σ; free, fixed, or fixed from the
// weight-scale estimate). With the normalisation, evidences of different
// models of the same data compare.
//
// The model sky of group g of dataset d is
//
//	I_dg = f_d Σ_c (ν_g/ν_ref)^α_c R_c(x − Δx_d, y − Δy_d),
//
// R_c the lensed rendering of source component c at the reference frequency
// ν_ref (Jy per pixel), f_d the flux scale and (Δx_d, Δy_d) the astrometric
// offset of the dataset: a feature at (x, y) in the model appears at
// (x + Δx_d, y + Δy_d) in dataset d. Point components are lensed by the
// image finder and their images deposited on the grid with a windowed-sinc
// kernel (see depositPoint; visibility error ≤ 3e-6 relative). The primary beam of each group multiplies
// the sky inside uv.Compressed.
//
// LogLike is safe for concurrent use: scratch images come from a pool.
type Likelihood struct {
	Model *Model
	Grid  uv.Grid
	// RefFreq is ν_ref in Hz: [sky] ref_freq or the first dataset's
	// frequency (the geometric mean of its band edges); 0 when unknown
	// (no spectral scaling).
	RefFreq  float64
	Datasets []*DatasetData
	// Notes says what was chosen automatically.
	Notes []string

	pm        *paramMap
	pix       *pixelSource
	renderTol float64
	pool      sync.Pool
	bad       atomic.Int64
}

type likeScratch struct {
	vals   []float64
	render [][]float64 // per extended component
	img    []float64
	trace  []float64 // 2 N²: traced positions, then the window image
}

// NewLikelihood reads (or takes from the cache) and compresses every dataset
// of m on the model's grid, ready for LogLike.
func NewLikelihood(m *Model, opt LikelihoodOptions) (*Likelihood, error) {
	var pix *pixelSource
	for _, c := range m.Sources {
		if c.Kind == "pixels" {
			var err error
			if pix, err = newPixelSource(m, c); err != nil {
				return nil, err
			}
		}
	}
	g, data, notes, err := loadData(m, opt)
	if err != nil {
		return nil, err
	}
	l := &Likelihood{Model: m, Grid: g, Datasets: data, Notes: notes, pm: newParamMap(m), renderTol: opt.RenderTol, pix: pix}
	if l.renderTol == 0 {
		l.renderTol = DefaultRenderTol
	}
	l.RefFreq = m.Sky.RefFreq
	if l.RefFreq == 0 && len(data) > 0 {
		lo, hi := math.Inf(1), 0.0
		for _, c := range data[0].Groups {
			a, b := c.FreqRange()
			if a > 0 {
				lo, hi = math.Min(lo, a), math.Max(hi, b)
			}
		}
		if hi > 0 {
			l.RefFreq = math.Sqrt(lo * hi)
		}
	}
	if l.RefFreq == 0 {
		l.Notes = append(l.Notes, "no frequency known: spectral indices are ignored")
	}
	return l, nil
}

// Dim returns the number of free parameters.
func (l *Likelihood) Dim() int { return len(l.Model.Free) }

// Visibilities returns the number of complex visibilities of all datasets.
func (l *Likelihood) Visibilities() int {
	n := 0
	for _, d := range l.Datasets {
		n += d.Visibilities
	}
	return n
}

// Problem returns the sampling problem: the free parameters with their
// priors and LogLike.
func (l *Likelihood) Problem() Problem {
	return Problem{Dim: l.Dim(), LogLike: l.LogLike, Prior: l.Model.Priors()}
}

// Invalid returns how many evaluations so far met an invalid parameter
// combination or a non-finite χ² and returned −Inf.
func (l *Likelihood) Invalid() int64 { return l.bad.Load() }

// LogLike returns ln L(θ) for the free-parameter vector theta (in the order
// of Model.Free), −Inf for invalid parameter combinations.
func (l *Likelihood) LogLike(theta []float64) float64 {
	ll, _, err := l.eval(theta, false)
	if err != nil || math.IsNaN(ll) {
		l.bad.Add(1)
		return math.Inf(-1)
	}
	return ll
}

// Evaluation is the model at one parameter vector, with its parts.
type Evaluation struct {
	Theta   []float64
	LogLike float64
	Lens    lensmodel.Lens
	Source  source.Source // fluxes in Jy at RefFreq
	// PointImages are the images of the point components at RefFreq,
	// before any dataset offset or flux scale.
	PointImages []source.PointImage
	Datasets    []DatasetEval
	// Pixels is the most probable pixelated source on PixelGrid, for a
	// model with a "pixels" source; LogLike is then its evidence,
	// marginalised over the source (Suyu et al. 2006), and each
	// DatasetEval's LogLike the Gaussian term at that source.
	Pixels    *source.Inversion
	PixelGrid *source.PixelGrid
}

// DatasetEval is one dataset's share of an Evaluation.
type DatasetEval struct {
	Label string
	// Chi2 is Σ w |d − V|² with the stated weights; divide by
	// NoiseScale² for the χ² the likelihood uses.
	Chi2         float64
	NoiseScale   float64
	FluxScale    float64
	DX, DY       float64
	LogLike      float64
	Visibilities int
	Groups       []GroupEval
}

// GroupEval is one frequency group of a DatasetEval.
type GroupEval struct {
	Freq float64 // Hz
	Chi2 float64 // stated weights
	// Model is the model sky in Jy per pixel (before the primary beam) on
	// the likelihood's grid, FITS order.
	Model []float64
}

// Evaluate returns the model at theta with every dataset's χ² and model
// images.
func (l *Likelihood) Evaluate(theta []float64) (*Evaluation, error) {
	ll, ev, err := l.eval(theta, true)
	if err != nil {
		return nil, err
	}
	ev.LogLike = ll
	return ev, nil
}

// renderExtended renders each extended component c of src (indices
// extended) into sc.render, seen with the dataset offset (dx, dy), on the
// window of the grid where the lensed emission lies (see renderWindow).
func (l *Likelihood) renderExtended(sc *likeScratch, lens lensmodel.Lens, fast lensmodel.Mass, src source.Source, extended []int, dx, dy float64, ropt source.RenderOptions) {
	if len(extended) == 0 {
		return
	}
	comps := make([]source.Component, len(extended))
	for r, c := range extended {
		comps[r] = src.Components[c]
	}
	if len(sc.trace) < 2*l.Grid.Len() {
		sc.trace = make([]float64, 2*l.Grid.Len())
	}
	w, ok := renderWindow(l.Grid, lens, comps, dx, dy, sc.trace)
	if !ok {
		for r := range extended {
			clear(sc.render[r])
		}
		return
	}
	sub := sc.trace[:w.n*w.n]
	for r := range extended {
		source.Render(sub, w, fast, source.Source{Components: comps[r : r+1]}, ropt)
		pasteWindow(sc.render[r], sub, w)
	}
}

var errNonFinite = errors.New("fit: non-finite χ²")

func (l *Likelihood) eval(theta []float64, keep bool) (float64, *Evaluation, error) {
	sc, _ := l.pool.Get().(*likeScratch)
	if sc == nil {
		sc = &likeScratch{img: make([]float64, l.Grid.Len())}
	}
	defer l.pool.Put(sc)
	sc.vals = l.pm.values(sc.vals, theta)
	vals := sc.vals
	lens, err := l.pm.lens(vals)
	if err != nil {
		return 0, nil, err
	}
	if l.pix != nil {
		return l.pixelEval(theta, vals, lens, keep)
	}
	src, err := l.pm.source(vals, l.RefFreq)
	if err != nil {
		return 0, nil, err
	}
	var extended []int
	for c, comp := range src.Components {
		if _, ok := comp.(source.Point); !ok {
			extended = append(extended, c)
		}
	}
	fast := lens.Prepare()
	points, err := source.LensedPoints(lens, src, source.PointOptions{})
	if err != nil {
		return 0, nil, err
	}
	for len(sc.render) < len(extended) {
		sc.render = append(sc.render, make([]float64, l.Grid.Len()))
	}
	var ev *Evaluation
	if keep {
		ev = &Evaluation{Theta: append([]float64(nil), theta...), Lens: lens, Source: src, PointImages: points}
	}
	ropt := source.RenderOptions{Tol: l.renderTol}
	rendered := false
	var lastDX, lastDY float64
	var total float64
	for _, dd := range l.Datasets {
		d := dd.Data
		f := l.pm.get(vals, d.FluxScale)
		dx, dy := l.pm.get(vals, d.DX), l.pm.get(vals, d.DY)
		s := l.pm.get(vals, d.NoiseScale)
		if dd.FixedNoise > 0 {
			s = dd.FixedNoise
		}
		if !(s > 0) || !(f >= 0) {
			return 0, nil, fmt.Errorf("dataset %q: noise scale %g, flux scale %g: want both > 0", d.Label, s, f)
		}
		if !rendered || dx != lastDX || dy != lastDY {
			l.renderExtended(sc, lens, fast, src, extended, dx, dy, ropt)
			rendered, lastDX, lastDY = true, dx, dy
		}
		de := DatasetEval{Label: d.Label, NoiseScale: s, FluxScale: f, DX: dx, DY: dy, Visibilities: dd.Visibilities}
		for _, grp := range dd.Groups {
			nu := grp.Freq()
			img := sc.img
			clear(img)
			for r, c := range extended {
				a := f * src.SpectralFactor(src.Components[c].SpectralIndex(), nu)
				for k, v := range sc.render[r] {
					img[k] += a * v
				}
			}
			for _, p := range points {
				a := f * src.SpectralFactor(src.Components[p.Component].SpectralIndex(), nu)
				depositPoint(img, l.Grid, p.X+dx, p.Y+dy, a*p.Flux)
			}
			chi2 := grp.Chi2(img)
			if math.IsNaN(chi2) || math.IsInf(chi2, 0) {
				return 0, nil, errNonFinite
			}
			de.Chi2 += chi2
			de.LogLike += -chi2/(2*s*s) + grp.LogNorm() - 2*float64(grp.Count())*math.Log(s)
			if keep {
				de.Groups = append(de.Groups, GroupEval{Freq: nu, Chi2: chi2, Model: append([]float64(nil), img...)})
			}
		}
		total += de.LogLike
		if keep {
			ev.Datasets = append(ev.Datasets, de)
		}
	}
	return total, ev, nil
}
