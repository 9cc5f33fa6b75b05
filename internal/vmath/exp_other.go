//go:build !amd64

package vmath

var useAVX, haveAVX = false, false

// HaveAVX2FMA reports whether the vector kernels can run: never on this
// architecture.
func HaveAVX2FMA() bool { return false }

func expAVX(dst, x *float64, n int) { panic("vmath: no vector kernel") }
