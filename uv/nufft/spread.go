package nufft

// ensureScratch makes per-worker kernel-weight buffers.
func (p *Plan) ensureScratch() {
	for len(p.scratch) < workers(p.nbands) {
		p.scratch = append(p.scratch, make([]float64, 2*p.w))
	}
}

// interpolate sets dst[perm[s]] = Σ_{a,b} padded(l0y+b, l0x+a) ψx[a] ψy[b] for
// every sorted point s, in parallel over bands.
func (p *Plan) interpolate(dst []complex128) {
	p.ensureScratch()
	w, np, pad := p.w, p.np, p.pad
	parallelItems(0, 1, p.nbands, func(wk, band int) {
		kx := p.scratch[wk][:w]
		ky := p.scratch[wk][w : 2*w]
		for s := p.bandAt[band]; s < p.bandAt[band+1]; s++ {
			lx := p.ker.weights(kx, p.tx[s]) + pad
			ly := p.ker.weights(ky, p.ty[s]) + pad
			var sr, si float64
			for b, vy := range ky {
				row := p.padded[(ly+b)*np+lx : (ly+b)*np+lx+w]
				var rr, ri float64
				for a, vx := range kx[:len(row)] {
					g := row[a]
					rr += real(g) * vx
					ri += imag(g) * vx
				}
				sr += rr * vy
				si += ri * vy
			}
			dst[p.perm[s]] = complex(sr, si)
		}
	})
}

// spread zeroes the padded grid and adds c[perm[s]] ψx[a] ψy[b] at padded
// (l0y+b, l0x+a) for every sorted point s: even bands concurrently, then odd
// bands, so that no two goroutines touch the same row and every grid value
// receives its terms in the same order whatever the scheduling.
func (p *Plan) spread(c []complex128) {
	p.ensureScratch()
	clear(p.padded)
	w, np, pad := p.w, p.np, p.pad
	for phase := range 2 {
		parallelItems(phase, 2, p.nbands, func(wk, band int) {
			kx := p.scratch[wk][:w]
			ky := p.scratch[wk][w : 2*w]
			for s := p.bandAt[band]; s < p.bandAt[band+1]; s++ {
				lx := p.ker.weights(kx, p.tx[s]) + pad
				ly := p.ker.weights(ky, p.ty[s]) + pad
				v := c[p.perm[s]]
				vr, vi := real(v), imag(v)
				for b, vy := range ky {
					row := p.padded[(ly+b)*np+lx : (ly+b)*np+lx+w]
					br, bi := vr*vy, vi*vy
					for a, vx := range kx[:len(row)] {
						g := row[a]
						row[a] = complex(real(g)+br*vx, imag(g)+bi*vx)
					}
				}
			}
		})
	}
}
