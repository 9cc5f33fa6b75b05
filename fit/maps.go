package fit

import (
	"errors"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"strings"

	"deflect/lensmodel"
	"deflect/plots"
	"deflect/source"
	"deflect/uv"
)

// DatasetMaps are the best-fit images of one dataset on the fit's grid, in
// FITS order: natural-weighting dirty images in Jy/beam over all its
// frequency groups, the model sky in Jy/pixel (weight-averaged over the
// groups, before the primary beam), the residual in units of the image
// noise σ_img = s (Σw)^−½, and the fitted clean beam.
type DatasetMaps struct {
	Label                         string
	Data, ModelSky, ModelDirty    []float64
	Residual, ResidualSigma, Beam []float64
	Sigma                         float64 // Jy/beam
	CleanBeam                     uv.CleanBeam
	CleanBeamErr                  error
	PhaseRA, PhaseDec             float64
	HasPhaseCentre                bool
	Freq                          float64
	DX, DY                        float64
}

// Maps computes the best-fit maps of dataset i from an evaluation of l.
func (l *Likelihood) Maps(ev *Evaluation, i int) *DatasetMaps {
	dd, de := l.Datasets[i], ev.Datasets[i]
	n := l.Grid.Len()
	mp := &DatasetMaps{Label: dd.Label, Data: make([]float64, n), ModelSky: make([]float64, n), ModelDirty: make([]float64, n),
		Residual: make([]float64, n), ResidualSigma: make([]float64, n), Beam: make([]float64, n), DX: de.DX, DY: de.DY}
	var sw, fw float64
	res := make([]float64, n)
	N := l.Grid.N
	for g, c := range dd.Groups {
		w := c.SumWeights()
		sw += w
		fw += w * c.Freq()
		c.ResidualDirty(res, de.Groups[g].Model)
		for k := range n {
			d := c.DirtyAt(k%N, k/N)
			mp.Data[k] += d
			mp.Residual[k] += res[k]
			mp.ModelDirty[k] += d - res[k]
			mp.ModelSky[k] += w * de.Groups[g].Model[k]
			mp.Beam[k] += c.BeamAt(k%N-N/2, k/N-N/2)
		}
	}
	mp.Sigma = de.NoiseScale / math.Sqrt(sw)
	mp.Freq = fw / sw
	for k := range n {
		mp.Data[k] /= sw
		mp.Residual[k] /= sw
		mp.ModelDirty[k] /= sw
		mp.ModelSky[k] /= sw
		mp.Beam[k] /= sw
		mp.ResidualSigma[k] = mp.Residual[k] / mp.Sigma
	}
	mp.CleanBeam, mp.CleanBeamErr = uv.FitCleanBeam(mp.Beam, N, l.Grid.Pixel)
	if r, err := uv.OpenTable(dd.Data.File, dd.Data.readOptions(uv.ReadOptions{})); err == nil {
		meta := r.Meta()
		mp.PhaseRA, mp.PhaseDec, mp.HasPhaseCentre = meta.RA, meta.Dec, meta.HasPhaseCentre
		r.Close()
	}
	return mp
}

// SourcePlane is the best-fit source evaluated on a source-plane grid, with
// the caustics of the lens.
type SourcePlane struct {
	Grid uv.Grid // source-plane grid (offsets in arcsec about X0, Y0)
	// Brightness is the surface brightness of the extended components at
	// the reference frequency in Jy/arcsec², FITS order.
	Brightness []float64
	// Sigma is the 1σ uncertainty of a pixelated source's brightness in
	// Jy/arcsec², FITS order on Grid; nil for a parametric source or when
	// the inversion gives none.
	Sigma    []float64
	Caustics []lensmodel.Polyline
	Critical []lensmodel.Polyline
}

