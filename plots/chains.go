package plots

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/gonum/dsp/fourier"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Chain holds an ensemble sampler's history for TraceFigure and
// AutocorrFigure: Samples[w][t][k] is parameter k of walker w at step t.
// Every walker has the same number of steps.
type Chain struct {
	Names   []string // parameter labels with units
	Samples [][][]float64
}

func (ch Chain) check() (walkers, steps int, err error) {
	if len(ch.Names) == 0 {
		return 0, 0, fmt.Errorf("plots: chain: no parameter names")
	}
	walkers = len(ch.Samples)
	if walkers == 0 {
		return 0, 0, fmt.Errorf("plots: chain: no walkers")
	}
	steps = len(ch.Samples[0])
	if steps < 2 {
		return 0, 0, fmt.Errorf("plots: chain: %d steps, want ≥ 2", steps)
	}
	for w, wk := range ch.Samples {
		if len(wk) != steps {
			return 0, 0, fmt.Errorf("plots: chain: walker %d has %d steps, walker 0 has %d", w, len(wk), steps)
		}
		for t, x := range wk {
			if len(x) != len(ch.Names) {
				return 0, 0, fmt.Errorf("plots: chain: walker %d step %d has %d values, want %d", w, t, len(x), len(ch.Names))
			}
			for k, v := range x {
				if math.IsNaN(v) || math.IsInf(v, 0) {
					return 0, 0, fmt.Errorf("plots: chain: walker %d step %d parameter %q is %g", w, t, ch.Names[k], v)
				}
			}
		}
	}
	return walkers, steps, nil
}

// maxTraceVertices bounds the vertices drawn per walker line (a column-
// wide panel is about 900 pixels across at DPI).
const maxTraceVertices = 1000

// TraceFigure draws each parameter against step number, one thin
// translucent line per walker, one panel per parameter stacked with a
// shared step axis, at column width. Chains longer than 1000 steps are
// drawn as their envelope: each run of s = ⌈2·steps/1000⌉ steps contributes
// its lowest and highest value, in step order, so no excursion is hidden;
// the axis label states s.
func TraceFigure(ch Chain) (*Figure, error) {
	walkers, steps, err := ch.check()
	if err != nil {
		return nil, err
	}
	stride := 1
	if steps > maxTraceVertices {
		stride = (2*steps + maxTraceVertices - 1) / maxTraceVertices
	}
	xlabel := "step"
	if stride > 1 {
		xlabel = fmt.Sprintf("step (min–max per %d steps)", stride)
	}
	np := len(ch.Names)
	grid := plotGrid{plots: make([][]*plot.Plot, np)}
	alpha := uint8(max(40, min(200, 2000/walkers)))
	for k := range np {
		p := newPlot(xlabel, ch.Names[k])
		p.Y.Tick.Marker = fewTicks
		c := qualitative[0]
		c.A = alpha
		ls := draw.LineStyle{Color: premultiplied(c), Width: 0.4}
		for w := range walkers {
			p.Add(chunkedLine{xy: traceVertices(ch.Samples[w], k, stride), ls: ls})
		}
		p.X.Min, p.X.Max = 0, float64(steps-1)
		if k != np-1 {
			hideTickLabels(&p.X)
		}
		grid.plots[k] = []*plot.Plot{p}
	}
	f := &Figure{Width: ColumnWidth, Height: vg.Length(np)*0.75*vg.Inch + 0.5*vg.Inch}
	f.Add(0, 0, 1, 1, grid)
	return f, nil
}

// traceVertices returns parameter k of one walker against step: every step
// when stride is 1, else the minimum and maximum of each run of stride
// steps, in step order.
func traceVertices(walker [][]float64, k, stride int) plotter.XYs {
	steps := len(walker)
	if stride <= 1 {
		xy := make(plotter.XYs, steps)
		for t, x := range walker {
			xy[t] = plotter.XY{X: float64(t), Y: x[k]}
		}
		return xy
	}
	xy := make(plotter.XYs, 0, 2*(steps/stride+1))
	for t0 := 0; t0 < steps; t0 += stride {
		lo, hi := t0, t0
		for t := t0; t < min(steps, t0+stride); t++ {
			if walker[t][k] < walker[lo][k] {
				lo = t
			}
			if walker[t][k] > walker[hi][k] {
				hi = t
			}
		}
		a, b := min(lo, hi), max(lo, hi)
		xy = append(xy, plotter.XY{X: float64(a), Y: walker[a][k]})
		if b != a {
			xy = append(xy, plotter.XY{X: float64(b), Y: walker[b][k]})
		}
	}
	return xy
}

// chunkedLine strokes a long, solid polyline in pieces of 64 segments:
// the rasterizer's cost grows with the cells a single path covers per
// scan line, so a jagged trace drawn in one stroke costs far more than the
// same trace in short pieces.
type chunkedLine struct {
	xy plotter.XYs
	ls draw.LineStyle
}

const chunkSegments = 64

