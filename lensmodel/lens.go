package lensmodel

import (
	"fmt"
	"sync"

	"deflect/internal/par"
)

// Lens is a sum of mass components, e.g. three galaxies, a group halo and an
// external shear, each with its own centre, axis ratio and position angle.
// It implements Mass: the deflection, convergence, Hessian and potential are
// the sums over the components. The batch methods (DeflectPoints, Trace,
// HessianPoints, MagnificationPoints, …) evaluate many points in parallel
// across runtime.GOMAXPROCS(0) goroutines; each point's value does not
// depend on the number of goroutines, and the loops over points allocate
// nothing.
//
// A Lens is safe for concurrent use as long as no goroutine modifies it.
type Lens []Mass

var (
	_ Mass      = Lens{}
	_ Validator = Lens{}
)

// Validate calls Validate on every component that has one and returns the
// first error, with the component's index.
func (l Lens) Validate() error {
	for i, m := range l {
		if m == nil {
			return fmt.Errorf("lensmodel: lens component %d is nil", i)
		}
		if v, ok := m.(Validator); ok {
			if err := v.Validate(); err != nil {
				return fmt.Errorf("lens component %d: %w", i, err)
			}
		}
	}
	return nil
}

// Deflect returns the total deflection (α_x, α_y) in arcsec at (x, y) in
// arcsec.
func (l Lens) Deflect(x, y float64) (ax, ay float64) {
	for _, m := range l {
		dx, dy := m.Deflect(x, y)
		ax += dx
		ay += dy
	}
	return ax, ay
}

// Kappa returns the total convergence at (x, y) in arcsec.
func (l Lens) Kappa(x, y float64) float64 {
	var k float64
	for _, m := range l {
		k += m.Kappa(x, y)
	}
	return k
}

// Hessian returns the total ψ_xx, ψ_xy and ψ_yy at (x, y) in arcsec.
func (l Lens) Hessian(x, y float64) (hxx, hxy, hyy float64) {
	for _, m := range l {
		a, b, c := m.Hessian(x, y)
		hxx += a
		hxy += b
		hyy += c
	}
	return hxx, hxy, hyy
}

// Potential returns the total lensing potential in arcsec² at (x, y) in
// arcsec.
func (l Lens) Potential(x, y float64) float64 {
	var p float64
	for _, m := range l {
		p += m.Potential(x, y)
	}
	return p
}

// Jacobian returns the lens-mapping Jacobian A = ∂β/∂θ = I − ∇∇ψ at (x, y)
// in arcsec; A is symmetric, so a12 = a21.
func (l Lens) Jacobian(x, y float64) (a11, a12, a22 float64) {
	hxx, hxy, hyy := l.Hessian(x, y)
	return 1 - hxx, -hxy, 1 - hyy
}

// Magnification returns the signed magnification μ = 1/det A at (x, y) in
// arcsec: positive for images of even parity (minima and maxima of the
// arrival time), negative for saddle points, ±Inf on a critical curve.
func (l Lens) Magnification(x, y float64) float64 {
	hxx, hxy, hyy := l.Hessian(x, y)
	return magnification(hxx, hxy, hyy)
}

func magnification(hxx, hxy, hyy float64) float64 {
	return 1 / ((1-hxx)*(1-hyy) - hxy*hxy)
}

// TraceRay returns the source-plane position β = θ − α(θ) in arcsec of the
// image-plane position θ = (x, y) in arcsec.
func (l Lens) TraceRay(x, y float64) (bx, by float64) {
	ax, ay := l.Deflect(x, y)
	return x - ax, y - ay
}

// DeflectPoints stores in ax[i], ay[i] the deflection in arcsec at
// (x[i], y[i]) in arcsec. All slices must have the same length.
func (l Lens) DeflectPoints(ax, ay, x, y []float64) {
	checkLengths("DeflectPoints", len(x), len(ax), len(ay), len(y))
	evs := l.evaluators()
	parallel(len(x), func(lo, hi int) {
		dx, dy := ax[lo:hi], ay[lo:hi]
		clear(dx)
		clear(dy)
		for _, e := range evs {
			e.addDeflect(dx, dy, x[lo:hi], y[lo:hi])
		}
	})
}

