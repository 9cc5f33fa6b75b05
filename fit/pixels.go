package fit

import (
	"errors"
	"fmt"
	"math"
	"sync"

	"deflect/lensmodel"
	"deflect/source"
	"deflect/uv"
)

// pixelSource holds the settings of a [[source]] of kind "pixels" and the
// regularisation prior, which depends only on the node counts and so is
// shared by every lens model.
type pixelSource struct {
	name     string
	size     int
	extent   float64 // half-width in arcsec; 0: cover the caustics
	kind     source.Regularization
	lambda   float64 // 0: maximise the evidence
	adaptive bool

	once     sync.Once
	prior    *source.Prior
	priorErr error
}

// newPixelSource reads the settings of c and checks what the likelihood
// supports with a pixelated source: no other source components, and every
// dataset's flux scale and offset fixed at 1 and 0.
func newPixelSource(m *Model, c Component) (*pixelSource, error) {
	ps := &pixelSource{name: c.Name, size: 40, kind: source.Gradient}
	at := func(key string) string { return fmt.Sprintf("%s:%d: source %q: %s", m.Path, c.Line, c.Name, key) }
	for k, v := range c.Settings {
		switch k {
		case "size":
			x, ok := v.(float64)
			if !ok || x != math.Trunc(x) || x < 4 || x > 200 {
				return nil, fmt.Errorf("%s: expected a whole number of nodes in [4, 200], found %v", at(k), v)
			}
			ps.size = int(x)
		case "extent":
			x, ok := v.(float64)
			if !ok || !(x > 0) {
				return nil, fmt.Errorf("%s: expected a half-width > 0 arcsec, found %v", at(k), v)
			}
			ps.extent = x
		case "regularization":
			s, _ := v.(string)
			switch s {
			case "gradient":
				ps.kind = source.Gradient
			case "curvature":
				ps.kind = source.Curvature
			case "zeroth":
				ps.kind = source.Zeroth
			default:
				return nil, fmt.Errorf("%s: expected \"gradient\", \"curvature\" or \"zeroth\", found %v", at(k), v)
			}
		case "lambda":
			switch x := v.(type) {
			case string:
				if x != "evidence" {
					return nil, fmt.Errorf("%s: expected a number > 0 or \"evidence\", found %q", at(k), x)
				}
			case float64:
				if !(x > 0) {
					return nil, fmt.Errorf("%s: expected a number > 0 or \"evidence\", found %v", at(k), x)
				}
				ps.lambda = x
			default:
				return nil, fmt.Errorf("%s: expected a number > 0 or \"evidence\", found %v", at(k), v)
			}
		case "adaptive":
			b, ok := v.(bool)
			if !ok {
				return nil, fmt.Errorf("%s: expected true or false, found %v", at(k), v)
			}
			ps.adaptive = b
		}
	}
	if len(m.Sources) > 1 {
		return nil, fmt.Errorf("%s:%d: source %q: a pixelated source cannot yet be combined with other source components", m.Path, c.Line, c.Name)
	}
	for _, d := range m.Data {
		if d.FluxScale.Free || d.FluxScale.Value != 1 || d.DX.Free || d.DY.Free || d.DX.Value != 0 || d.DY.Value != 0 {
			return nil, fmt.Errorf("%s:%d: dataset %q: with a pixelated source, flux_scale and offset must stay fixed at 1 and 0", m.Path, d.Line, d.Label)
		}
	}
	return ps, nil
}

// scaledMeasurement is a compressed dataset group with its noise scale s
// applied: χ²/s² = (DataTerm − 2 Σ I D + I B I)/s².
type scaledMeasurement struct {
	c *uv.Compressed
	w float64 // 1/s²
}

func (s scaledMeasurement) Size() int                 { return s.c.Size() }
func (s scaledMeasurement) DirtyAt(i, j int) float64  { return s.w * s.c.DirtyAt(i, j) }
func (s scaledMeasurement) BeamAt(di, dj int) float64 { return s.w * s.c.BeamAt(di, dj) }
func (s scaledMeasurement) GainAt(i, j int) float64   { return s.c.GainAt(i, j) }
func (s scaledMeasurement) DataTerm() float64         { return s.w * s.c.DataTerm() }

// pixelInversion is the most probable pixelated source for one lens.
type pixelInversion struct {
	inv     *source.Inversion
	grid    *source.PixelGrid
	mapping *source.Mapping
	image   []float64 // Jy per pixel on the likelihood grid
}

// errNoMask is returned when no image pixel traces into the source grid.
var errNoMask = errors.New("fit: no image pixel traces into the pixelated source's grid")

