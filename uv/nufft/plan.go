package nufft

import (
	"fmt"
	"math"
)

// Tolerances a Plan accepts.
const (
	MinTol = 1e-14
	MaxTol = 1e-1
)

// Plan computes the type-1 and type-2 sums of the package comment for an n×n
// grid and a set of points, to a relative ℓ2 tolerance, by the non-uniform FFT
// of Barnett, Magland & af Klinteberg (2019).
//
// The fine grid is nf = 2n on a side (oversampling σ = 2); the kernel width is
// w = ⌈log10(1/tol)⌉ + 1 fine-grid points and β = 2.30·w. Type 2 divides the
// modes by the kernel's Fourier transform, zero-pads them onto the fine grid,
// FFTs and interpolates at the points with the kernel; type 1 is its exact
// adjoint (spread, FFT, truncate, divide).
//
// A Plan holds scratch space and is not safe for concurrent use; each call
// uses all runtime.GOMAXPROCS(0) cores itself. Results are bit-for-bit
// reproducible for the same points and input, whatever the number of cores.
type Plan struct {
	n, nf int
	tol   float64
	ker   esKernel
	w     int
	// deap[i] = 1/ψ̂(2π m/nf) for m = i − n/2: the deapodisation factor.
	deap []float64
	fft  *FFT2
	fine []complex128 // nf × nf

	// The padded grid holds fine-grid rows and columns −pad … nf+pad−1 so
	// that no kernel tap needs wrapping; np = nf + 2·pad.
	pad, np int
	padded  []complex128

	// Points, sorted into bands of hb fine-grid rows (and tiles across).
	npts   int
	hb     int
	nbands int
	// For sorted point s: key[s] = base<<8 | jx<<4 | jy, base the padded-grid
	// index of the first kernel tap and jx, jy the polynomial pieces of the
	// two offsets; z[2s], z[2s+1] the pieces' local variables.
	key    []uint64
	z      []float64
	perm   []int32 // perm[sorted index] = caller's index
	inv    []int32 // inv[caller's index] = sorted index
	bandAt []int   // points of band b are sorted indices bandAt[b] … bandAt[b+1]−1

	// avx selects the AVX2/FMA assembly kernels (where the CPU has them).
	avx bool

	// sorted holds the strengths (type 1) or values (type 2) in sorted order:
	// a separate gather or scatter pass keeps the random accesses to the
	// caller's array out of the kernel loops.
	sorted []complex128
	bin    []int32 // SetPoints scratch: each point's bin

	// acc is the padded-grid accumulator of AddType1, made on first use.
	acc []complex128
}

// NewPlan returns a plan for n×n grids (n even, ≥ 2) at relative tolerance
// tol in [MinTol, MaxTol]. Call SetPoints before transforming.
func NewPlan(n int, tol float64) (*Plan, error) {
	if n < 2 || n%2 != 0 {
		return nil, fmt.Errorf("nufft: grid size %d: want an even number ≥ 2", n)
	}
	if !(tol >= MinTol && tol <= MaxTol) {
		return nil, fmt.Errorf("nufft: tolerance %g: want a value in [%g, %g]", tol, MinTol, MaxTol)
	}
	w := widthForTol(tol)
	p := &Plan{n: n, nf: 2 * n, tol: tol, w: w, avx: haveAVX}
	p.ker = newESKernel(w, tol/polyTolFactor)
	xi := make([]float64, n)
	for i := range xi {
		xi[i] = 2 * math.Pi * float64(i-n/2) / float64(p.nf)
	}
	p.deap = p.ker.fourier(xi)
	for i, v := range p.deap {
		p.deap[i] = 1 / v
	}
	p.fft = NewFFT2(p.nf)
	p.fine = make([]complex128, p.nf*p.nf)
	p.pad = w/2 + 2
	p.np = p.nf + 2*p.pad
	p.padded = make([]complex128, p.np*p.np)
	// Bands of hb rows: points of bands b and b+2 never touch the same padded
	// row when hb ≥ w + 1, so even bands (then odd bands) spread concurrently.
	p.hb = max(16, w+2)
	p.nbands = (p.nf + p.hb - 1) / p.hb
	return p, nil
}

// polyTolFactor is the ratio of the tolerance to the allowed maximum error of
// the kernel's piecewise polynomial.
const polyTolFactor = 20

// N returns the grid size n.
func (p *Plan) N() int { return p.n }

// Tol returns the tolerance the plan was made for.
func (p *Plan) Tol() float64 { return p.tol }

