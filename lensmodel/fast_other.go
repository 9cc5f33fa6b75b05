//go:build !amd64

package lensmodel

// haveAVX is false off amd64: the per-point methods are used.
const haveAVX = false

func sieFast(e *sieEval, ax, ay, x, y []float64) int { return 0 }

func nfwFast(e *nfwEval, ax, ay, x, y []float64) int { return 0 }

func sieOne(e *sieEval, x, y float64) (ax, ay float64) { panic("lensmodel: no assembly kernels") }

func nfwOne(e *nfwEval, x, y float64) (ax, ay float64, ok bool) {
	panic("lensmodel: no assembly kernels")
}
