package plots

import (
	"fmt"
	"math"
	"slices"
	"strconv"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Posterior holds weighted posterior samples for CornerFigure.
type Posterior struct {
	// Names label the parameters, with units, e.g. "θ_E (arcsec)".
	Names []string
	// Samples[s][k] is parameter k of sample s.
	Samples [][]float64
	// Weights, optional (nil: equal), are non-negative sample weights, e.g.
	// nested-sampling importance weights; they need not be normalised.
	Weights []float64
	// Marker, optional, marks one point in parameter space (best fit or
	// truth); NaN entries mark nothing for that parameter. MarkerLabel
	// names it in the key (e.g. "truth", "best fit"); empty means "marked".
	Marker      []float64
	MarkerLabel string
	// Bins is the number of histogram bins per parameter; 0 means 24.
	Bins int
}

// CornerFigure draws the 1-D marginal histograms on the diagonal, with the
// weighted median and 68% interval written above each, and the 2-D
// marginals below it as the 68% (solid) and 95% (dashed) highest-density
// credible contours of the weighted 2-D histogram, smoothed by a Gaussian
// of one bin. Each axis spans the full range of the samples of positive
// weight.
func CornerFigure(post Posterior) (*Figure, error) {
	np := len(post.Names)
	if np == 0 {
		return nil, fmt.Errorf("plots: corner: no parameter names")
	}
	w, err := sampleWeights(post.Samples, post.Weights, np)
	if err != nil {
		return nil, fmt.Errorf("plots: corner: %w", err)
	}
	if post.Marker != nil && len(post.Marker) != np {
		return nil, fmt.Errorf("plots: corner: marker has %d values, want %d", len(post.Marker), np)
	}
	nb := post.Bins
	if nb == 0 {
		nb = 24
	}
	if nb < 2 {
		return nil, fmt.Errorf("plots: corner: %d bins, want ≥ 2", nb)
	}
	lo, hi := make([]float64, np), make([]float64, np)
	for k := range np {
		lo[k], hi[k] = math.Inf(1), math.Inf(-1)
		for s, x := range post.Samples {
			if w[s] > 0 {
				lo[k], hi[k] = math.Min(lo[k], x[k]), math.Max(hi[k], x[k])
			}
		}
		if lo[k] == hi[k] {
			lo[k], hi[k] = lo[k]-0.5, hi[k]+0.5
		}
	}
	col := func(k int) []float64 {
		c := make([]float64, len(post.Samples))
		for s, x := range post.Samples {
			c[s] = x[k]
		}
		return c
	}
	cols := make([][]float64, np)
	for k := range np {
		cols[k] = col(k)
	}
	grid := plotGrid{plots: make([][]*plot.Plot, np)}
	mk := func(k int) (float64, bool) {
		if post.Marker == nil || math.IsNaN(post.Marker[k]) {
			return 0, false
		}
		return post.Marker[k], true
	}
	markStyle := draw.LineStyle{Color: qualitative[1], Width: axisWidth}
	for r := range np {
		grid.plots[r] = make([]*plot.Plot, np)
		for c := 0; c <= r; c++ {
			p := newPlot(post.Names[c], post.Names[r])
			p.X.Tick.Marker = fewTicks
			p.Y.Tick.Marker = fewTicks
			if r == c {
				h := Histogram(cols[c], w, lo[c], hi[c], nb)
				top := slices.Max(h)
				step := make(plotter.XYs, 0, 2*nb+2)
				step = append(step, plotter.XY{X: lo[c], Y: 0})
				dx := (hi[c] - lo[c]) / float64(nb)
				for b, v := range h {
					step = append(step, plotter.XY{X: lo[c] + float64(b)*dx, Y: v / top}, plotter.XY{X: lo[c] + float64(b+1)*dx, Y: v / top})
				}
				step = append(step, plotter.XY{X: hi[c], Y: 0})
				l, err := newLine(step, lineStyle(qualitative[0]))
				if err != nil {
					return nil, err
				}
				p.Add(l)
				q := WeightedQuantiles(cols[c], w, 0.16, 0.5, 0.84)
				for m, v := range q {
					ls := draw.LineStyle{Color: grey, Width: axisWidth, Dashes: dashed}
					if m == 1 {
						ls.Dashes = nil
					}
					p.Add(vline(v, ls))
				}
				if v, ok := mk(c); ok {
					p.Add(vline(v, markStyle))
				}
				p.Title.Text = fmtInterval(q[1], q[2]-q[1], q[1]-q[0])
				p.Title.TextStyle.Font.Size = tickSize
				p.Y.Min, p.Y.Max = 0, 1.08
				p.Y.Tick.Marker = unlabelled{minusTicks{}}
				p.Y.Label.Text = ""
				p.Y.Tick.Length = 0
			} else {
				h2 := histogram2D(cols[c], cols[r], w, lo[c], hi[c], lo[r], hi[r], nb)
				smooth2D(h2, nb, 1)
				lv := CredibleLevels(h2.w, 0.68, 0.95)
				for m, ls := range []draw.LineStyle{
					{Color: qualitative[0], Width: lineWidth},
					{Color: qualitative[0], Width: lineWidth, Dashes: dashed},
				} {
					if lv[m] > 0 {
						ct := plotter.NewContour(h2, []float64{lv[m]}, nil)
						ct.LineStyles = []draw.LineStyle{ls}
						p.Add(bareContour{ct})
					}
				}
				vx, okx := mk(c)
				vy, oky := mk(r)
				if okx {
					p.Add(vline(vx, markStyle))
				}
				if oky {
					p.Add(hline(vy, markStyle))
				}
				if okx && oky {
					_ = addMarks(p, []Point{{vx, vy}}, draw.GlyphStyle{Color: qualitative[1], Radius: 2, Shape: draw.BoxGlyph{}})
				}
				p.Y.Min, p.Y.Max = lo[r], hi[r]
			}
			p.X.Min, p.X.Max = lo[c], hi[c]
			if r != np-1 {
				hideTickLabels(&p.X)
			}
			if c != 0 || r == 0 {
				hideTickLabels(&p.Y)
			}
			grid.plots[r][c] = p
		}
	}
	side := min(PageWidth, max(ColumnWidth, vg.Length(np)*1.25*vg.Inch))
	f := &Figure{Width: side, Height: side}
	f.Add(0, 0, 1, 1, grid)
	if np > 1 {
		key := keyPanel{entries: []keyEntry{
			{draw.LineStyle{Color: qualitative[0], Width: lineWidth}, "68% credible region"},
			{draw.LineStyle{Color: qualitative[0], Width: lineWidth, Dashes: dashed}, "95% credible region"},
			{draw.LineStyle{Color: grey, Width: axisWidth, Dashes: dashed}, "median; 16%, 84% quantiles"},
		}}
		if post.Marker != nil {
			lbl := post.MarkerLabel
			if lbl == "" {
				lbl = "marked"
			}
			key.entries = append(key.entries, keyEntry{markStyle, lbl})
		}
		// In the empty upper triangle: its top-right cell, reaching into
		// the next one left when there is one.
		x0 := 1 - 1/float64(np)
		if np >= 3 {
			x0 = 1 - 1.5/float64(np)
		}
		f.Add(x0, 1-0.6/float64(np), 1, 1, key)
	}
	return f, nil
}

// sampleWeights validates samples and returns their weights (1 each when
// weights is nil).
func sampleWeights(samples [][]float64, weights []float64, np int) ([]float64, error) {
	if len(samples) == 0 {
		return nil, fmt.Errorf("no samples")
	}
	if weights != nil && len(weights) != len(samples) {
		return nil, fmt.Errorf("%d weights for %d samples", len(weights), len(samples))
	}
	w := make([]float64, len(samples))
	tot := 0.0
	for s, x := range samples {
		if len(x) != np {
			return nil, fmt.Errorf("sample %d has %d values, want %d", s, len(x), np)
		}
		for k, v := range x {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("sample %d parameter %d is %g", s, k, v)
			}
		}
		w[s] = 1
		if weights != nil {
			w[s] = weights[s]
			if !(w[s] >= 0) || math.IsInf(w[s], 0) {
				return nil, fmt.Errorf("sample %d: weight %g, want finite ≥ 0", s, w[s])
			}
		}
		tot += w[s]
	}
	if !(tot > 0) {
		return nil, fmt.Errorf("all sample weights are zero")
	}
	return w, nil
}