func (l chunkedLine) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	pts := make([]vg.Point, len(l.xy))
	for k, q := range l.xy {
		pts[k] = vg.Point{X: trX(q.X), Y: trY(q.Y)}
	}
	for a := 0; a < len(pts)-1; a += chunkSegments {
		b := min(len(pts), a+chunkSegments+1)
		c.StrokeLines(l.ls, c.ClipLinesXY(pts[a:b])...)
	}
}

// DataRange implements plot.DataRanger.
func (l chunkedLine) DataRange() (xmin, xmax, ymin, ymax float64) {
	return plotter.XYRange(l.xy)
}

// premultiplied converts non-premultiplied colour to color.RGBA.
func premultiplied(c color.NRGBA) color.RGBA {
	r, g, b, a := c.RGBA()
	return color.RGBA{R: uint8(r >> 8), G: uint8(g >> 8), B: uint8(b >> 8), A: uint8(a >> 8)}
}

// Autocorrelation returns the normalised autocorrelation function ρ(τ),
// τ = 0 … maxLag, of the series x (mean removed), computed with an FFT on
// a zero-padded copy:
//
//	ρ(τ) = Σ_t (x_t − x̄)(x_{t+τ} − x̄) / Σ_t (x_t − x̄)²
//
// so ρ(0) = 1. maxLag is clipped to len(x) − 1. A constant series returns
// ρ = 1 at τ = 0 and 0 elsewhere.
func Autocorrelation(x []float64, maxLag int) []float64 {
	n := len(x)
	maxLag = min(maxLag, n-1)
	m := 1
	for m < 2*n {
		m <<= 1
	}
	mean := 0.0
	for _, v := range x {
		mean += v
	}
	mean /= float64(n)
	buf := make([]float64, m)
	for k, v := range x {
		buf[k] = v - mean
	}
	fft := fourier.NewFFT(m)
	coef := fft.Coefficients(nil, buf)
	for k, c := range coef {
		coef[k] = complex(real(c)*real(c)+imag(c)*imag(c), 0)
	}
	acf := fft.Sequence(nil, coef)
	rho := make([]float64, maxLag+1)
	if !(acf[0] > 0) {
		rho[0] = 1
		return rho
	}
	for k := range rho {
		rho[k] = acf[k] / acf[0]
	}
	return rho
}

// IntegratedTime returns the integrated autocorrelation time
//
//	τ_int(M) = 1 + 2 Σ_{t=1}^{M} ρ(t)
//
// with Sokal's self-consistent window: the smallest M with M ≥ c·τ_int(M)
// (c = 5 is the usual choice), and reports whether such a window was found
// within ρ (if not, τ is the estimate at the largest lag and too short a
// chain is the likely cause).
//
// References:
//   - A. D. Sokal (1997), "Monte Carlo methods in statistical mechanics:
//     foundations and new algorithms", in Functional Integration, NATO ASI
//     Series B 361, 131–192, §3 (automatic windowing).
func IntegratedTime(rho []float64, c float64) (tau float64, window int, ok bool) {
	tau = 1
	for m := 1; m < len(rho); m++ {
		tau += 2 * rho[m]
		if float64(m) >= c*tau {
			return tau, m, true
		}
	}
	return tau, len(rho) - 1, false
}

// AutocorrFigure draws, per parameter, the autocorrelation function
// averaged over walkers against lag, up to maxLag steps (0 means a quarter
// of the chain), at column width; the legend gives each parameter's
// integrated autocorrelation time from the averaged function (Sokal window,
// c = 5), marked "≥" where the window did not close within maxLag.
func AutocorrFigure(ch Chain, maxLag int) (*Figure, error) {
	walkers, steps, err := ch.check()
	if err != nil {
		return nil, err
	}
	if maxLag <= 0 {
		maxLag = max(1, steps/4)
	}
	maxLag = min(maxLag, steps-1)
	p := newPlot("lag (steps)", "autocorrelation ρ")
	p.Legend.Top = true
	p.Add(zeroLine())
	x := make([]float64, steps)
	for k, name := range ch.Names {
		mean := make([]float64, maxLag+1)
		for w := range walkers {
			for t := range steps {
				x[t] = ch.Samples[w][t][k]
			}
			for l, r := range Autocorrelation(x, maxLag) {
				mean[l] += r / float64(walkers)
			}
		}
		tau, _, ok := IntegratedTime(mean, 5)
		xy := make(plotter.XYs, len(mean))
		for l, r := range mean {
			xy[l] = plotter.XY{X: float64(l), Y: r}
		}
		ls := lineStyle(qcolor(k))
		if k >= len(qualitative)-1 {
			ls.Dashes = dashed
		}
		l, err := newLine(xy, ls)
		if err != nil {
			return nil, err
		}
		p.Add(l)
		rel := "≈"
		if !ok {
			rel = "≥"
		}
		p.Legend.Add(fmt.Sprintf("%s: τ %s %s", name, rel, fmtG(tau)), l)
	}
	p.X.Min, p.X.Max = 0, float64(maxLag)
	p.Y.Min, p.Y.Max = -0.25, 1.05
	f := &Figure{Width: ColumnWidth, Height: 2.4 * vg.Inch}
	f.Add(0, 0, 1, 1, plotGrid{plots: [][]*plot.Plot{{p}}})
	return f, nil
}