// SourcePlaneOf evaluates the source of ev on a 128² grid covering its
// components and the caustics.
func SourcePlaneOf(ev *Evaluation) (*SourcePlane, error) {
	sp := &SourcePlane{}
	curves, err := lensmodel.CriticalCurves(ev.Lens, lensmodel.CurveOptions{})
	if err != nil {
		return nil, err
	}
	for _, c := range curves {
		sp.Caustics = append(sp.Caustics, c.Source)
		sp.Critical = append(sp.Critical, c.Image)
	}
	var cx, cy float64
	if len(ev.Source.Components) > 0 {
		cx, cy = ev.Source.Components[0].Centre()
	}
	hw := 0.2
	for _, comp := range ev.Source.Components {
		x, y := comp.Centre()
		size := 0.0
		switch s := comp.(type) {
		case source.Sersic:
			size = 3 * s.Reff
		case source.Gaussian:
			size = 2 * s.FWHM
		}
		hw = math.Max(hw, math.Max(math.Abs(x-cx), math.Abs(y-cy))+size)
	}
	for _, p := range sp.Caustics {
		for k := range p.X {
			if d := math.Max(math.Abs(p.X[k]-cx), math.Abs(p.Y[k]-cy)) * 1.1; d < 20*hw {
				hw = math.Max(hw, d)
			}
		}
	}
	if pg := ev.PixelGrid; pg != nil && ev.Pixels != nil {
		nx := len(pg.X)
		p := (pg.X[nx-1] - pg.X[0]) / float64(nx-1)
		if len(pg.Y) != nx || math.Abs((pg.Y[nx-1]-pg.Y[0])/float64(nx-1)-p) > 1e-9*p || nx%2 != 0 {
			return nil, errors.New("the pixelated source's grid is not square and regular (adaptive or odd)")
		}
		sp.Grid = uv.Grid{N: nx, Pixel: p, X0: pg.X[0] + float64(nx-1-nx/2)*p, Y0: pg.Y[0] + float64(nx/2)*p}
		sp.Brightness = make([]float64, nx*nx)
		sig := ev.Pixels.Sigma
		if len(sig) != len(ev.Pixels.Source) {
			sig = nil
		}
		if sig != nil {
			sp.Sigma = make([]float64, nx*nx)
		}
		for j := range nx {
			for i := range nx {
				sp.Brightness[j*nx+i] = ev.Pixels.Source[j*nx+(nx-1-i)]
				if sig != nil {
					sp.Sigma[j*nx+i] = sig[j*nx+(nx-1-i)]
				}
			}
		}
		return sp, nil
	}
	const n = 128
	sp.Grid = uv.Grid{N: n, Pixel: 2 * hw / n, X0: cx, Y0: cy}
	sp.Brightness = make([]float64, n*n)
	for k := range sp.Brightness {
		x, y := sp.Grid.Centre(k)
		sp.Brightness[k] = ev.Source.Brightness(x, y, 0)
	}
	return sp, nil
}

func plotImage(g uv.Grid, v []float64) plots.SkyImage {
	return plots.SkyImage{N: g.N, Pixel: g.Pixel, X0: g.X0, Y0: g.Y0, Values: v}
}

func plotLines(ls []lensmodel.Polyline, dx, dy float64) []plots.Polyline {
	var out []plots.Polyline
	for _, l := range ls {
		p := make(plots.Polyline, len(l.X))
		for k := range l.X {
			p[k] = plots.Point{X: l.X[k] + dx, Y: l.Y[k] + dy}
		}
		out = append(out, p)
	}
	return out
}

// fileLabel makes a dataset label safe as part of a file name.
func fileLabel(s string) string {
	return strings.Map(func(r rune) rune {
		switch {
		case r >= 'a' && r <= 'z', r >= 'A' && r <= 'Z', r >= '0' && r <= '9', r == '-', r == '_', r == '.':
			return r
		}
		return '_'
	}, s)
}

// maxVisRows bounds the rows of a table read for its visibility figure;
// larger tables are thinned to every k-th unflagged row.
const maxVisRows = 1 << 20

// visibilityRows reads the table of dataset i and predicts the best-fit
// model of ev at its (u, v): each unflagged row takes the model image of
// the frequency group holding its frequency (flux scale and offsets
// applied, primary beam in the prediction). Weights are divided by the
// noise scale squared, so Σ w |d − V|² is the likelihood's χ². Tables over
// maxRows unflagged rows (at least 1) keep every k-th one, k =
// ⌈rows/maxRows⌉, starting with the first; k is returned (1: all).
func (l *Likelihood) visibilityRows(ev *Evaluation, i, maxRows int) (plots.Visibilities, int, error) {
	dd, de := l.Datasets[i], ev.Datasets[i]
	var vis plots.Visibilities
	if len(dd.Groups) == 0 || len(de.Groups) != len(dd.Groups) {
		return vis, 0, errors.New("no model images per frequency group")
	}
	if maxRows < 1 {
		panic("fit: visibilityRows with maxRows < 1")
	}
	k := max(1, (dd.Visibilities+maxRows-1)/maxRows)
	r, err := uv.OpenTable(dd.Data.File, dd.Data.readOptions(uv.ReadOptions{}))
	if err != nil {
		return vis, 0, err
	}
	defer r.Close()
	ng := len(dd.Groups)
	gu, gv := make([][]float64, ng), make([][]float64, ng)
	var row []int // kept row's group
	w2 := 1 / (de.NoiseScale * de.NoiseScale)
	seen := 0
	for {
		c := new(uv.Dataset)
		err := r.Next(c)
		if errors.Is(err, io.EOF) {
			break
		}
		if err != nil {
			return vis, 0, err
		}
		for j := range c.Len() {
			if c.Flagged(j) {
				continue
			}
			seen++
			if (seen-1)%k != 0 {
				continue
			}
			g := groupOf(dd.Groups, c.FreqAt(j))
			gu[g], gv[g] = append(gu[g], c.U[j]), append(gv[g], c.V[j])
			row = append(row, g)
			vis.U, vis.V = append(vis.U, c.U[j]), append(vis.V, c.V[j])
			vis.Re, vis.Im = append(vis.Re, c.Re[j]), append(vis.Im, c.Im[j])
			vis.Weight = append(vis.Weight, c.Weight[j]*w2)
		}
	}
	pred := make([][]complex128, ng)
	for g, c := range dd.Groups {
		if len(gu[g]) == 0 {
			continue
		}
		p, err := uv.NewPredictor(l.Grid, c.PrimaryBeam(), gu[g], gv[g], 1e-7)
		if err != nil {
			return vis, 0, err
		}
		pred[g] = p.Predict(nil, de.Groups[g].Model)
	}
	vis.ModelRe, vis.ModelIm = make([]float64, len(row)), make([]float64, len(row))
	next := make([]int, ng)
	for j, g := range row {
		v := pred[g][next[g]]
		next[g]++
		vis.ModelRe[j], vis.ModelIm[j] = real(v), imag(v)
	}
	return vis, k, nil
}

