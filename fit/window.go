package fit

import (
	"math"

	"gonum.org/v1/gonum/mathext"

	"deflect/lensmodel"
	"deflect/source"
	"deflect/uv"
)

// extentFlux is the fraction of a component's flux the rendering window
// may leave out.
const extentFlux = 1e-4

// componentExtent returns the source-plane semi-major radius in arcsec
// outside which lies extentFlux of the flux of c: for a Sérsic profile the
// enclosed flux is P(2n, b_n (R/R_e)^{1/n}) (P the regularised lower
// incomplete gamma function; Graham & Driver 2005, PASA 22, 118, eq. 2), so
// R = R_e (Q⁻¹(2n, extentFlux)/b_n)^n, 7.0 R_e for n = 1 and 80 R_e for
// n = 4; for an elliptical Gaussian √(2 ln(1/extentFlux)) σ. It returns 0
// for a point.
func componentExtent(c source.Component) float64 {
	switch s := c.(type) {
	case source.Sersic:
		b := source.SersicB(s.N)
		x := mathext.GammaIncRegCompInv(2*s.N, extentFlux)
		return s.Reff * math.Pow(x/b, s.N)
	case source.Gaussian:
		return s.FWHM / (2 * math.Sqrt(2*math.Ln2)) * math.Sqrt(2*math.Log(1/extentFlux))
	}
	return 0
}

// window is a square sub-grid of the likelihood grid, side n pixels from
// pixel (i0, j0), seen with the dataset offset (dx, dy).
type window struct {
	g      uv.Grid
	i0, j0 int
	n      int
	dx, dy float64
}

func (w window) Size() int          { return w.n }
func (w window) PixelSize() float64 { return w.g.Pixel }
func (w window) Centre(k int) (x, y float64) {
	x, y = w.g.XY(w.i0+k%w.n, w.j0+k/w.n)
	return x - w.dx, y - w.dy
}

// renderWindow returns the smallest square window of g (padded by three
// pixels) containing every pixel whose centre traces, through lens, to
// within a component's extent (plus the pixel's own footprint, bounded by
// |β − β_neighbour|) of an extended source component; ok is false when
// nothing lands there. trace holds 2 N² scratch values.
func renderWindow(g uv.Grid, lens lensmodel.Lens, comps []source.Component, dx, dy float64, trace []float64) (w window, ok bool) {
	n := g.N
	bx, by := trace[:n*n], trace[n*n:2*n*n]
	x0, y0 := g.XY(0, 0)
	lens.TraceGrid(bx, by, x0-dx, y0-dy, -g.Pixel, g.Pixel, n, n)
	type disk struct{ x, y, r float64 }
	var ds []disk
	for _, c := range comps {
		r := componentExtent(c)
		if r == 0 {
			continue
		}
		x, y := c.Centre()
		ds = append(ds, disk{x: x, y: y, r: r})
	}
	if len(ds) == 0 {
		return window{}, false
	}
	imin, imax, jmin, jmax := n, -1, n, -1
	for j := range n {
		for i := range n {
			k := j*n + i
			// The pixel's footprint: the distance to the traced
			// position of a neighbour.
			kn := k + 1
			if i == n-1 {
				kn = k - 1
			}
			fx, fy := bx[kn]-bx[k], by[kn]-by[k]
			foot := math.Sqrt(fx*fx + fy*fy)
			for _, d := range ds {
				ex, ey := bx[k]-d.x, by[k]-d.y
				if ex*ex+ey*ey <= (d.r+foot)*(d.r+foot) {
					imin, imax = min(imin, i), max(imax, i)
					jmin, jmax = min(jmin, j), max(jmax, j)
					break
				}
			}
		}
	}
	if imax < 0 {
		return window{}, false
	}
	const pad = 3
	// Sides are rounded up to a multiple of 16 pixels so that the few
	// distinct window sizes keep the compressed χ²'s cache of beam spectra
	// (one per padded support size) warm.
	side := max(imax-imin, jmax-jmin) + 1 + 2*pad
	side = min(n, (side+15)/16*16)
	ci, cj := (imin+imax)/2, (jmin+jmax)/2
	i0 := min(max(ci-side/2, 0), n-side)
	j0 := min(max(cj-side/2, 0), n-side)
	return window{g: g, i0: i0, j0: j0, n: side, dx: dx, dy: dy}, true
}

// pasteWindow writes the window image sub (w.n² values) into the full
// image dst, which is zeroed elsewhere.
func pasteWindow(dst, sub []float64, w window) {
	clear(dst)
	n := w.g.N
	for b := range w.n {
		copy(dst[(w.j0+b)*n+w.i0:(w.j0+b)*n+w.i0+w.n], sub[b*w.n:(b+1)*w.n])
	}
}