// Width returns the kernel width w in fine-grid points.
func (p *Plan) Width() int { return p.w }

// NumPoints returns the number of points of the last SetPoints.
func (p *Plan) NumPoints() int { return p.npts }

// tileWidth is the width in fine-grid columns of the tiles points are sorted
// into within a band. Narrower tiles keep each point's neighbours closer in
// cache but make the sort and the gather of caller-ordered values scatter
// over more streams; at n = 256, 128 columns measured best of 32, 128 and
// whole bands (to within the noise of a shared machine).
const tileWidth = 128

// SetPoints sets the points (x[k], y[k]) in radians for the following
// transforms; any finite real values are allowed (the sums are 2π-periodic).
// The plan copies what it needs: x and y may be changed afterwards. It panics
// on a non-finite coordinate.
//
// The points are sorted, stably, into bins of hb fine-grid rows × 128 columns;
// the transforms visit them in that order (which keeps the grid in cache) and
// return results in the caller's order.
func (p *Plan) SetPoints(x, y []float64) {
	if len(x) != len(y) {
		panic(fmt.Sprintf("nufft: len(x) = %d, len(y) = %d", len(x), len(y)))
	}
	if len(x) > math.MaxInt32 {
		panic("nufft: more than 2³¹−1 points")
	}
	m := len(x)
	p.npts = m
	nf := p.nf
	ntile := (nf + tileWidth - 1) / tileWidth
	nbin := p.nbands * ntile
	fnf := float64(nf)
	if cap(p.key) < m {
		p.key = make([]uint64, m)
		p.z = make([]float64, 2*m)
		p.perm = make([]int32, m)
		p.inv = make([]int32, m)
		p.sorted = make([]complex128, m)
		p.bin = make([]int32, m)
	}
	p.key, p.z, p.perm, p.inv = p.key[:m], p.z[:2*m], p.perm[:m], p.inv[:m]
	p.sorted, p.bin = p.sorted[:m], p.bin[:m]
	// A stable counting sort over fixed chunks: count per chunk, offsets in
	// (bin, chunk) order, scatter per chunk. The permutation is the unique
	// stable one, whatever the number of chunks.
	nchunk := workers(m / 4096)
	counts := make([]int, nchunk*nbin)
	bad := make([]int, nchunk)
	parallelRange(nchunk, func(_, clo, chi int) {
		for ch := clo; ch < chi; ch++ {
			bad[ch] = -1
			cnt := counts[ch*nbin : (ch+1)*nbin]
			for k := m * ch / nchunk; k < m*(ch+1)/nchunk; k++ {
				tx := wrapTurns(x[k]) * fnf
				ty := wrapTurns(y[k]) * fnf
				if !(tx >= 0 && tx < float64(nf) && ty >= 0 && ty < float64(nf)) {
					if bad[ch] < 0 {
						bad[ch] = k
					}
					tx, ty = 0, 0
				}
				b := (int(ty)/p.hb)*ntile + int(tx)/tileWidth
				p.bin[k] = int32(b)
				cnt[b]++
			}
		}
	})
	for _, k := range bad {
		if k >= 0 {
			p.npts = 0
			panic(fmt.Sprintf("nufft: point %d (%g, %g) is not finite", k, x[k], y[k]))
		}
	}
	off := 0
	p.bandAt = make([]int, p.nbands+1)
	for b := range nbin {
		if b%ntile == 0 {
			p.bandAt[b/ntile] = off
		}
		for ch := range nchunk {
			c := counts[ch*nbin+b]
			counts[ch*nbin+b] = off
			off += c
		}
	}
	p.bandAt[p.nbands] = off
	parallelRange(nchunk, func(_, clo, chi int) {
		for ch := clo; ch < chi; ch++ {
			next := counts[ch*nbin : (ch+1)*nbin]
			for k := m * ch / nchunk; k < m*(ch+1)/nchunk; k++ {
				b := p.bin[k]
				s := next[b]
				next[b]++
				p.perm[s] = int32(k)
				p.inv[k] = int32(s)
				p.setKey(s, wrapTurns(x[k])*fnf, wrapTurns(y[k])*fnf)
			}
		}
	})
}