// groupOf returns the index of the frequency group whose row range holds
// nu, else the one of nearest mean frequency.
func groupOf(groups []*uv.Compressed, nu float64) int {
	best, dist := 0, math.Inf(1)
	for g, c := range groups {
		if lo, hi := c.FreqRange(); nu >= lo && nu <= hi {
			return g
		}
		if d := math.Abs(c.Freq() - nu); d < dist {
			best, dist = g, d
		}
	}
	return best
}

// magnificationMap is the signed magnification of the lens of ev over the
// fit's field, FITS order, on a grid of at least 256² pixels (the fit's
// own grid when finer) so the critical curves are resolved.
func (l *Likelihood) magnificationMap(ev *Evaluation) plots.SkyImage {
	g := l.Grid
	if g.N < 256 {
		g = uv.Grid{N: 256, Pixel: l.Grid.Pixel * float64(l.Grid.N) / 256, X0: l.Grid.X0, Y0: l.Grid.Y0}
	}
	n := g.Len()
	x, y, mu := make([]float64, n), make([]float64, n), make([]float64, n)
	for k := range n {
		x[k], y[k] = g.Centre(k)
	}
	ev.Lens.MagnificationPoints(mu, x, y)
	return plotImage(g, mu)
}

// chainOf converts an ensemble chain [step][walker][dim] to the figure's
// [walker][step][dim] layout (sharing the position slices).
func chainOf(chain [][][]float64) [][][]float64 {
	if len(chain) == 0 {
		return nil
	}
	out := make([][][]float64, len(chain[0]))
	for w := range out {
		out[w] = make([][]float64, len(chain))
		for t := range chain {
			out[w][t] = chain[t][w]
		}
	}
	return out
}

// figureSaver saves the figures of a run in its format, recording in the
// run's notes the figures that could not be drawn.
type figureSaver struct {
	dir, format string
	r           *Result
	files       []string
}

// save writes fig as stem.FORMAT; a drawing error ferr becomes a note
// "no WHAT: …", a write error is returned.
func (s *figureSaver) save(stem, what string, fig *plots.Figure, ferr error) error {
	if ferr != nil {
		s.r.Notes = append(s.r.Notes, "no "+what+": "+ferr.Error())
		return nil
	}
	name := stem + "." + s.format
	if err := plots.Save(fig, 0, 0, filepath.Join(s.dir, name), s.format, true); err != nil {
		return err
	}
	s.files = append(s.files, name)
	return nil
}