// Trace stores in bx[i], by[i] the source-plane position β = θ − α(θ) in
// arcsec of the image-plane position θ = (x[i], y[i]) in arcsec. All slices
// must have the same length; bx and by may not alias x or y.
func (l Lens) Trace(bx, by, x, y []float64) {
	checkLengths("Trace", len(x), len(bx), len(by), len(y))
	traceWith(l.evaluators(), bx, by, x, y)
}

// Trace is Lens.Trace with the components prepared once, the same values.
func (p preparedLens) Trace(bx, by, x, y []float64) {
	checkLengths("Trace", len(x), len(bx), len(by), len(y))
	traceWith(p.e, bx, by, x, y)
}

// traceWith is Trace with the evaluators evs.
func traceWith(evs []evaluator, bx, by, x, y []float64) {
	parallel(len(x), func(lo, hi int) {
		dx, dy := bx[lo:hi], by[lo:hi]
		clear(dx)
		clear(dy)
		xs, ys := x[lo:hi], y[lo:hi]
		for _, e := range evs {
			e.addDeflect(dx, dy, xs, ys)
		}
		for i := range dx {
			dx[i] = xs[i] - dx[i]
			dy[i] = ys[i] - dy[i]
		}
	})
}

// TraceGrid stores in bx, by the source-plane positions β = θ − α(θ) in
// arcsec of the points of a regular image-plane grid, θ = (x0 + i dx,
// y0 + j dy) in arcsec for 0 ≤ i < nx, 0 ≤ j < ny, at index j nx + i (i
// fastest). bx and by must have length nx·ny. It gives the values Trace gives
// for the same coordinates, without the coordinate slices.
func (l Lens) TraceGrid(bx, by []float64, x0, y0, dx, dy float64, nx, ny int) {
	if nx < 0 || ny < 0 {
		panic(fmt.Sprintf("lensmodel: TraceGrid: negative grid size %d×%d", nx, ny))
	}
	n := nx * ny
	checkLengths("TraceGrid", n, len(bx), len(by))
	evs := l.evaluators()
	parallel(n, func(lo, hi int) {
		buf := gridScratch.Get().(*[2][chunkSize]float64)
		xs, ys := buf[0][:hi-lo], buf[1][:hi-lo]
		j, i := lo/nx, lo%nx
		yj := y0 + float64(j)*dy
		for k := range xs {
			xs[k] = x0 + float64(i)*dx
			ys[k] = yj
			if i++; i == nx {
				i, j = 0, j+1
				yj = y0 + float64(j)*dy
			}
		}
		dxs, dys := bx[lo:hi], by[lo:hi]
		clear(dxs)
		clear(dys)
		for _, e := range evs {
			e.addDeflect(dxs, dys, xs, ys)
		}
		for k := range dxs {
			dxs[k] = xs[k] - dxs[k]
			dys[k] = ys[k] - dys[k]
		}
		gridScratch.Put(buf)
	})
}

// gridScratch holds the coordinate buffers of TraceGrid's chunks.
var gridScratch = sync.Pool{New: func() any { return new([2][chunkSize]float64) }}

// KappaPoints stores in k[i] the convergence at (x[i], y[i]) in arcsec.
func (l Lens) KappaPoints(k, x, y []float64) {
	checkLengths("KappaPoints", len(x), len(k), len(y))
	evs := l.evaluators()
	parallel(len(x), func(lo, hi int) {
		for i := lo; i < hi; i++ {
			var s float64
			for _, e := range evs {
				s += e.kappa(x[i], y[i])
			}
			k[i] = s
		}
	})
}

// PotentialPoints stores in psi[i] the potential in arcsec² at (x[i], y[i])
// in arcsec.
func (l Lens) PotentialPoints(psi, x, y []float64) {
	checkLengths("PotentialPoints", len(x), len(psi), len(y))
	evs := l.evaluators()
	parallel(len(x), func(lo, hi int) {
		for i := lo; i < hi; i++ {
			var s float64
			for _, e := range evs {
				s += e.potential(x[i], y[i])
			}
			psi[i] = s
		}
	})
}

