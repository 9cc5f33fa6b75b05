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

// Centres stores the centres of all pixels, the values of Centre, in x and
// y (w.n² values each), one grid coordinate computation per row and column.
func (w window) Centres(x, y []float64) {
	n := w.n
	for j := range n {
		_, yj := w.g.XY(w.i0, w.j0+j)
		yj -= w.dy
		xs, ys := x[j*n:(j+1)*n], y[j*n:(j+1)*n]
		if j == 0 {
			for i := range xs {
				xi, _ := w.g.XY(w.i0+i, w.j0)
				xs[i] = xi - w.dx
			}
		} else {
			copy(xs, x[:n])
		}
		for i := range ys {
			ys[i] = yj
		}
	}
}

// renderWindow returns the smallest square window of g (padded by three
// pixels) containing every pixel whose centre traces, through lens, to
// within a component's extent (plus the pixel's own footprint) of an
// extended source component; ok is false when nothing lands there. The
// lens is traced at every other pixel in each direction: a traced centre
// stands for its block of 2×2 pixels, and its footprint, the distance to
// the traced position of the next traced centre (two pixels away), covers
// the block. trace holds 2 N² scratch values.
func renderWindow(g uv.Grid, lens lensmodel.Lens, comps []source.Component, dx, dy float64, trace []float64) (w window, ok bool) {
	n := g.N
	m := (n + 1) / 2
	bx, by := trace[:m*m], trace[m*m:2*m*m]
	x0, y0 := g.XY(0, 0)
	lens.TraceGrid(bx, by, x0-dx, y0-dy, -2*g.Pixel, 2*g.Pixel, m, m)
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
	for cj := range m {
		for ci := range m {
			k := cj*m + ci
			// The block's footprint: the distance to the traced
			// position of the next traced centre along x or y.
			kx, ky := k+1, k+m
			if ci == m-1 {
				kx = k - 1
			}
			if cj == m-1 {
				ky = k - m
			}
			fx, fy := bx[kx]-bx[k], by[kx]-by[k]
			gx, gy := bx[ky]-bx[k], by[ky]-by[k]
			foot := math.Sqrt(max(fx*fx+fy*fy, gx*gx+gy*gy))
			for _, d := range ds {
				ex, ey := bx[k]-d.x, by[k]-d.y
				if ex*ex+ey*ey <= (d.r+foot)*(d.r+foot) {
					i, j := 2*ci, 2*cj
					imin, imax = min(imin, i), max(imax, min(i+1, n-1))
					jmin, jmax = min(jmin, j), max(jmax, min(j+1, n-1))
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
