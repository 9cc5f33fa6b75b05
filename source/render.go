package source

import (
	"fmt"
	"math"
	"runtime"
	"sync"
	"sync/atomic"

	"deflect/internal/par"
	"deflect/internal/vmath"
	"deflect/lensmodel"
)

// Pixels is a square sky grid of Size()×Size() pixels, PixelSize() arcsec on
// a side, whose pixel at flat index k is centred at Centre(k) arcsec
// (x east, y north). uv.Grid implements it; images are stored with k = j·N + i
// as in uv.Grid. A Pixels may also have a method Centres(x, y []float64)
// that stores the centres of all pixels at once, the values of Centre;
// Render then uses it.
type Pixels interface {
	Size() int
	PixelSize() float64
	Centre(k int) (x, y float64)
}

// RenderOptions are the settings of Render. The zero value is the
// documented default for every field.
type RenderOptions struct {
	// Freq is the observing frequency in Hz at which component fluxes are
	// evaluated with their spectral indices; 0 means the source's RefFreq.
	Freq float64
	// Tol is the accepted error of each pixel's flux relative to the larger
	// of that flux and the intrinsic source flux divided by the number of
	// pixels; 0 means 1e-3.
	Tol float64
	// MaxDepth is the largest number of halvings of a pixel side; 0 means 6
	// (cells 1/64 of a pixel on a side, each sampled at the centres of its
	// four quarters).
	MaxDepth int
}

// RenderStats reports the work Render did.
type RenderStats struct {
	Rays     int // number of ray-traced positions
	MaxDepth int // deepest level of quarter samples, at most RenderOptions.MaxDepth + 1
}

// Render writes into dst the sky image in Jy per pixel of the extended
// components of src (point components are left out: see LensedPoint) seen
// through lens, on the grid pix, and returns dst; dst is allocated when nil
// and must otherwise hold Size()² values. A nil lens means no lensing.
//
// Each pixel's flux is the integral of the surface brightness over the
// pixel, computed by adaptive midpoint quadrature of I(β(θ)) with
// β = θ − α(θ). Every pixel centre is traced first. A pixel away from the
// grid edge whose four edge neighbours show the brightness smooth on it is
// done with that one ray: with the second differences D_xx, D_yy of the
// centre values along the rows and columns (so ∇²I ≈ (D_xx + D_yy)/p² for
// pixels of side p), the one-point rule's error over the pixel is
// a (D_xx + D_yy)/24 to second order (a the pixel area), and the pixel is
// accepted, with the corrected value a (I_c + (D_xx + D_yy)/24), when
// a (|D_xx| + |D_yy|)/24 (which does not cancel at saddles) is within the
// pixel's tolerance and the pixel's source-plane footprint (the largest
// distance from its traced centre to a neighbour's) is no wider than
// max(Scale, d/2) of every component at distance d. Any other
// pixel is refined: a cell (first the whole pixel) is compared with the mean
// of its four quarters; the cell is split into those quarters, recursively
// up to MaxDepth, while the two differ by more than the cell's share of the
// tolerance, or while the cell's ray-traced footprint in the source plane is
// wider than max(Scale, d/2) of a component at distance d from it (so
// compact cores are found however small, and regions next to critical
// curves, where footprints shrink, are resolved where brightness changes).
// Rows are shared among runtime.GOMAXPROCS(0) goroutines; the result does not
// depend on their number.
func Render(dst []float64, pix Pixels, lens lensmodel.Mass, src Source, opt RenderOptions) ([]float64, RenderStats) {
	n := pix.Size()
	if n <= 0 {
		panic(fmt.Sprintf("source: grid size %d is not positive", n))
	}
	if dst == nil {
		dst = make([]float64, n*n)
	}
	if len(dst) != n*n {
		panic(fmt.Sprintf("source: Render destination has %d values, grid has %d", len(dst), n*n))
	}
	r := newRenderer(pix, lens, src, opt)
	c := centresPool.Get().(*centres)
	defer centresPool.Put(c)
	c.trace(r)
	r.c = c
	var next atomic.Int64
	var wg sync.WaitGroup
	var mu sync.Mutex
	stats := RenderStats{Rays: n * n}
	for range min(runtime.GOMAXPROCS(0), n) {
		wg.Go(func() {
			w := r.newWorker()
			for {
				j := int(next.Add(1)) - 1
				if j >= n {
					break
				}
				w.row(dst[j*n:(j+1)*n], j)
			}
			mu.Lock()
			stats.Rays += w.rays
			stats.MaxDepth = max(stats.MaxDepth, w.depth)
			mu.Unlock()
			putWorker(w)
		})
	}
	wg.Wait()
	return dst, stats
}