// writeMaps writes the FITS images and the figures of the best fit and
// returns the names written.
func writeMaps(dir string, r *Result) ([]string, error) {
	l, ev := r.Like, r.BestEval
	format := r.post.format
	if format == "" {
		format = "png"
	}
	fs := &figureSaver{dir: dir, format: format, r: r}
	sp, spErr := SourcePlaneOf(ev)
	for i := range l.Datasets {
		mp := l.Maps(ev, i)
		base := fileLabel(mp.Label)
		meta := uv.ImageMeta{RA: mp.PhaseRA, Dec: mp.PhaseDec, HasPhaseCentre: mp.HasPhaseCentre, Freq: mp.Freq, Object: mp.Label}
		var beam *uv.CleanBeam
		if mp.CleanBeamErr == nil {
			beam = &mp.CleanBeam
		}
		for _, im := range []struct {
			name, unit string
			data       []float64
			beam       bool
		}{
			{"data", "JY/BEAM", mp.Data, true},
			{"model-sky", "JY/PIXEL", mp.ModelSky, false},
			{"model-dirty", "JY/BEAM", mp.ModelDirty, true},
			{"residual", "JY/BEAM", mp.Residual, true},
			{"residual-sigma", "SIGMA", mp.ResidualSigma, true},
		} {
			m := meta
			m.BUnit = im.unit
			if im.beam {
				m.Beam = beam
			}
			name := fmt.Sprintf("%s-%s.fits", base, im.name)
			if err := uv.WriteFITSImage(filepath.Join(dir, name), true, &uv.SkyImage{Grid: l.Grid, Meta: m, Data: im.data}); err != nil {
				return fs.files, err
			}
			fs.files = append(fs.files, name)
		}
		di := plots.DirtyImages{Data: plotImage(l.Grid, mp.Data), Model: plotImage(l.Grid, mp.ModelDirty),
			Residual: plotImage(l.Grid, mp.Residual), Sigma: mp.Sigma}
		if beam != nil {
			di.Beam = plots.Beam{Major: beam.BMaj, Minor: beam.BMin, PA: beam.BPA}
		}
		if spErr == nil {
			di.Critical = plotLines(sp.Critical, mp.DX, mp.DY)
		}
		fig, err := plots.DirtyFigure(di)
		if err := fs.save(base+"-dirty", fmt.Sprintf("dataset %q dirty-image figure", mp.Label), fig, err); err != nil {
			return fs.files, err
		}
		vis, k, err := l.visibilityRows(ev, i, maxVisRows)
		if err == nil {
			fig, err = plots.VisibilityFigure(vis)
		}
		if err == nil && k > 1 {
			r.Notes = append(r.Notes, fmt.Sprintf("dataset %q: the visibility figure shows every %d-th unflagged row (%d of %d)", mp.Label, k, len(vis.U), l.Datasets[i].Visibilities))
		}
		if err := fs.save(base+"-vis", fmt.Sprintf("dataset %q visibility figure", mp.Label), fig, err); err != nil {
			return fs.files, err
		}
	}
	mm := plots.MagnificationMap{Mu: l.magnificationMap(ev)}
	if spErr == nil {
		mm.Critical = plotLines(sp.Critical, 0, 0)
	}
	fig, err := plots.MagnificationFigure(mm)
	if err := fs.save("magnification", "magnification figure", fig, err); err != nil {
		return fs.files, err
	}
	if spErr != nil {
		r.Notes = append(r.Notes, "no source-plane map: "+spErr.Error())
	} else {
		area := sp.Grid.Pixel * sp.Grid.Pixel
		jyPix := make([]float64, len(sp.Brightness))
		for k, v := range sp.Brightness {
			jyPix[k] = v * area
		}
		name := "source-plane.fits"
		m := uv.ImageMeta{BUnit: "JY/PIXEL", Object: "source plane (offsets from the phase centre, unlensed)", Freq: r.RefFreq}
		if err := uv.WriteFITSImage(filepath.Join(dir, name), true, &uv.SkyImage{Grid: sp.Grid, Meta: m, Data: jyPix}); err != nil {
			return fs.files, err
		}
		fs.files = append(fs.files, name)
		si := plots.SourceImage{Image: plotImage(sp.Grid, sp.Brightness), Unit: "mJy/arcsec²", Scale: 1e3,
			Caustics: plotLines(sp.Caustics, 0, 0)}
		if sp.Sigma != nil {
			sig := plotImage(sp.Grid, sp.Sigma)
			si.Sigma = &sig
		}
		fig, err := plots.SourceFigure(si)
		if err := fs.save("source-plane", "source-plane figure", fig, err); err != nil {
			return fs.files, err
		}
	}
	n := len(r.Model.Free)
	names := make([]string, n)
	for i, q := range r.Model.Free {
		names[i] = q.Name
		if u := paramUnit(r.Model, q); u != "" {
			names[i] += " (" + u + ")"
		}
	}
	if n >= 2 && n <= 20 && len(r.post.samples) > 10 {
		fig, err := plots.CornerFigure(plots.Posterior{Names: names, Samples: r.post.samples, Weights: r.post.weights,
			Marker: r.Best, MarkerLabel: "best fit"})
		if err := fs.save("corner", "corner plot", fig, err); err != nil {
			return fs.files, err
		}
	}
	if ch := chainOf(r.post.chain); ch != nil && n >= 1 {
		c := plots.Chain{Names: names, Samples: ch}
		fig, err := plots.TraceFigure(c)
		if err := fs.save("trace", "trace figure", fig, err); err != nil {
			return fs.files, err
		}
		fig, err = plots.AutocorrFigure(c, 0)
		if err := fs.save("autocorr", "autocorrelation figure", fig, err); err != nil {
			return fs.files, err
		}
	}
	return fs.files, nil
}