// Histogram returns the weight falling in each of n equal bins spanning
// [lo, hi]; the last bin includes hi, values outside are not counted.
func Histogram(x, w []float64, lo, hi float64, n int) []float64 {
	h := make([]float64, n)
	dx := (hi - lo) / float64(n)
	for s, v := range x {
		b := int((v - lo) / dx)
		if v == hi {
			b = n - 1
		}
		if b >= 0 && b < n {
			h[b] += w[s]
		}
	}
	return h
}

// hist2D is a weighted 2-D histogram with bin centres as coordinates; it
// implements plotter.GridXYZ.
type hist2D struct {
	n                  int
	xlo, xhi, ylo, yhi float64
	w                  []float64 // weight in bin (c, r) at w[r·n + c], r along y
}

func (g *hist2D) Dims() (c, r int)   { return g.n, g.n }
func (g *hist2D) Z(c, r int) float64 { return g.w[r*g.n+c] }
func (g *hist2D) X(c int) float64    { return g.xlo + (float64(c)+0.5)*(g.xhi-g.xlo)/float64(g.n) }
func (g *hist2D) Y(r int) float64    { return g.ylo + (float64(r)+0.5)*(g.yhi-g.ylo)/float64(g.n) }

// histogram2D bins weighted points (x, y) into n×n equal bins spanning
// [xlo, xhi]×[ylo, yhi].
func histogram2D(x, y, w []float64, xlo, xhi, ylo, yhi float64, n int) *hist2D {
	g := &hist2D{n: n, xlo: xlo, xhi: xhi, ylo: ylo, yhi: yhi, w: make([]float64, n*n)}
	dx, dy := (xhi-xlo)/float64(n), (yhi-ylo)/float64(n)
	for s := range x {
		c, r := int((x[s]-xlo)/dx), int((y[s]-ylo)/dy)
		if x[s] == xhi {
			c = n - 1
		}
		if y[s] == yhi {
			r = n - 1
		}
		if c >= 0 && c < n && r >= 0 && r < n {
			g.w[r*n+c] += w[s]
		}
	}
	return g
}