// centres holds the pixel centres of a Render, their traced positions and
// the brightness there, at index k = j·N + i.
type centres struct {
	x, y, bx, by, v []float64
}

// oneRay enables the one-ray acceptance of smooth pixels; the tests turn it
// off to compare with refinement everywhere.
var oneRay = true

var centresPool = sync.Pool{New: func() any { return new(centres) }}

// trace fills c for the grid of r: the ray tracing in parallel through
// r.trace, the brightness in parallel over rows.
func (c *centres) trace(r *renderer) {
	m := r.n * r.n
	if cap(c.x) < m {
		c.x, c.y = make([]float64, m), make([]float64, m)
		c.bx, c.by = make([]float64, m), make([]float64, m)
		c.v = make([]float64, m)
	}
	c.x, c.y, c.bx, c.by, c.v = c.x[:m], c.y[:m], c.bx[:m], c.by[:m], c.v[:m]
	if cf, ok := r.pix.(interface{ Centres(x, y []float64) }); ok {
		cf.Centres(c.x, c.y)
	} else {
		for k := range m {
			c.x[k], c.y[k] = r.pix.Centre(k)
		}
	}
	r.trace(c.bx, c.by, c.x, c.y)
	par.Ranges(m, 1024, func(_, lo, hi int) {
		r.brightness(c.v[lo:hi], c.bx[lo:hi], c.by[lo:hi])
	})
}

// smoothRow sets done[i] for the pixels of interior row j that can be done
// with their centre ray alone (see Render), and out[i] to their flux
// a (I_c + (D_xx + D_yy)/24) in Jy; the first and last pixels are never
// done so.
func (r *renderer) smoothRow(out []float64, done []bool, j int) {
	c, n := r.c, r.n
	k0 := j * n
	v0, v1, v2 := c.v[k0-n:k0], c.v[k0:k0+n], c.v[k0+n:k0+2*n]
	x0, x1, x2 := c.bx[k0-n:k0], c.bx[k0:k0+n], c.bx[k0+n:k0+2*n]
	y0, y1, y2 := c.by[k0-n:k0], c.by[k0:k0+n], c.by[k0+n:k0+2*n]
	out, done = out[:n], done[:n]
	done[0], done[n-1] = false, false
	area, area24, tol, floor := r.area, r.area24, r.tol, r.floor
	info := r.info
	for i := 1; i < n-1; i++ {
		done[i] = false
		vc := v1[i]
		dxx := v1[i-1] + v1[i+1] - 2*vc
		dyy := v0[i] + v2[i] - 2*vc
		// a (|D_xx| + |D_yy|)/24 ≤ tol max(|I_c| a, floor).
		lim := math.Abs(vc) * area
		if lim < floor {
			lim = floor
		}
		if !((math.Abs(dxx)+math.Abs(dyy))*area24 <= tol*lim) {
			continue
		}
		// The footprint: the largest squared distance to a neighbour's
		// traced position (a NaN fails the final comparison).
		bx, by := x1[i], y1[i]
		ex, ey := x1[i-1]-bx, y1[i-1]-by
		ext2 := ex*ex + ey*ey
		ex, ey = x1[i+1]-bx, y1[i+1]-by
		if d2 := ex*ex + ey*ey; !(d2 <= ext2) {
			ext2 = d2
		}
		ex, ey = x0[i]-bx, y0[i]-by
		if d2 := ex*ex + ey*ey; !(d2 <= ext2) {
			ext2 = d2
		}
		ex, ey = x2[i]-bx, y2[i]-by
		if d2 := ex*ex + ey*ey; !(d2 <= ext2) {
			ext2 = d2
		}
		if !(ext2 < math.Inf(1)) {
			continue
		}
		ok := true
		for _, ci := range info {
			if ci.unresolved(ext2, bx, by) {
				ok = false
				break
			}
		}
		if ok {
			out[i] = area*vc + (dxx+dyy)*area24
			done[i] = true
		}
	}
}

// brightFunc adds a component's surface brightness in Jy/arcsec² at the
// rendering frequency at (x[i], y[i]) to v[i].
type brightFunc func(v, x, y []float64)

type compInfo struct {
	x, y, scale, scale2 float64 // scale2 = scale²
}

