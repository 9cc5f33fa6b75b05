package lensmodel

import "math"

// tabEval evaluates a tabulated spherical profile, made elliptical through
// its potential like NFW.
type tabEval struct {
	g      ellPot
	t      *radialTable
	ks     float64 // κ_s
	invRs  float64 // 1/r_s
	psiFac float64 // κ_s r_s²
}

func newTabEval(t *radialTable, x0, y0, ks, rs, q, pa float64) tabEval {
	return tabEval{g: newEllPot(x0, y0, q, pa), t: t, ks: ks, invRs: 1 / rs, psiFac: ks * rs * rs}
}

func (e *tabEval) deflect(x, y float64) (ax, ay float64) {
	xp, yp, r := e.g.radius(x, y)
	if r == 0 {
		return 0, 0
	}
	kbar, _ := e.t.eval(r * e.invRs)
	return e.g.deflect(xp, yp, e.ks*kbar)
}

// radius returns the local coordinates and elliptical radius of (x, y); at
// the centre itself, those of a point 1e-9 r_s from it along the major axis,
// where κ and the Hessian take their central values (a core's, or a large
// finite value for a cusp) to within the profile's change over 1e-9 r_s.
func (e *tabEval) radius(x, y float64) (xp, yp, r float64) {
	xp, yp, r = e.g.radius(x, y)
	if r == 0 {
		r = radialXMin * 1e-3 / e.invRs
		xp, yp = r/math.Sqrt(e.g.a1), 0
	}
	return xp, yp, r
}

func (e *tabEval) kappa(x, y float64) float64 {
	xp, yp, r := e.radius(x, y)
	kbar, k := e.t.eval(r * e.invRs)
	return e.g.kappa(xp, yp, r, e.ks*kbar, e.ks*k)
}

func (e *tabEval) hessian(x, y float64) (hxx, hxy, hyy float64) {
	xp, yp, r := e.radius(x, y)
	kbar, k := e.t.eval(r * e.invRs)
	return e.g.hessian(xp, yp, r, e.ks*kbar, e.ks*k)
}

func (e *tabEval) potential(x, y float64) float64 {
	_, _, r := e.g.radius(x, y)
	return e.psiFac * e.t.potential(r*e.invRs)
}

func (e *tabEval) addDeflect(ax, ay, x, y []float64) {
	ax, ay, y = ax[:len(x)], ay[:len(x)], y[:len(x)]
	for i := range x {
		dx, dy := e.deflect(x[i], y[i])
		ax[i] += dx
		ay[i] += dy
	}
}