// smooth2D convolves the histogram with a Gaussian of sigma bins
// (truncated at 3σ, mass-preserving at the edges by renormalising).
func smooth2D(g *hist2D, n int, sigma float64) {
	h := int(math.Ceil(3 * sigma))
	ker := make([]float64, 2*h+1)
	for k := range ker {
		d := float64(k - h)
		ker[k] = math.Exp(-d * d / (2 * sigma * sigma))
	}
	pass := func(src, dst []float64, along func(a, b int) int) {
		for a := range n {
			for b := range n {
				s, ws := 0.0, 0.0
				for k, kv := range ker {
					bb := b + k - h
					if bb < 0 || bb >= n {
						continue
					}
					s += kv * src[along(a, bb)]
					ws += kv
				}
				dst[along(a, b)] = s / ws
			}
		}
	}
	tmp := make([]float64, n*n)
	pass(g.w, tmp, func(r, c int) int { return r*n + c })
	pass(tmp, g.w, func(c, r int) int { return r*n + c })
}

// CredibleLevels returns, for each probability p, the bin value t such
// that the bins with value ≥ t hold a fraction p of the total: the
// highest-density credible region of mass p. Values are bin weights (or
// densities on equal bins).
func CredibleLevels(z []float64, probs ...float64) []float64 {
	s := slices.Clone(z)
	slices.Sort(s)
	slices.Reverse(s)
	tot := 0.0
	for _, v := range s {
		tot += v
	}
	out := make([]float64, len(probs))
	for m, p := range probs {
		acc := 0.0
		for _, v := range s {
			acc += v
			out[m] = v
			if acc >= p*tot {
				break
			}
		}
	}
	return out
}

// WeightedQuantiles returns the weighted quantiles q of x (weights w),
// interpolating linearly in cumulative weight between sorted samples, each
// sample taken at the midpoint of its weight.
func WeightedQuantiles(x, w []float64, q ...float64) []float64 {
	idx := make([]int, len(x))
	for k := range idx {
		idx[k] = k
	}
	slices.SortFunc(idx, func(a, b int) int { return cmpFloat(x[a], x[b]) })
	tot := 0.0
	for _, v := range w {
		tot += v
	}
	cum := make([]float64, len(x))
	acc := 0.0
	for k, i := range idx {
		cum[k] = (acc + w[i]/2) / tot
		acc += w[i]
	}
	out := make([]float64, len(q))
	for m, p := range q {
		k, _ := slices.BinarySearch(cum, p)
		switch {
		case k == 0:
			out[m] = x[idx[0]]
		case k == len(cum):
			out[m] = x[idx[len(idx)-1]]
		case cum[k] == cum[k-1]:
			out[m] = x[idx[k]]
		default:
			f := (p - cum[k-1]) / (cum[k] - cum[k-1])
			out[m] = x[idx[k-1]] + f*(x[idx[k]]-x[idx[k-1]])
		}
	}
	return out
}

