//go:build amd64

package nufft

import "math"

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
	fn := interpAVX[p.w]
	k := &p.ker
	hw := float64(p.w) / 2
	stride := (k.deg + 1) * k.lanes
	g := p.padded
	np, pad := p.np, p.pad
	limit := len(g) - ((p.w-1)*np + k.lanes/2)
	tx, ty := p.tx[lo:hi], p.ty[lo:hi]
	out := dst[lo:hi]
	for s, x := range tx {
		y := ty[s]
		fx := math.Ceil(x - hw)
		fy := math.Ceil(y - hw)
		jx, zx := piece(fx - x + hw)
		jy, zy := piece(fy - y + hw)
		base := (int(fy)+pad)*np + int(fx) + pad
		if uint(base) > uint(limit) {
			panic("nufft: internal error: kernel outside the padded grid")
		}
		re, im := fn(&g[base], np, &k.dup[jx*stride], &k.dup[jy*stride], k.deg, zx, zy)
		out[s] = complex(re, im)
	}
}

// spreadBandAVX is spreadBand with the assembly kernels (c in sorted order).
func (p *Plan) spreadBandAVX(lo, hi int, c []complex128) {
	fn := spreadAVX[p.w]
	k := &p.ker
	hw := float64(p.w) / 2
	stride := (k.deg + 1) * k.lanes
	g := p.padded
	np, pad := p.np, p.pad
	limit := len(g) - ((p.w-1)*np + k.lanes/2)
	tx, ty := p.tx[lo:hi], p.ty[lo:hi]
	cs := c[lo:hi]
	for s, x := range tx {
		y := ty[s]
		fx := math.Ceil(x - hw)
		fy := math.Ceil(y - hw)
		jx, zx := piece(fx - x + hw)
		jy, zy := piece(fy - y + hw)
		base := (int(fy)+pad)*np + int(fx) + pad
		if uint(base) > uint(limit) {
			panic("nufft: internal error: kernel outside the padded grid")
		}
		v := cs[s]
		fn(&g[base], np, &k.dup[jx*stride], &k.dup[jy*stride], k.deg, zx, zy, real(v), imag(v))
	}
}
