//go:build amd64

package nufft

//go:generate go run gen_avx.go

// cpuidex and xgetbv0 are in kernels_amd64.s.
func cpuidex(leaf, sub uint32) (a, b, c, d uint32)
func xgetbv0() (eax uint32)

// haveAVX reports whether the CPU and OS support AVX2 and FMA, for the
// assembly kernels of kernels_amd64.s.
var haveAVX = detectAVX()

func detectAVX() bool {
	maxLeaf, _, _, _ := cpuidex(0, 0)
	if maxLeaf < 7 {
		return false
	}
	_, _, c1, _ := cpuidex(1, 0)
	const fma, osxsave, avx = 1 << 12, 1 << 27, 1 << 28
	if c1&fma == 0 || c1&osxsave == 0 || c1&avx == 0 {
		return false
	}
	if xgetbv0()&6 != 6 { // the OS saves XMM and YMM state
		return false
	}
	_, b7, _, _ := cpuidex(7, 0)
	return b7&(1<<5) != 0 // AVX2
}

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
