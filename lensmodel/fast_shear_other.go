//go:build !amd64 || amd64.v3

package lensmodel

// shearFast does nothing: the per-point loop is used (fast_shear_amd64.go).
func shearFast(e *shearEval, ax, ay, x, y []float64) int { return 0 }