// HessianPoints stores in hxx[i], hxy[i], hyy[i] the Hessian of the
// potential at (x[i], y[i]) in arcsec.
func (l Lens) HessianPoints(hxx, hxy, hyy, x, y []float64) {
	checkLengths("HessianPoints", len(x), len(hxx), len(hxy), len(hyy), len(y))
	evs := l.evaluators()
	parallel(len(x), func(lo, hi int) {
		for i := lo; i < hi; i++ {
			hxx[i], hxy[i], hyy[i] = hessianSum(evs, x[i], y[i])
		}
	})
}

// MagnificationPoints stores in mu[i] the signed magnification at
// (x[i], y[i]) in arcsec (see Magnification).
func (l Lens) MagnificationPoints(mu, x, y []float64) {
	checkLengths("MagnificationPoints", len(x), len(mu), len(y))
	evs := l.evaluators()
	parallel(len(x), func(lo, hi int) {
		for i := lo; i < hi; i++ {
			mu[i] = magnification(hessianSum(evs, x[i], y[i]))
		}
	})
}

func hessianSum(evs []evaluator, x, y float64) (hxx, hxy, hyy float64) {
	for _, e := range evs {
		a, b, c := e.hessian(x, y)
		hxx += a
		hxy += b
		hyy += c
	}
	return hxx, hxy, hyy
}

func (l Lens) evaluators() []evaluator {
	evs := make([]evaluator, len(l))
	for i, m := range l {
		evs[i] = withFastKernels(evaluatorOf(m)) // fast.go
	}
	return evs
}

func (l Lens) prepare() evaluator { return lensEval(l.evaluators()) }

// Prepare returns a Mass equal to l with every component's constants (sines
// and cosines of position angles, axis-ratio factors, halo tables) computed
// once, so that evaluating it point by point, as image finders and contour
// tracers do, costs what the batch methods cost per point. It reflects l at
// the time of the call: after changing a component, prepare again. The
// result is safe for concurrent use. It also has the method
// Trace(bx, by, x, y []float64) of Lens, with the same values, for batch
// code that reaches it through an interface assertion.
func (l Lens) Prepare() Mass { return preparedLens{lensEval(l.evaluators())} }

// preparedLens is the Mass returned by Lens.Prepare.
type preparedLens struct{ e lensEval }

func (p preparedLens) Deflect(x, y float64) (ax, ay float64) { return p.e.deflect(x, y) }
func (p preparedLens) Kappa(x, y float64) float64            { return p.e.kappa(x, y) }
func (p preparedLens) Potential(x, y float64) float64        { return p.e.potential(x, y) }
func (p preparedLens) prepare() evaluator                    { return p.e }

func (p preparedLens) Hessian(x, y float64) (hxx, hxy, hyy float64) {
	return p.e.hessian(x, y)
}

// lensEval is the evaluator of a Lens nested in a Lens.
type lensEval []evaluator

func (l lensEval) deflect(x, y float64) (ax, ay float64) {
	for _, e := range l {
		dx, dy := e.deflect(x, y)
		ax += dx
		ay += dy
	}
	return ax, ay
}

func (l lensEval) kappa(x, y float64) float64 {
	var k float64
	for _, e := range l {
		k += e.kappa(x, y)
	}
	return k
}

func (l lensEval) hessian(x, y float64) (hxx, hxy, hyy float64) {
	return hessianSum(l, x, y)
}

func (l lensEval) potential(x, y float64) float64 {
	var p float64
	for _, e := range l {
		p += e.potential(x, y)
	}
	return p
}

func (l lensEval) addDeflect(ax, ay, x, y []float64) {
	for _, e := range l {
		e.addDeflect(ax, ay, x, y)
	}
}

func checkLengths(name string, n int, others ...int) {
	for _, m := range others {
		if m != n {
			panic(fmt.Sprintf("lensmodel: %s: slice lengths differ (%d and %d)", name, n, m))
		}
	}
}

// chunkSize is the number of points a goroutine takes at a time: small
// enough to balance the load and keep the slices (x, y, α_x, α_y: 16 KiB)
// in the first-level cache while each component passes over them, large
// enough that scheduling costs nothing. A multiple of 8, the group of the
// batch kernels (fast.go), so that only the last chunk can end in a
// partial group.
const chunkSize = 512

// parallel calls fn on consecutive chunks [lo, hi) of [0, n), spread over
// runtime.GOMAXPROCS(0) goroutines.
func parallel(n int, fn func(lo, hi int)) { par.Chunks(n, chunkSize, fn) }
