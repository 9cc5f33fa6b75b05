//go:build amd64 && !amd64.v3

package lensmodel

// The shear kernel reproduces shearEval.deflect's unfused products and
// sums; from GOAMD64=v3 on, the compiler may fuse them into FMA
// instructions, so the kernel is used below v3 only (fast_shear_other.go).

// shearFast adds the deflection of e at the first len(x)/8·8 points with
// the assembly kernel and returns the number of points done.
func shearFast(e *shearEval, ax, ay, x, y []float64) int {
	n := len(x) &^ 7
	if n == 0 {
		return 0
	}
	p := shearParams{e.x0, e.y0, e.gc, e.gs}
	shearDeflectAVX(&p, &ax[0], &ay[0], &x[0], &y[0], n)
	return n
}