// setKey stores the kernel position and polynomial pieces of sorted point s
// at fine-grid coordinates (tx, ty) ∈ [0, nf)².
func (p *Plan) setKey(s int, tx, ty float64) {
	hw := float64(p.w) / 2
	fx := math.Ceil(tx - hw)
	fy := math.Ceil(ty - hw)
	jx, zx := piece(fx - tx + hw)
	jy, zy := piece(fy - ty + hw)
	base := (int(fy)+p.pad)*p.np + int(fx) + p.pad
	// The kernels touch cells base … base+(w−1)·np+2⌈w/2⌉−1.
	if base < 0 || base+(p.w-1)*p.np+p.ker.lanes/2 > len(p.padded) {
		panic("nufft: internal error: kernel outside the padded grid")
	}
	p.key[s] = uint64(base)<<8 | uint64(jx)<<4 | uint64(jy)
	p.z[2*s] = zx
	p.z[2*s+1] = zy
}

// wrapTurns returns x/(2π) modulo 1, in [0, 1); NaN for a non-finite x.
func wrapTurns(x float64) float64 {
	u := x * (1 / (2 * math.Pi))
	u -= math.Floor(u)
	if u >= 1 {
		u = 0
	}
	return u
}

// Type2 evaluates the type-2 sum (grid → points) of the package comment,
//
//	dst[k] = Σ_{i,j} f[j*n+i] exp(s·i·(m1 x_k + m2 y_k)),
//
// with s = sign, at the points of the last SetPoints, in the caller's order.
// dst is allocated when nil; otherwise len(dst) must be the number of points.
func (p *Plan) Type2(dst, f []complex128, sign int) []complex128 {
	checkGrid(p.n, len(f))
	checkSign(sign)
	n, nf := p.n, p.nf
	clear(p.fine)
	for j := range n {
		dj := p.deap[j]
		r := ((j - n/2) + nf) % nf
		row := p.fine[r*nf : r*nf+nf]
		src := f[j*n : j*n+n]
		for i, v := range src {
			c := ((i - n/2) + nf) % nf
			d := dj * p.deap[i]
			row[c] = complex(real(v)*d, imag(v)*d)
		}
	}
	return p.finishType2(dst, sign)
}

// Type2Real is Type2 for a real grid f (for example a sky image).
func (p *Plan) Type2Real(dst []complex128, f []float64, sign int) []complex128 {
	checkGrid(p.n, len(f))
	checkSign(sign)
	n, nf := p.n, p.nf
	clear(p.fine)
	for j := range n {
		dj := p.deap[j]
		r := ((j - n/2) + nf) % nf
		row := p.fine[r*nf : r*nf+nf]
		src := f[j*n : j*n+n]
		for i, v := range src {
			c := ((i - n/2) + nf) % nf
			row[c] = complex(v*dj*p.deap[i], 0)
		}
	}
	return p.finishType2(dst, sign)
}

func (p *Plan) finishType2(dst []complex128, sign int) []complex128 {
	if dst == nil {
		dst = make([]complex128, p.npts)
	} else if len(dst) != p.npts {
		panic(fmt.Sprintf("nufft: dst length %d, want %d points", len(dst), p.npts))
	}
	n, nf := p.n, p.nf
	// Only rows (modes m2) [0, n/2) ∪ [nf−n/2, nf) are non-zero.
	p.fft.transform(p.fine, sign, n/2, nf-n/2, nf, nf)
	p.wrapToPadded()
	p.interpolate(p.sorted)
	parallelRange(p.npts, func(_, lo, hi int) {
		for s, v := range p.sorted[lo:hi] {
			dst[p.perm[lo+s]] = v
		}
	})
	return dst
}

// Type1 evaluates the type-1 sum (points → grid) of the package comment,
//
//	dst[j*n+i] = Σ_k c[k] exp(s·i·(m1 x_k + m2 y_k)),
//
// with s = sign, for the points of the last SetPoints, c in the caller's
// order. dst is allocated when nil; otherwise len(dst) must be n*n. Type1
// leaves the accumulator of AddType1 alone.
func (p *Plan) Type1(dst, c []complex128, sign int) []complex128 {
	checkSign(sign)
	p.gather(c)
	clear(p.padded)
	p.spread(p.padded, p.sorted)
	return p.finishType1(dst, p.padded, sign)
}

// AddType1 spreads the strengths c (caller's order) of the points of the last
// SetPoints onto the plan's type-1 accumulator, so that a sum over many sets
// of points (a data set read in chunks) needs one FFT, in FinishType1. The
// accumulator starts at zero and is cleared by ResetType1; Type1 and Type2
// calls in between leave it alone. Terms are added in a fixed order, so the
// result is reproducible bit for bit for the same sequence of calls.
func (p *Plan) AddType1(c []complex128) {
	p.gather(c)
	if p.acc == nil {
		p.acc = make([]complex128, len(p.padded))
	}
	p.spread(p.acc, p.sorted)
}

