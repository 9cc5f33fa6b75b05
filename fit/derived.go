package fit

import (
	"fmt"
	"math"
	"math/rand/v2"

	"deflect/lensmodel"
	"deflect/source"
)

// Derived is a physical quantity computed from the model, at the best fit
// and over posterior samples.
type Derived struct {
	Name string `json:"name"`
	Unit string `json:"unit,omitempty"`
	// Best is the value at the best fit; Median and the 68% interval
	// [Lo, Hi] are over the samples where it is defined (Samples of
	// them).
	Best    float64 `json:"best"`
	Median  float64 `json:"median"`
	Lo      float64 `json:"lo68"`
	Hi      float64 `json:"hi68"`
	Samples int     `json:"samples"`
	Note    string  `json:"note,omitempty"`
}

// derivedSet is the derived quantities of one parameter vector, NaN where
// undefined.
type derivedSet struct {
	names, units []string
	vals         []float64
	notes        []string
}

func (d *derivedSet) add(name, unit string, v float64, note string) {
	d.names, d.units = append(d.names, name), append(d.units, unit)
	d.vals, d.notes = append(d.vals, v), append(d.notes, note)
}

// derivedQuantities computes, at the best fit and over n equally weighted
// posterior draws:
//
//   - the magnification of each source component and of the whole source,
//     flux-weighted: lensed flux on the grid (or Σ|μ_i| for a point) over
//     the intrinsic flux, at the reference frequency;
//   - the intrinsic flux of each component and in total (mJy);
//   - the Einstein radius of the whole lens about the centre of its first
//     centred component (lensmodel.EinsteinRadius) and, with a
//     [cosmology], the projected mass inside it;
//   - the number of images of the first source component's centre
//     (lensmodel.FindImages) and, for an odd number, the magnification and
//     flux of the image nearest the lens centre (the central image), or
//     a note that a singular profile removes it.
func derivedQuantities(l *Likelihood, best []float64, post posterior, w []float64, n int, seed uint64) []Derived {
	ref := derivedAt(l, best)
	if ref == nil {
		return nil
	}
	if l.pix != nil {
		n = min(n, 20) // each draw is a full source inversion
	}
	rnd := rand.New(rand.NewPCG(seed, 1234))
	draws := equalWeight(post.samples, w, n, rnd.Float64())
	cols := make([][]float64, len(ref.vals))
	for _, th := range draws {
		d := derivedAt(l, th)
		if d == nil || len(d.vals) != len(ref.vals) {
			continue
		}
		for k, v := range d.vals {
			if !math.IsNaN(v) {
				cols[k] = append(cols[k], v)
			}
		}
	}
	out := make([]Derived, len(ref.vals))
	for k := range ref.vals {
		d := Derived{Name: ref.names[k], Unit: ref.units[k], Best: ref.vals[k], Note: ref.notes[k], Samples: len(cols[k])}
		d.Median, d.Lo, d.Hi = math.NaN(), math.NaN(), math.NaN()
		if len(cols[k]) > 0 {
			wk := make([]float64, len(cols[k]))
			for i := range wk {
				wk[i] = 1
			}
			q := weightedQuantiles(cols[k], wk, 0.16, 0.5, 0.84)
			d.Lo, d.Median, d.Hi = q[0], q[1], q[2]
		}
		out[k] = d
	}
	return out
}

// mainCentre returns the centre of the first lens component that has one.
func mainCentre(lens lensmodel.Lens) (x, y float64, ok bool) {
	for _, c := range lens {
		switch m := c.(type) {
		case lensmodel.SIE:
			return m.X, m.Y, true
		case lensmodel.PointMass:
			return m.X, m.Y, true
		case lensmodel.PowerLaw:
			return m.X, m.Y, true
		case lensmodel.NFW:
			return m.X, m.Y, true
		case lensmodel.GNFW:
			return m.X, m.Y, true
		case lensmodel.Burkert:
			return m.X, m.Y, true
		}
	}
	return 0, 0, false
}