// invertPixels reconstructs the pixelated source for lens and returns the
// evidence, marginalised over the source, as ln L; withErrors also computes
// the per-pixel σ of the reconstruction.
func (l *Likelihood) invertPixels(lens lensmodel.Lens, vals []float64, withErrors bool) (float64, *pixelInversion, error) {
	ps := l.pix
	g := l.Grid
	n := g.N
	bx, by := make([]float64, n*n), make([]float64, n*n)
	x0, y0 := g.XY(0, 0)
	lens.TraceGrid(bx, by, x0, y0, -g.Pixel, g.Pixel, n, n)
	var cx, cy, hw float64
	if ps.extent > 0 {
		hw = ps.extent
	} else {
		curves, err := lensmodel.CriticalCurves(lens, lensmodel.CurveOptions{})
		if err != nil {
			return 0, nil, err
		}
		xmin, xmax, ymin, ymax := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
		for _, c := range curves {
			for k := range c.Source.X {
				xmin, xmax = math.Min(xmin, c.Source.X[k]), math.Max(xmax, c.Source.X[k])
				ymin, ymax = math.Min(ymin, c.Source.Y[k]), math.Max(ymax, c.Source.Y[k])
			}
		}
		if math.IsInf(xmin, 0) {
			return 0, nil, errors.New("fit: the lens has no caustics: set the pixelated source's extent")
		}
		cx, cy = (xmin+xmax)/2, (ymin+ymax)/2
		hw = 0.6 * math.Max(xmax-xmin, ymax-ymin)
	}
	var mask []int
	var mx, my []float64
	for k := range bx {
		if math.Abs(bx[k]-cx) <= hw && math.Abs(by[k]-cy) <= hw {
			mask = append(mask, k)
			mx, my = append(mx, bx[k]), append(my, by[k])
		}
	}
	if len(mask) == 0 {
		return 0, nil, errNoMask
	}
	var pg *source.PixelGrid
	if ps.adaptive {
		pg = source.AdaptiveGrid(mx, my, ps.size, ps.size, 0)
	} else {
		pg = source.RegularGrid(cx-hw, cx+hw, cy-hw, cy+hw, ps.size, ps.size)
	}
	ps.once.Do(func() { ps.prior, ps.priorErr = source.NewPrior(pg, ps.kind, 0) })
	if ps.priorErr != nil {
		return 0, nil, ps.priorErr
	}
	mp := source.NewMapping(g, lens.Prepare(), mask, pg, 2)
	var meas []source.Measurement
	var norm float64
	for _, dd := range l.Datasets {
		s := l.pm.get(vals, dd.Data.NoiseScale)
		if dd.FixedNoise > 0 {
			s = dd.FixedNoise
		}
		if !(s > 0) {
			return 0, nil, fmt.Errorf("dataset %q: noise scale %g ≤ 0", dd.Label, s)
		}
		for _, c := range dd.Groups {
			meas = append(meas, scaledMeasurement{c: c, w: 1 / (s * s)})
			norm += c.LogNorm() - 2*float64(c.Count())*math.Log(s)
		}
	}
	nm := source.NewNormal(meas, mp)
	inv, err := source.Invert(nm, ps.prior, pg, mp, source.InvertOptions{Lambda: ps.lambda, DataLogNorm: norm, NoErrors: !withErrors})
	if err != nil {
		return 0, nil, err
	}
	pi := &pixelInversion{inv: inv, grid: pg, mapping: mp}
	return inv.Evidence.LogEvidence, pi, nil
}

// pixelEval fills an Evaluation for a pixelated source.
func (l *Likelihood) pixelEval(theta, vals []float64, lens lensmodel.Lens, keep bool) (float64, *Evaluation, error) {
	// The per-pixel σ costs an inverse of the regularised normal matrix:
	// computed only when the evaluation is kept (best fit, maps).
	ll, pi, err := l.invertPixels(lens, vals, keep)
	if err != nil || !keep {
		return ll, nil, err
	}
	ev := &Evaluation{Theta: append([]float64(nil), theta...), Lens: lens, LogLike: ll, Pixels: pi.inv, PixelGrid: pi.grid}
	img := pi.mapping.Image(pi.inv.Source)
	for _, dd := range l.Datasets {
		s := l.pm.get(vals, dd.Data.NoiseScale)
		if dd.FixedNoise > 0 {
			s = dd.FixedNoise
		}
		de := DatasetEval{Label: dd.Label, NoiseScale: s, FluxScale: 1, Visibilities: dd.Visibilities}
		for _, c := range dd.Groups {
			chi2 := c.Chi2(img)
			de.Chi2 += chi2
			de.LogLike += -chi2/(2*s*s) + c.LogNorm() - 2*float64(c.Count())*math.Log(s)
			de.Groups = append(de.Groups, GroupEval{Freq: c.Freq(), Chi2: chi2, Model: img})
		}
		ev.Datasets = append(ev.Datasets, de)
	}
	return ll, ev, nil
}
