package nufft

//go:generate go run gen_kernels.go

// interpolate sets dst[perm[s]] = Σ_{a,b} padded(l0y+b, l0x+a) ψx[a] ψy[b] for
// every sorted point s, in parallel over bands. The loops are in
// kernels_gen.go, unrolled for each kernel width.
func (p *Plan) interpolate(dst []complex128) {
	parallelItems(0, 1, p.nbands, func(_, band int) {
		if p.avx {
			p.interpBandAVX(p.bandAt[band], p.bandAt[band+1], dst)
		} else {
			p.interpBand(p.bandAt[band], p.bandAt[band+1], dst)
		}
	})
}

// spread adds c[s] ψx[a] ψy[b] to the padded grid g at (l0y+b, l0x+a) for
// every sorted point s (c in sorted order): even bands concurrently, then odd
// bands, so that no two goroutines touch the same row and every grid value
// receives its terms in the same order whatever the scheduling.
func (p *Plan) spread(g, c []complex128) {
	for phase := range 2 {
		parallelItems(phase, 2, p.nbands, func(_, band int) {
			if p.avx {
				p.spreadBandAVX(g, p.bandAt[band], p.bandAt[band+1], c)
			} else {
				p.spreadBand(g, p.bandAt[band], p.bandAt[band+1], c)
			}
		})
	}
}
