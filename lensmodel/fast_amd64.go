//go:build amd64

package lensmodel

import "deflect/internal/vmath"

//go:generate go run gen_fast.go

// haveAVX reports whether the CPU and the operating system support AVX2 and
// FMA, for the kernels of fast_amd64.s.
var haveAVX = vmath.HaveAVX2FMA()

// sieDeflectAVX adds to ax[i], ay[i] the deflection of the isothermal
// ellipsoid described by p at (x[i], y[i]) for 0 ≤ i < n, n a multiple of 8
// (see sieFast).
//
//go:noescape
func sieDeflectAVX(p *sieParams, ax, ay, x, y *float64, n int)

// nfwDeflectAVX adds to ax[i], ay[i] the deflection of the NFW halo
// described by p at (x[i], y[i]), eight points at a time, for 0 ≤ i < n, n
// a multiple of 8, and stops before the first group of eight with a point
// at R ≥ 0.8 r_s (or not a number). It returns the number of points done.
//
//go:noescape
func nfwDeflectAVX(p *nfwParams, ax, ay, x, y *float64, n int) (done int)

// sieFast adds the deflection of e at the first len(x)/8·8 points with the
// assembly kernel and returns the number of points done.
func sieFast(e *sieEval, ax, ay, x, y []float64) int {
	n := len(x) &^ 7
	if n == 0 {
		return 0
	}
	sieDeflectAVX(&e.kp, &ax[0], &ay[0], &x[0], &y[0], n)
	return n
}

// sieOne returns the deflection of e at (x, y) as the assembly kernel
// gives it (fast_mirror.go).
func sieOne(e *sieEval, x, y float64) (ax, ay float64) { return sieOneGo(&e.kp, x, y) }

// nfwOne returns the deflection of e at (x, y) as the assembly kernel gives
// it, or ok = false when (x, y) lies outside its domain R < 0.8 r_s.
func nfwOne(e *nfwEval, x, y float64) (ax, ay float64, ok bool) { return nfwOneGo(&e.kp, x, y) }

// nfwFast adds the deflection of e at the first len(x)/8·8 points, with the
// assembly kernel where all eight points of a group lie inside R < 0.8 r_s
// and with the per-point method elsewhere, and returns the number of points
// done.
func nfwFast(e *nfwEval, ax, ay, x, y []float64) int {
	n := len(x) &^ 7
	if n == 0 {
		return 0
	}
	for i := 0; i < n; {
		i += nfwDeflectAVX(&e.kp, &ax[i], &ay[i], &x[i], &y[i], n-i)
		if i < n {
			for j := i; j < i+8; j++ {
				dx, dy := e.deflect(x[j], y[j]) // nfwOne or the formulas
				ax[j] += dx
				ay[j] += dy
			}
			i += 8
		}
	}
	return n
}

// shearDeflectAVX adds the deflection of the external shear described by p
// at (x[i], y[i]) to ax[i], ay[i] for 0 ≤ i < n, n a multiple of 8, equal
// bit for bit to shearEval.deflect.
//
//go:noescape
func shearDeflectAVX(p *shearParams, ax, ay, x, y *float64, n int)