// ResetType1 clears the accumulator of AddType1.
func (p *Plan) ResetType1() { clear(p.acc) }

// FinishType1 sets dst to the type-1 sum with sign s over all strengths
// added by AddType1 since the last ResetType1 (zero if none), and returns it.
// dst is allocated when nil; otherwise len(dst) must be n*n. The accumulator
// is left as it is.
func (p *Plan) FinishType1(dst []complex128, sign int) []complex128 {
	checkSign(sign)
	if p.acc == nil {
		p.acc = make([]complex128, len(p.padded))
	}
	return p.finishType1(dst, p.acc, sign)
}

// gather copies c (caller's order) into p.sorted (sorted order).
func (p *Plan) gather(c []complex128) {
	if len(c) != p.npts {
		panic(fmt.Sprintf("nufft: %d strengths for %d points", len(c), p.npts))
	}
	// Sequential reads and scattered writes: stores that miss the cache do
	// not stall the loop the way loads do.
	parallelRange(p.npts, func(_, lo, hi int) {
		for k, s := range p.inv[lo:hi] {
			p.sorted[s] = c[lo+k]
		}
	})
}

// finishType1 folds the padded grid g onto the fine grid, transforms it and
// writes the deapodised modes to dst.
func (p *Plan) finishType1(dst, g []complex128, sign int) []complex128 {
	n, nf := p.n, p.nf
	if dst == nil {
		dst = make([]complex128, n*n)
	} else if len(dst) != n*n {
		panic(fmt.Sprintf("nufft: dst length %d, want %d", len(dst), n*n))
	}
	p.foldPadded(g)
	// Only columns (modes m1) [0, n/2) ∪ [nf−n/2, nf) are needed.
	p.fft.transform(p.fine, sign, nf, nf, n/2, nf-n/2)
	for j := range n {
		dj := p.deap[j]
		r := ((j - n/2) + nf) % nf
		row := p.fine[r*nf : r*nf+nf]
		out := dst[j*n : j*n+n]
		for i := range out {
			cc := ((i - n/2) + nf) % nf
			d := dj * p.deap[i]
			v := row[cc]
			out[i] = complex(real(v)*d, imag(v)*d)
		}
	}
	return dst
}

// wrapToPadded copies the fine grid into the padded grid, periodically.
func (p *Plan) wrapToPadded() {
	nf, np, pad := p.nf, p.np, p.pad
	parallelRange(np, func(_, lo, hi int) {
		for q := lo; q < hi; q++ {
			r := ((q-pad)%nf + nf) % nf
			src := p.fine[r*nf : r*nf+nf]
			dst := p.padded[q*np : q*np+np]
			if pad > nf { // tiny grids: the kernel wraps more than once
				for c := range dst {
					dst[c] = src[((c-pad)%nf+nf)%nf]
				}
				continue
			}
			copy(dst[:pad], src[nf-pad:])
			copy(dst[pad:pad+nf], src)
			copy(dst[pad+nf:], src[:pad])
		}
	})
}

// foldPadded sets the fine grid to the padded grid g added periodically, in a
// fixed order (padded rows ascending, then columns ascending) for every value.
func (p *Plan) foldPadded(g []complex128) {
	nf, np, pad := p.nf, p.np, p.pad
	clear(p.fine)
	// Padded rows q ≡ r + pad (mod nf) land on fine row r; each worker owns a
	// range of fine rows.
	parallelRange(nf, func(_, lo, hi int) {
		for r := lo; r < hi; r++ {
			dst := p.fine[r*nf : r*nf+nf]
			for q := (r + pad) % nf; q < np; q += nf {
				src := g[q*np : q*np+np]
				if pad > nf {
					for c, v := range src {
						dst[((c-pad)%nf+nf)%nf] += v
					}
					continue
				}
				addTo(dst[nf-pad:], src[:pad])
				addTo(dst, src[pad:pad+nf])
				addTo(dst[:pad], src[pad+nf:])
			}
		}
	})
}

// addTo adds src to dst element by element; len(dst) ≥ len(src).
func addTo(dst, src []complex128) {
	dst = dst[:len(src)]
	for i, v := range src {
		dst[i] += v
	}
}