// unresolved reports whether a footprint of squared width ext2 traced to
// (bx, by) is wider than max(Scale, d/2) of the component at distance d.
func (c compInfo) unresolved(ext2, bx, by float64) bool {
	dx, dy := bx-c.x, by-c.y
	return ext2 > c.scale2 && 4*ext2 > dx*dx+dy*dy
}

// addExp sets arg[i] = e^{arg[i]} (vmath.Exp) and adds a times it to v[i].
func addExp(v, arg []float64, a float64) {
	vmath.Exp(arg, arg)
	v = v[:len(arg)]
	for i, e := range arg {
		v[i] += a * e
	}
}

type renderer struct {
	pix      Pixels
	n        int
	trace    func(bx, by, x, y []float64)
	comps    []brightFunc
	info     []compInfo
	tol      float64
	maxDepth int
	floor    float64 // absolute tolerance floor per pixel, Jy
	area     float64 // pixel area, arcsec²
	area24   float64 // area/24
	c        *centres
}

func newRenderer(pix Pixels, lens lensmodel.Mass, src Source, opt RenderOptions) *renderer {
	r := &renderer{pix: pix, n: pix.Size(), tol: opt.Tol, maxDepth: opt.MaxDepth}
	if r.tol == 0 {
		r.tol = 1e-3
	}
	if !(r.tol > 0) {
		panic(fmt.Sprintf("source: render tolerance %v is not positive", opt.Tol))
	}
	if r.maxDepth == 0 {
		r.maxDepth = 6
	}
	if r.maxDepth < 0 || r.maxDepth > 20 {
		panic(fmt.Sprintf("source: render depth %d outside [0, 20]", opt.MaxDepth))
	}
	p := pix.PixelSize()
	if !(p > 0) {
		panic(fmt.Sprintf("source: pixel size %v is not positive", p))
	}
	r.area = p * p
	r.area24 = r.area / 24
	var flux float64
	for _, c := range src.Components {
		if _, ok := c.(Point); ok {
			continue
		}
		f := src.SpectralFactor(c.SpectralIndex(), opt.Freq)
		flux += math.Abs(c.TotalFlux() * f)
		cx, cy := c.Centre()
		sc := c.Scale()
		r.info = append(r.info, compInfo{cx, cy, sc, sc * sc})
		r.comps = append(r.comps, prepare(c, f))
	}
	r.floor = r.tol * flux / float64(r.n*r.n)
	if r.floor == 0 {
		r.floor = math.SmallestNonzeroFloat64
	}
	switch l := lens.(type) {
	case nil:
		r.trace = func(bx, by, x, y []float64) { copy(bx, x); copy(by, y) }
	case interface{ Trace(bx, by, x, y []float64) }: // Lens, Lens.Prepare
		r.trace = l.Trace
	default:
		r.trace = lensmodel.Lens{lens}.Trace
	}
	return r
}

// prepare returns the brightness function of c scaled by f, with the
// profile's constants computed once.
func prepare(c Component, f float64) brightFunc {
	switch c := c.(type) {
	case Sersic:
		p := c.Prepare()
		return func(v, x, y []float64) { p.addBrightness(v, x, y, f) }
	case Gaussian:
		c.check()
		sig := c.FWHM / fwhmPerSigma
		s, cs := math.Sincos(c.PA * math.Pi / 180)
		norm := f * c.Flux / (2 * math.Pi * sig * sig * c.Q)
		k := -1 / (2 * sig * sig)
		return func(v, x, y []float64) {
			y = y[:len(x)]
			v = v[:len(x)]
			var arg [256]float64
			for lo := 0; lo < len(x); lo += len(arg) {
				hi := min(lo+len(arg), len(x))
				e := arg[:hi-lo]
				for i := range e {
					dx, dy := x[lo+i]-c.X, y[lo+i]-c.Y
					xp := dx*s + dy*cs
					yp := (-dx*cs + dy*s) / c.Q
					e[i] = k * (xp*xp + yp*yp)
				}
				addExp(v[lo:hi], e, norm)
			}
		}
	default:
		return func(v, x, y []float64) {
			y = y[:len(x)]
			v = v[:len(x)]
			for i, xi := range x {
				v[i] += f * c.Brightness(xi, y[i])
			}
		}
	}
}

// cell is a square part of a pixel: centre (x, y), half side h, brightness
// v at its centre, which traces to (bx, by).
type cell struct {
	pix       int
	x, y, h   float64
	v, bx, by float64
}

type worker struct {
	r            *renderer
	cells, next  []cell
	x, y, bx, by []float64
	v            []float64
	tolPix       []float64
	done         []bool
	rays, depth  int
}

