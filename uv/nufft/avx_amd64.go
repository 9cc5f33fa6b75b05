//go:build amd64

package nufft

import "deflect/internal/vmath"

//go:generate go run gen_avx.go

// haveAVX reports whether the CPU and OS support AVX2 and FMA, for the
// assembly kernels of kernels_amd64.s.
var haveAVX = vmath.HaveAVX2FMA()

// interpBandAVX is interpBand with the assembly kernels (dst in sorted order).
func (p *Plan) interpBandAVX(lo, hi int, dst []complex128) {
	if hi <= lo {
		return
	}
	k := &p.ker
	interpLoop[p.w](&p.padded[0], p.np, &k.dup[0], (k.deg+1)*k.lanes*8, k.deg,
		&p.key[lo], &p.z[2*lo], &dst[lo], hi-lo)
}

// spreadBandAVX is spreadBand with the assembly kernels (c in sorted order).
func (p *Plan) spreadBandAVX(g []complex128, lo, hi int, c []complex128) {
	if hi <= lo {
		return
	}
	if len(g) != len(p.padded) {
		panic("nufft: internal error: spreading onto a grid of the wrong size")
	}
	k := &p.ker
	spreadLoop[p.w](&g[0], p.np, &k.dup[0], (k.deg+1)*k.lanes*8, k.deg,
		&p.key[lo], &p.z[2*lo], &c[lo], hi-lo)
}
