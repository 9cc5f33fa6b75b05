package plots

import (
	"fmt"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Flux is a flux density and its 1σ error, mJy.
type Flux struct {
	Value, Err float64 // mJy
}

// Probe holds the inputs of ProbeFigure: a test for faint emission at one
// sky position (e.g. a central image), its repetition on disjoint splits of
// the data, and the distribution of the same statistic where no source is
// expected.
type Probe struct {
	// Image is the cut-out shown (e.g. the residual dirty image), Jy/beam,
	// drawn in mJy/beam; Beam is drawn in its corner.
	Image SkyImage
	Beam  Beam
	// At is the probed position, arcsec.
	At Point
	// Zoom, when set, shows only the pixels of Image whose centres lie in
	// the box.
	Zoom *Box
	// Direct is the flux from the test on all the data.
	Direct Flux
	// Splits are the fluxes from the same test on each split of the data;
	// SplitLabels (optional) name them on the axis.
	Splits      []Flux
	SplitLabels []string
	// Null are values of the statistic where no source is expected, in
	// NullUnit; Observed is the value compared with them.
	Null     []float64
	Observed float64
	// NullUnit is the unit of Null and Observed; empty means "mJy".
	NullUnit string
	// FalseAlarm is the probability of a null value at least as large as
	// Observed, or with FalseAlarmUpper an upper bound on it. When ≤ 0 it
	// is computed from Null by EmpiricalFalseAlarm.
	FalseAlarm      float64
	FalseAlarmUpper bool
}

// EmpiricalFalseAlarm returns the permutation-test p-value
//
//	p = (1 + #{null ≥ observed}) / (1 + n)
//
// which never reports 0 from a finite null sample, and the count of
// exceedances.
//
// References:
//   - B. V. North, D. Curtis & P. C. Sham (2002), Am. J. Hum. Genet. 71,
//     439–441, eq. 1.
func EmpiricalFalseAlarm(null []float64, observed float64) (p float64, exceed int) {
	for _, v := range null {
		if v >= observed {
			exceed++
		}
	}
	return float64(1+exceed) / float64(1+len(null)), exceed
}

// WeightedMean returns the inverse-variance weighted mean of fluxes and its
// 1σ error, Σ(v/σ²)/Σ(1/σ²) and 1/√Σ(1/σ²) (mJy).
func WeightedMean(fs []Flux) (Flux, error) {
	var sw, swv float64
	for k, f := range fs {
		if !(f.Err > 0) || math.IsInf(f.Err, 0) || math.IsNaN(f.Value) {
			return Flux{}, fmt.Errorf("plots: flux %d: %g ± %g mJy, want finite value and error > 0", k, f.Value, f.Err)
		}
		w := 1 / (f.Err * f.Err)
		sw += w
		swv += w * f.Value
	}
	if sw == 0 {
		return Flux{}, fmt.Errorf("plots: weighted mean of no fluxes")
	}
	return Flux{Value: swv / sw, Err: 1 / math.Sqrt(sw)}, nil
}

// ProbeFigure draws, at page width, three panels: the image around the
// probed position (marked with a cross); the direct-test flux and the
// split-test fluxes as points with 1σ error bars, with the splits'
// weighted mean ±1σ as a band; and the histogram of the null distribution
// with the observed value marked and the false-alarm probability written.
func ProbeFigure(pr Probe) (*Figure, error) {
	if err := pr.Image.check("probe image"); err != nil {
		return nil, err
	}
	if len(pr.Null) == 0 {
		return nil, fmt.Errorf("plots: probe: empty null distribution")
	}
	if pr.SplitLabels != nil && len(pr.SplitLabels) != len(pr.Splits) {
		return nil, fmt.Errorf("plots: probe: %d split labels for %d splits", len(pr.SplitLabels), len(pr.Splits))
	}
	for k, f := range pr.Splits {
		if !(f.Err > 0) || math.IsInf(f.Err, 0) || math.IsNaN(f.Value) || math.IsInf(f.Value, 0) {
			return nil, fmt.Errorf("plots: probe: split %d flux %g ± %g mJy, want a finite value and error > 0", k, f.Value, f.Err)
		}
	}
	for k, v := range pr.Null {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, fmt.Errorf("plots: probe: null value %d is %g", k, v)
		}
	}
	f := &Figure{Width: PageWidth, Height: 2.4 * vg.Inch}

	// Image.
	v, err := newView(pr.Image, pr.Zoom)
	if err != nil {
		return nil, err
	}
	const mJy = 1e3
	lo, hi := v.minMax(mJy)
	ip := skyPlot(v, Viridis, lo, hi, mJy, eastLbl, nrthLbl)
	ip.Title.Text = "image at probed position"
	if err := addMarks(ip, []Point{pr.At}, draw.GlyphStyle{Color: white, Radius: 4, Shape: draw.CrossGlyph{}}); err != nil {
		return nil, err
	}
	ip.Add(beamMark{pr.Beam})
	freezeRange(ip, v)
	f.Add(0, 0, 0.35, 1, imagePanel{p: ip, bar: &colorBar{cm: Viridis, lo: lo, hi: hi, label: "mJy/beam"}})

	// Fluxes.
	fp := newPlot("", "flux density (mJy)")
	names := []string{"all"}
	pts := errPts{{0, pr.Direct.Value, pr.Direct.Err}}
	for k, s := range pr.Splits {
		pts = append(pts, errPt{float64(k + 1), s.Value, s.Err})
		if pr.SplitLabels != nil {
			names = append(names, pr.SplitLabels[k])
		} else {
			names = append(names, fmt.Sprintf("split %d", k+1))
		}
	}
	for k, q := range pts {
		if math.IsNaN(q.y) || math.IsNaN(q.e) || math.IsInf(q.y, 0) || math.IsInf(q.e, 0) || q.e < 0 {
			return nil, fmt.Errorf("plots: probe: flux %q is %g ± %g mJy", names[k], q.y, q.e)
		}
	}
	fp.Add(zeroLine())
	if len(pr.Splits) > 0 {
		// The splits partition the same data in several ways, so their
		// weighted mean would count each visibility more than once; the
		// reference band is the test on all the data.
		m := pr.Direct
		x0, x1 := 0.5, float64(len(pr.Splits))+0.5
		band, err := plotter.NewPolygon(plotter.XYs{{X: x0, Y: m.Value - m.Err}, {X: x1, Y: m.Value - m.Err}, {X: x1, Y: m.Value + m.Err}, {X: x0, Y: m.Value + m.Err}})
		if err != nil {
			return nil, err
		}
		c := qualitative[5]
		c.A = 90
		band.Color = premultiplied(c)
		band.LineStyle.Width = 0
		fp.Add(band)
		fp.Legend.Add("all data "+fmtPM(m.Value, m.Err)+" mJy", band)
	}
	if err := addErrPts(fp, pts, qualitative[0], ""); err != nil {
		return nil, err
	}
	fp.NominalX(names...)
	fp.X.Tick.Label.Font.Size = tickSize
	fp.X.Min, fp.X.Max = -0.6, float64(len(pr.Splits))+0.6
	fp.Title.Text = "direct and split tests"
	fp.Legend.Top = true
	ymin, ymax := 0.0, 0.0
	for _, q := range pts {
		ymin, ymax = math.Min(ymin, q.y-q.e), math.Max(ymax, q.y+q.e)
	}
	pad := 0.35 * (ymax - ymin)
	if pad == 0 {
		pad = 1
	}
	fp.Y.Min, fp.Y.Max = ymin-0.1*pad, ymax+pad // room for the legend

	// Null distribution.
	unit := pr.NullUnit
	if unit == "" {
		unit = "mJy"
	}
	np := newPlot("statistic ("+unit+")", "null draws")
	nb := max(10, min(40, int(math.Sqrt(float64(len(pr.Null))))))
	vals := make(plotter.Values, len(pr.Null))
	copy(vals, pr.Null)
	h, err := plotter.NewHist(vals, nb)
	if err != nil {
		return nil, fmt.Errorf("plots: probe: null histogram: %w", err)
	}
	h.FillColor = qualitative[5]
	h.LineStyle = draw.LineStyle{Color: qualitative[0], Width: axisWidth}
	np.Add(h)
	np.Add(vline(pr.Observed, draw.LineStyle{Color: qualitative[1], Width: lineWidth}))
	p, exceed := pr.FalseAlarm, 0
	lines := []string{fmt.Sprintf("observed %s %s", fmtG(pr.Observed), unit)}
	if p > 0 {
		rel := "="
		if pr.FalseAlarmUpper {
			rel = "<"
		}
		lines = append(lines, fmt.Sprintf("false-alarm p %s %s", rel, fmtP(p)))
	} else {
		p, exceed = EmpiricalFalseAlarm(pr.Null, pr.Observed)
		rel := "="
		if exceed == 0 {
			rel = "<"
		}
		lines = append(lines, fmt.Sprintf("false-alarm p %s %s", rel, fmtP(p)),
			fmt.Sprintf("(%d of %d null draws ≥ observed)", exceed, len(pr.Null)))
	}
	xlo, xhi := math.Min(h.Bins[0].Min, pr.Observed), math.Max(h.Bins[len(h.Bins)-1].Max, pr.Observed)
	// Write on the side away from the observed line.
	right := pr.Observed < (xlo+xhi)/2
	np.Add(textPanel{lines: lines, right: right, col: black})
	span := xhi - xlo
	np.X.Min, np.X.Max = xlo-0.05*span, xhi+0.05*span
	np.Y.Min = 0
	np.Y.Max *= 1.45 // room for the text
	np.Title.Text = "null distribution"
	f.Add(0.37, 0, 0.68, 1, plotGrid{plots: [][]*plot.Plot{{fp}}})
	f.Add(0.68, 0, 1, 1, plotGrid{plots: [][]*plot.Plot{{np}}})
	return f, nil
}

// fmtP formats a probability: fixed notation down to 0.001, scientific
// below.
func fmtP(p float64) string {
	if p >= 1e-3 {
		return fmt.Sprintf("%.3g", p)
	}
	return fmt.Sprintf("%.2g", p)
}

// fmtPM writes "v ± e" with e to two significant figures and v to the
// same decimal place.
func fmtPM(v, e float64) string {
	if !(e > 0) || math.IsInf(e, 0) {
		return fmtG(v) + " ± " + fmtG(e)
	}
	dec := max(0, 1-int(math.Floor(math.Log10(e))))
	return minusSign(fmt.Sprintf("%.*f", dec, v)) + " ± " + fmt.Sprintf("%.*f", dec, e)
}