func cmpFloat(a, b float64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// refLine is a line across the whole data area at one data value.
type refLine struct {
	v        float64
	vertical bool
	ls       draw.LineStyle
}

func vline(v float64, ls draw.LineStyle) refLine { return refLine{v, true, ls} }
func hline(v float64, ls draw.LineStyle) refLine { return refLine{v, false, ls} }

func (l refLine) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	var pts []vg.Point
	if l.vertical {
		x := trX(l.v)
		pts = []vg.Point{{X: x, Y: c.Min.Y}, {X: x, Y: c.Max.Y}}
	} else {
		y := trY(l.v)
		pts = []vg.Point{{X: c.Min.X, Y: y}, {X: c.Max.X, Y: y}}
	}
	c.StrokeLines(l.ls, c.ClipLinesXY(pts)...)
}

// niceTicks labels about n ticks at a round step (1, 2, 2.5, 4 or 5 times
// a power of ten; the step giving closest to n labels, the fewer on a tie),
// with an unlabelled tick halfway between; labels carry as many decimals as
// the step needs and a typographic minus. fewTicks (n = 3) keeps the labels
// of small panels from running into each other.
//
// References:
//   - J. Talbot, S. Lin & P. Hanrahan (2010), "An extension of Wilkinson's
//     algorithm for positioning tick labels on axes", IEEE Trans. Vis.
//     Comput. Graph. 16, 1036 (the nice-number set).
type niceTicks struct{ n int }

var fewTicks = niceTicks{n: 3}

func (nt niceTicks) Ticks(lo, hi float64) []plot.Tick {
	span := hi - lo
	if !(span > 0) || math.IsInf(span, 0) {
		return plot.DefaultTicks{}.Ticks(lo, hi)
	}
	count := func(step float64) int {
		return int(math.Floor(hi/step+1e-9) - math.Ceil(lo/step-1e-9) + 1)
	}
	e := math.Floor(math.Log10(span))
	step, best, bestN := 0.0, math.MaxInt, 0
	for k := e - 3; k <= e+1; k++ {
		for _, m := range []float64{1, 2, 2.5, 4, 5} {
			st := m * math.Pow(10, k)
			n := count(st)
			d := n - nt.n
			if d < 0 {
				d = -d
			}
			if d < best || d == best && n < bestN {
				step, best, bestN = st, d, n
			}
		}
	}
	dec := 0
	for dec < 12 {
		v := step * math.Pow(10, float64(dec))
		if math.Abs(v-math.Round(v)) < 1e-6*v {
			break
		}
		dec++
	}
	var ts []plot.Tick
	for k := math.Ceil(lo/step*2 - 1e-9); k/2*step <= hi+1e-9*span; k++ {
		v := k / 2 * step
		t := plot.Tick{Value: v}
		if math.Mod(k, 2) == 0 {
			t.Label = strconv.FormatFloat(v, 'f', dec, 64)
			if t.Label == "-"+strconv.FormatFloat(0, 'f', dec, 64) {
				t.Label = t.Label[1:]
			}
			t.Label = minusSign(t.Label)
		}
		ts = append(ts, t)
	}
	return ts
}

// fmtInterval writes "m +p −n" with the errors to two significant figures
// and the value to the same decimal place.
func fmtInterval(m, plus, minus float64) string {
	e := math.Min(plus, minus)
	if !(e > 0) || math.Abs(m) >= 1e6 {
		return fmt.Sprintf("%s +%s −%s", fmtG(m), fmtG(plus), fmtG(minus))
	}
	dec := max(0, 1-int(math.Floor(math.Log10(e))))
	if dec > 8 {
		return fmt.Sprintf("%s +%s −%s", fmtG(m), fmtG(plus), fmtG(minus))
	}
	f := func(x float64) string { return minusSign(strconv.FormatFloat(x, 'f', dec, 64)) }
	return fmt.Sprintf("%s +%s −%s", f(m), f(plus), f(minus))
}
