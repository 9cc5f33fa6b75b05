package plots

import (
	"fmt"
	"image/color"
	"math"
	"strconv"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// arcsecPerRadian is 180·3600/π.
const arcsecPerRadian = 180 * 3600 / math.Pi

// Visibilities holds the inputs of VisibilityFigure and BinVisibilities.
// All slices are indexed by visibility and must have equal lengths.
type Visibilities struct {
	U, V   []float64 // wavelengths, u east, v north
	Re, Im []float64 // Jy
	// Weight is 1/σ² with σ the rms of each part, Jy⁻²; rows of weight 0
	// carry no information and add nothing to any bin.
	Weight []float64
	// ModelRe and ModelIm, Jy, are optional (both nil for no model).
	ModelRe, ModelIm []float64
	// Shift, when set, moves the phase centre to this sky offset (arcsec)
	// before binning; see BinVisibilities.
	Shift *Point
	// Bins is the number of equal-width uv-distance bins; 0 means 16.
	Bins int
	// AmpPhase makes VisibilityFigure draw amplitude and phase of the
	// binned means instead of their real and imaginary parts.
	AmpPhase bool
}

// VisBin is one uv-distance bin.
type VisBin struct {
	UV       float64 // weighted mean uv distance, wavelengths
	Re, Im   float64 // weighted means, Jy
	Err      float64 // standard error of Re and of Im, 1/√Σw, Jy
	ModelRe  float64 // weighted mean model, Jy (0 without model)
	ModelIm  float64
	N        int     // visibilities with positive weight
	SumW     float64 // Σw, Jy⁻²
	Lo, Hi   float64 // bin edges, wavelengths
	HasModel bool
}

// BinVisibilities averages visibilities in equal-width bins of uv distance
// √(u² + v²) from 0 to the largest, each value weighted by its weight w:
//
//	V̄ = Σ w V / Σ w,   σ(V̄) = 1/√Σw   (for Re and Im separately)
//
// With Shift = (x0, y0) arcsec, every data and model visibility is first
// multiplied by
//
//	exp(+2πi (u l0 + v m0)),   l0 = x0/206264.8…, m0 = y0/206264.8…
//
// which, under the convention V = Σ I exp(−2πi (u l + v m)), moves the
// phase centre to (x0, y0): a point source of flux S there becomes the
// constant S + 0i, so a compact component's flux reads off the plot.
// Empty bins are left out of the result.
func BinVisibilities(in Visibilities) ([]VisBin, error) {
	n := len(in.U)
	for name, s := range map[string][]float64{"v": in.V, "re": in.Re, "im": in.Im, "weight": in.Weight} {
		if len(s) != n {
			return nil, fmt.Errorf("plots: visibilities: %d u values but %d %s values", n, len(s), name)
		}
	}
	model := in.ModelRe != nil || in.ModelIm != nil
	if model && (len(in.ModelRe) != n || len(in.ModelIm) != n) {
		return nil, fmt.Errorf("plots: visibilities: %d rows but %d model re and %d model im values", n, len(in.ModelRe), len(in.ModelIm))
	}
	nb := in.Bins
	if nb == 0 {
		nb = 16
	}
	if nb < 0 {
		return nil, fmt.Errorf("plots: visibilities: %d bins, want > 0", nb)
	}
	rmax := 0.0
	for k := range n {
		if w := in.Weight[k]; w < 0 || math.IsNaN(w) || math.IsInf(w, 0) {
			return nil, fmt.Errorf("plots: visibilities: row %d: weight %g, want finite ≥ 0", k, w)
		}
		for _, x := range []float64{in.U[k], in.V[k], in.Re[k], in.Im[k]} {
			if math.IsNaN(x) || math.IsInf(x, 0) {
				return nil, fmt.Errorf("plots: visibilities: row %d: non-finite u, v, re or im", k)
			}
		}
		rmax = math.Max(rmax, math.Hypot(in.U[k], in.V[k]))
	}
	width := rmax * (1 + 1e-12) / float64(nb)
	if width == 0 {
		width = 1
	}
	var l0, m0 float64
	if in.Shift != nil {
		l0, m0 = in.Shift.X/arcsecPerRadian, in.Shift.Y/arcsecPerRadian
	}
	type acc struct {
		w, wr, wi, wmr, wmi, wuv float64
		n                        int
	}
	accs := make([]acc, nb)
	for k := range n {
		w := in.Weight[k]
		if w == 0 {
			continue
		}
		u, v := in.U[k], in.V[k]
		re, im := in.Re[k], in.Im[k]
		var mr, mi float64
		if model {
			mr, mi = in.ModelRe[k], in.ModelIm[k]
		}
		if in.Shift != nil {
			s, c := math.Sincos(2 * math.Pi * (u*l0 + v*m0))
			re, im = re*c-im*s, re*s+im*c
			mr, mi = mr*c-mi*s, mr*s+mi*c
		}
		r := math.Hypot(u, v)
		b := min(int(r/width), nb-1)
		a := &accs[b]
		a.w += w
		a.wr += w * re
		a.wi += w * im
		a.wmr += w * mr
		a.wmi += w * mi
		a.wuv += w * r
		a.n++
	}
	var out []VisBin
	for b, a := range accs {
		if a.n == 0 {
			continue
		}
		out = append(out, VisBin{
			UV: a.wuv / a.w, Re: a.wr / a.w, Im: a.wi / a.w, Err: 1 / math.Sqrt(a.w),
			ModelRe: a.wmr / a.w, ModelIm: a.wmi / a.w, N: a.n, SumW: a.w,
			Lo: float64(b) * width, Hi: float64(b+1) * width, HasModel: model,
		})
	}
	return out, nil
}

// VisibilityFigure draws the binned real and imaginary parts (or, with
// AmpPhase, amplitude in mJy and phase in degrees) against uv distance
// (kλ), in mJy, data as points with 1σ error bars and the model as a line,
// with the residual (data − model) in panels below, at page width.
func VisibilityFigure(in Visibilities) (*Figure, error) {
	bins, err := BinVisibilities(in)
	if err != nil {
		return nil, err
	}
	if len(bins) == 0 {
		return nil, fmt.Errorf("plots: visibilities: no visibility with positive weight")
	}
	parts := reImParts
	if in.AmpPhase {
		parts = ampPhaseParts
	}
	model := bins[0].HasModel
	grid := plotGrid{plots: [][]*plot.Plot{{nil, nil}, {nil, nil}}, heights: []float64{2, 1}}
	if !model {
		grid = plotGrid{plots: [][]*plot.Plot{{nil, nil}}}
	}
	xmax := bins[len(bins)-1].Hi / 1e3 * 1.02
	for c, part := range parts {
		top := newPlot("uv distance (kλ)", part.name)
		data := make(errPts, len(bins))
		mod := make(plotter.XYs, len(bins))
		res := make(errPts, len(bins))
		for k, b := range bins {
			x := b.UV / 1e3
			v, m, e := part.val(b), part.mod(b), part.err(b)
			data[k] = errPt{x, v, e}
			mod[k] = plotter.XY{X: x, Y: m}
			res[k] = errPt{x, part.diff(v, m), e}
		}
		label := ""
		if c == 0 {
			label = "data"
		}
		if err := addErrPts(top, data, qualitative[0], label); err != nil {
			return nil, err
		}
		top.Add(zeroLine())
		if model {
			l, err := plotter.NewLine(mod)
			if err != nil {
				return nil, err
			}
			l.LineStyle = lineStyle(qualitative[1])
			top.Add(l)
			if c == 0 {
				top.Legend.Add("model", l)
			}
		}
		top.Legend.Top = true
		top.X.Min, top.X.Max = 0, xmax
		part.clampY(top)
		if in.Shift != nil && c == 1 {
			top.Add(textPanel{lines: []string{fmt.Sprintf("phase centre at (%s, %s) arcsec", fmtG(in.Shift.X), fmtG(in.Shift.Y))}, right: true, col: black})
		}
		grid.plots[0][c] = top
		if !model {
			continue
		}
		hideTickLabels(&top.X)
		bot := newPlot("uv distance (kλ)", part.resName)
		if err := addErrPts(bot, res, qualitative[0], ""); err != nil {
			return nil, err
		}
		bot.Add(zeroLine())
		bot.X.Min, bot.X.Max = 0, xmax
		part.clampY(bot)
		grid.plots[1][c] = bot
	}
	f := &Figure{Width: PageWidth, Height: 3.2 * vg.Inch}
	if !model {
		f.Height = 2.4 * vg.Inch
	}
	f.Add(0, 0, 1, 1, grid)
	return f, nil
}

// visPart is one column of the visibility figure: how to read the data,
// model and error of a bin in display units, and the residual. When limit
// is positive the y axes show at most [−limit, limit], whatever the error
// bars reach (they are clipped at the axes).
type visPart struct {
	name, resName string
	val, mod, err func(b VisBin) float64
	diff          func(data, model float64) float64
	limit         float64
}

// clampY limits p's y range to [−limit, limit], and labels a range of
// 180 or more every 90 (phases in degrees).
func (vp visPart) clampY(p *plot.Plot) {
	if vp.limit <= 0 {
		return
	}
	p.Y.Min, p.Y.Max = math.Max(p.Y.Min, -vp.limit), math.Min(p.Y.Max, vp.limit)
	if p.Y.Max-p.Y.Min >= 180 {
		p.Y.Tick.Marker = stepTicks{step: 90}
	}
}

// stepTicks labels the multiples of step in range, with an unlabelled
// tick halfway between.
type stepTicks struct{ step float64 }

func (st stepTicks) Ticks(lo, hi float64) []plot.Tick {
	var ts []plot.Tick
	for k := math.Ceil(2 * lo / st.step); k*st.step/2 <= hi; k++ {
		v := k * st.step / 2
		t := plot.Tick{Value: v}
		if math.Mod(k, 2) == 0 {
			t.Label = minusSign(strconv.FormatFloat(v, 'f', -1, 64))
		}
		ts = append(ts, t)
	}
	return ts
}

func minus(d, m float64) float64 { return d - m }

var reImParts = []visPart{
	{"Re V (mJy)", "data − model (mJy)",
		func(b VisBin) float64 { return 1e3 * b.Re }, func(b VisBin) float64 { return 1e3 * b.ModelRe },
		func(b VisBin) float64 { return 1e3 * b.Err }, minus, 0},
	{"Im V (mJy)", "data − model (mJy)",
		func(b VisBin) float64 { return 1e3 * b.Im }, func(b VisBin) float64 { return 1e3 * b.ModelIm },
		func(b VisBin) float64 { return 1e3 * b.Err }, minus, 0},
}

// ampPhaseParts reads amplitude |V̄| with error σ, and phase arg V̄ in
// degrees with the high signal-to-noise error σ/|V̄| rad (capped at 180°);
// phase residuals are wrapped into (−180°, 180°], and the phase axes show
// no more than [−180°, 180°].
var ampPhaseParts = []visPart{
	{"|V| (mJy)", "data − model (mJy)",
		func(b VisBin) float64 { return 1e3 * math.Hypot(b.Re, b.Im) }, func(b VisBin) float64 { return 1e3 * math.Hypot(b.ModelRe, b.ModelIm) },
		func(b VisBin) float64 { return 1e3 * b.Err }, minus, 0},
	{"phase (deg)", "data − model (deg)",
		func(b VisBin) float64 { return math.Atan2(b.Im, b.Re) * 180 / math.Pi },
		func(b VisBin) float64 { return math.Atan2(b.ModelIm, b.ModelRe) * 180 / math.Pi },
		func(b VisBin) float64 { return math.Min(180, b.Err/math.Hypot(b.Re, b.Im)*180/math.Pi) },
		func(d, m float64) float64 { return wrapDegrees(d - m) }, 180},
}

// wrapDegrees maps an angle in degrees into (−180, 180].
func wrapDegrees(a float64) float64 {
	a = math.Mod(a, 360)
	switch {
	case a > 180:
		a -= 360
	case a <= -180:
		a += 360
	}
	return a
}

// zeroLine is a horizontal dotted grey line at y = 0 across the data area.
func zeroLine() plot.Plotter {
	f := plotter.NewFunction(func(float64) float64 { return 0 })
	f.LineStyle = draw.LineStyle{Color: grey, Width: axisWidth, Dashes: dotted}
	return f
}

type errPt struct{ x, y, e float64 }

type errPts []errPt

func (e errPts) Len() int                      { return len(e) }
func (e errPts) XY(i int) (x, y float64)       { return e[i].x, e[i].y }
func (e errPts) YError(i int) (lo, hi float64) { return e[i].e, e[i].e }

// addErrPts adds points with symmetric error bars in colour col, with a
// legend entry when label is not empty.
func addErrPts(p *plot.Plot, pts errPts, col color.Color, label string) error {
	eb, err := plotter.NewYErrorBars(pts)
	if err != nil {
		return err
	}
	eb.LineStyle = draw.LineStyle{Color: col, Width: axisWidth}
	eb.CapWidth = 3
	s, err := plotter.NewScatter(pts)
	if err != nil {
		return err
	}
	s.GlyphStyle = draw.GlyphStyle{Color: col, Radius: 1.6, Shape: draw.CircleGlyph{}}
	p.Add(eb, s)
	if label != "" {
		p.Legend.Add(label, s)
	}
	return nil
}