func derivedAt(l *Likelihood, theta []float64) *derivedSet {
	m := l.Model
	vals := l.pm.values(nil, theta)
	lens, err := l.pm.lens(vals)
	if err != nil {
		return nil
	}
	src, err := l.pm.source(vals, l.RefFreq)
	if err != nil {
		return nil
	}
	d := &derivedSet{}
	fast := lens.Prepare()
	var lensedTot, intrTot float64
	img := make([]float64, l.Grid.Len())
	names := sourceNames(m)
	for c, comp := range src.Components {
		intr := comp.TotalFlux()
		var lensed float64
		if p, ok := comp.(source.Point); ok {
			ims, err := source.LensedPoint(lens, p, source.PointOptions{})
			if err != nil {
				return nil
			}
			for _, im := range ims {
				lensed += im.Flux
			}
		} else {
			one := source.Source{Components: src.Components[c : c+1]}
			source.Render(img, l.Grid, fast, one, source.RenderOptions{Tol: l.renderTol})
			for _, v := range img {
				lensed += v
			}
		}
		lensedTot += lensed
		intrTot += intr
		mu := math.NaN()
		if intr > 0 {
			mu = lensed / intr
		}
		d.add(names[c]+" magnification", "", mu, "flux-weighted: lensed flux on the grid / intrinsic flux")
		d.add(names[c]+" intrinsic flux", "mJy", intr*1e3, "")
	}
	if len(src.Components) > 1 {
		mu := math.NaN()
		if intrTot > 0 {
			mu = lensedTot / intrTot
		}
		d.add("source magnification", "", mu, "flux-weighted over all components")
		d.add("source intrinsic flux", "mJy", intrTot*1e3, "")
	}
	if l.pix != nil {
		_, pi, err := l.invertPixels(lens, vals, false)
		if err != nil {
			return nil
		}
		d.add("pixelated source magnification", "", pi.inv.Magnification, "lensed flux on the mask / reconstructed source flux")
		d.add("pixelated source intrinsic flux", "mJy", pi.inv.Flux*1e3, "")
	}
	x0, y0, centred := mainCentre(lens)
	if centred {
		te, err := lensmodel.EinsteinRadius(lens, x0, y0)
		note := fmt.Sprintf("whole lens about the centre of its first component (%.3g, %.3g)", x0, y0)
		if err != nil {
			te, note = math.NaN(), "no Einstein radius: "+err.Error()
		}
		d.add("Einstein radius", "arcsec", te, note)
		if c := m.Cosmology; c != nil {
			mass := math.NaN()
			if !math.IsNaN(te) {
				mass = c.lensmodel().MassInsideThetaE(te, c.ZLens, c.ZSource)
			}
			d.add("mass inside the Einstein radius", "Msun", mass, "π θ_E² Σ_cr")
		}
	}
	if len(src.Components) > 0 {
		sx, sy := src.Components[0].Centre()
		res, err := lensmodel.FindImages(lens, sx, sy, lensmodel.ImageOptions{})
		if err != nil {
			return nil
		}
		nimg := len(res.Images)
		d.add("image multiplicity", "", float64(nimg), "images of the centre of source "+names[0])
		muC, fluxC, note := math.NaN(), math.NaN(), ""
		switch {
		case len(res.SingularCentres) > 0:
			note = "none: " + res.CentralNote()
		case nimg%2 == 1 && centred:
			k, dmin := 0, math.Inf(1)
			for i, im := range res.Images {
				if r := math.Hypot(im.X-x0, im.Y-y0); r < dmin {
					k, dmin = i, r
				}
			}
			muC = res.Images[k].Mu
			fluxC = math.Abs(muC) * src.Components[0].TotalFlux() * 1e3
			note = fmt.Sprintf("image nearest the lens centre, at (%.3g, %.3g) arcsec", res.Images[k].X, res.Images[k].Y)
		default:
			note = "no central image (even image count)"
		}
		d.add("central image magnification", "", muC, note)
		d.add("central image flux", "mJy", fluxC, "|μ| × intrinsic flux of source "+names[0])
	}
	return d
}

func sourceNames(m *Model) []string {
	var s []string
	for _, c := range m.Sources {
		if c.Kind != "pixels" {
			s = append(s, c.Name)
		}
	}
	return s
}
