package fit

import (
	"errors"
	"fmt"
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
	Caustics   []lensmodel.Polyline
	Critical   []lensmodel.Polyline
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
		for j := range nx {
			for i := range nx {
				sp.Brightness[j*nx+i] = ev.Pixels.Source[j*nx+(nx-1-i)]
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

// writeMaps writes the FITS images and PNG figures of the best fit and
// returns the names written.
func writeMaps(dir string, r *Result) ([]string, error) {
	l, ev := r.Like, r.BestEval
	var files []string
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
				return files, err
			}
			files = append(files, name)
		}
		di := plots.DirtyImages{Data: plotImage(l.Grid, mp.Data), Model: plotImage(l.Grid, mp.ModelDirty),
			Residual: plotImage(l.Grid, mp.Residual), Sigma: mp.Sigma}
		if beam != nil {
			di.Beam = plots.Beam{Major: beam.BMaj, Minor: beam.BMin, PA: beam.BPA}
		}
		if spErr == nil {
			di.Critical = plotLines(sp.Critical, mp.DX, mp.DY)
		}
		if fig, err := plots.DirtyFigure(di); err == nil {
			name := base + "-dirty.png"
			if err := plots.Save(fig, 0, 0, filepath.Join(dir, name), "", true); err != nil {
				return files, err
			}
			files = append(files, name)
		} else {
			r.Notes = append(r.Notes, fmt.Sprintf("dataset %q: no dirty-image figure: %v", mp.Label, err))
		}
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
			return files, err
		}
		files = append(files, name)
		fig, err := plots.SourceFigure(plots.SourceImage{Image: plotImage(sp.Grid, sp.Brightness), Unit: "mJy/arcsec²", Scale: 1e3,
			Caustics: plotLines(sp.Caustics, 0, 0)})
		if err == nil {
			if err := plots.Save(fig, 0, 0, filepath.Join(dir, "source-plane.png"), "", true); err != nil {
				return files, err
			}
			files = append(files, "source-plane.png")
		} else {
			r.Notes = append(r.Notes, "no source-plane figure: "+err.Error())
		}
	}
	if n := len(r.Model.Free); n >= 2 && n <= 20 && len(r.post.samples) > 10 {
		names := make([]string, n)
		for i, q := range r.Model.Free {
			names[i] = q.Name
			if u := paramUnit(r.Model, q); u != "" {
				names[i] += " (" + u + ")"
			}
		}
		fig, err := plots.CornerFigure(plots.Posterior{Names: names, Samples: r.post.samples, Weights: r.post.weights,
			Marker: r.Best, MarkerLabel: "best fit"})
		if err == nil {
			if err := plots.Save(fig, 0, 0, filepath.Join(dir, "corner.png"), "", true); err != nil {
				return files, err
			}
			files = append(files, "corner.png")
		} else {
			r.Notes = append(r.Notes, "no corner plot: "+err.Error())
		}
	}
	return files, nil
}