// newWorker returns a worker for r, reusing the buffers of an earlier
// Render's (see putWorker).
func (r *renderer) newWorker() *worker {
	w, _ := workerPool.Get().(*worker)
	if w == nil {
		w = new(worker)
	}
	w.r = r
	if cap(w.tolPix) < r.n {
		w.tolPix = make([]float64, r.n)
	}
	w.tolPix = w.tolPix[:r.n]
	w.cells, w.next = w.cells[:0], w.next[:0]
	w.rays, w.depth = 0, 0
	return w
}

// putWorker returns w's buffers to the pool.
func putWorker(w *worker) {
	w.r = nil
	workerPool.Put(w)
}

var workerPool sync.Pool

// traceAll ray-traces the first m positions of w.x, w.y into w.bx, w.by and
// evaluates the brightness there into w.v.
func (w *worker) traceAll(m int) {
	w.r.trace(w.bx[:m], w.by[:m], w.x[:m], w.y[:m])
	w.r.brightness(w.v[:m], w.bx[:m], w.by[:m])
	w.rays += m
}

// brightness sets v[i] to the brightness of all components at (x[i], y[i]).
func (r *renderer) brightness(v, x, y []float64) {
	clear(v)
	for _, f := range r.comps {
		f(v, x, y)
	}
}

func (w *worker) grow(m int) {
	if cap(w.x) < m {
		w.x = make([]float64, m)
		w.y = make([]float64, m)
		w.bx = make([]float64, m)
		w.by = make([]float64, m)
		w.v = make([]float64, m)
	}
}

// row renders pixel row j into out.
func (w *worker) row(out []float64, j int) {
	r := w.r
	n := r.n
	h := r.pix.PixelSize() / 2
	ctr := r.c
	w.cells = w.cells[:0]
	if len(w.done) < n {
		w.done = make([]bool, n)
	}
	done := w.done[:n]
	if oneRay && j > 0 && j < n-1 {
		r.smoothRow(out, done, j)
	} else {
		clear(done)
	}
	for i := range n {
		k := j*n + i
		if done[i] {
			continue
		}
		w.cells = append(w.cells, cell{pix: i, x: ctr.x[k], y: ctr.y[k], h: h, v: ctr.v[k], bx: ctr.bx[k], by: ctr.by[k]})
		out[i] = 0
	}
	offs := [4][2]float64{{-0.5, -0.5}, {0.5, -0.5}, {-0.5, 0.5}, {0.5, 0.5}}
	for depth := 0; len(w.cells) > 0; depth++ {
		m := 4 * len(w.cells)
		w.grow(m)
		for c, ce := range w.cells {
			for q, o := range offs {
				w.x[4*c+q] = ce.x + o[0]*ce.h
				w.y[4*c+q] = ce.y + o[1]*ce.h
			}
		}
		w.traceAll(m)
		w.depth = max(w.depth, depth+1)
		w.next = w.next[:0]
		for c, ce := range w.cells {
			v := w.v[4*c : 4*c+4]
			fine := (v[0] + v[1] + v[2] + v[3]) / 4
			a := 4 * ce.h * ce.h // cell area, arcsec²
			if depth == 0 {
				w.tolPix[ce.pix] = r.tol * max(math.Abs(fine)*a, r.floor)
			}
			split := depth < r.maxDepth &&
				(math.Abs(fine-ce.v)*a > w.tolPix[ce.pix]*a/r.area || w.unresolved(4*c, ce))
			if !split {
				out[ce.pix] += fine * a
				continue
			}
			for q := range 4 {
				k := 4*c + q
				w.next = append(w.next, cell{pix: ce.pix, x: w.x[k], y: w.y[k], h: ce.h / 2, v: w.v[k], bx: w.bx[k], by: w.by[k]})
			}
		}
		w.cells, w.next = w.next, w.cells
	}
}

// unresolved reports whether the cell's source-plane footprint, estimated
// from its quarters' traced positions at w.bx[k:k+4], is wider than
// max(Scale, d/2) for some component at distance d.
func (w *worker) unresolved(k int, ce cell) bool {
	var ext2 float64
	for q := range 4 {
		dx, dy := w.bx[k+q]-ce.bx, w.by[k+q]-ce.by
		ext2 = max(ext2, dx*dx+dy*dy)
	}
	ext2 *= 4 // (2 max |Δβ|)²
	for _, c := range w.r.info {
		if c.unresolved(ext2, ce.bx, ce.by) {
			return true
		}
	}
	return false
}
