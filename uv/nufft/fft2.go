package nufft

import (
	"fmt"
	"math"
	"math/bits"

	"gonum.org/v1/gonum/dsp/fourier"
)

// FFT2 is a two-dimensional complex FFT of an n×n row-major array a[r*n+c].
//
// Forward computes the unnormalised transform with exponent sign −1,
//
//	A[q*n+p] = Σ_{r,c} a[r*n+c] exp(−2πi (q r + p c)/n),
//
// and Inverse the unnormalised transform with sign +1, so that
// Inverse(Forward(a)) = n²·a. Powers of two use the package's own radix-2/4
// transform; other even sizes use gonum's dsp/fourier. Rows and columns are
// transformed in parallel across runtime.GOMAXPROCS(0) cores; every output
// value is computed by the same operations whatever the number of cores.
//
// An FFT2 holds scratch space and is not safe for concurrent use; make one per
// goroutine.
type FFT2 struct {
	n    int
	line []*fft1 // one 1-D plan per worker (gonum's plans hold scratch)
	// col is per-worker scratch for blocks of columns.
	col [][]complex128
}

// colBlock is the number of columns FFT2 gathers into contiguous lines at once.
const colBlock = 16

// NewFFT2 returns a plan for n×n transforms, n ≥ 1.
func NewFFT2(n int) *FFT2 {
	if n < 1 {
		panic(fmt.Sprintf("nufft: FFT2 size %d < 1", n))
	}
	return &FFT2{n: n}
}

// Len returns n.
func (t *FFT2) Len() int { return t.n }

// Forward sets dst to the forward (sign −1) unnormalised 2-D FFT of src and
// returns it. dst is allocated when nil; dst and src may be the same slice.
func (t *FFT2) Forward(dst, src []complex128) []complex128 {
	return t.do(dst, src, -1)
}

// Inverse sets dst to the inverse (sign +1) unnormalised 2-D FFT of src and
// returns it. dst is allocated when nil; dst and src may be the same slice.
func (t *FFT2) Inverse(dst, src []complex128) []complex128 {
	return t.do(dst, src, +1)
}

func (t *FFT2) do(dst, src []complex128, sign int) []complex128 {
	n := t.n
	if len(src) != n*n {
		panic(fmt.Sprintf("nufft: FFT2 source length %d, want %d", len(src), n*n))
	}
	if dst == nil {
		dst = make([]complex128, n*n)
	} else if len(dst) != n*n {
		panic(fmt.Sprintf("nufft: FFT2 destination length %d, want %d", len(dst), n*n))
	}
	if &dst[0] != &src[0] {
		copy(dst, src)
	}
	t.transform(dst, sign, n, n, n, n)
	return dst
}

// transform does an in-place 2-D FFT of a with exponent sign, first along rows
// (the index c) for the rows r ∈ [0, rlo) ∪ [rhi, n), then along columns for
// the columns c ∈ [0, clo) ∪ [chi, n). Rows outside the first set must be
// zero; columns outside the second set are left unfinished. rlo = rhi = n (and
// clo = chi = n) selects all.
func (t *FFT2) transform(a []complex128, sign int, rlo, rhi, clo, chi int) {
	n := t.n
	t.ensure()
	nr := rlo + (n - rhi)
	parallelRange(nr, func(w, lo, hi int) {
		p := t.line[w]
		for k := lo; k < hi; k++ {
			r := k
			if r >= rlo {
				r += rhi - rlo
			}
			p.do(a[r*n:r*n+n], sign)
		}
	})
	nc := clo + (n - chi)
	nblk := (nc + colBlock - 1) / colBlock
	parallelRange(nblk, func(w, lo, hi int) {
		p := t.line[w]
		buf := t.col[w]
		var cols [colBlock]int
		for blk := lo; blk < hi; blk++ {
			nb := 0
			for k := blk * colBlock; k < min(nc, (blk+1)*colBlock); k++ {
				c := k
				if c >= clo {
					c += chi - clo
				}
				cols[nb] = c
				nb++
			}
			for r := range n {
				row := a[r*n : r*n+n]
				for b, c := range cols[:nb] {
					buf[b*n+r] = row[c]
				}
			}
			for b := range nb {
				p.do(buf[b*n:b*n+n], sign)
			}
			for r := range n {
				row := a[r*n : r*n+n]
				for b, c := range cols[:nb] {
					row[c] = buf[b*n+r]
				}
			}
		}
	})
}

func (t *FFT2) ensure() {
	p := workers(t.n)
	for len(t.line) < p {
		t.line = append(t.line, newFFT1(t.n))
		t.col = append(t.col, make([]complex128, colBlock*t.n))
	}
}

// fft1 is an in-place 1-D complex FFT of length n: for powers of two an
// iterative decimation-in-time transform (bit reversal, then the radix-2
// stages taken two at a time, so that each pass over the data does two
// stages); otherwise gonum's CmplxFFT.
type fft1 struct {
	n   int
	lg  int
	rev []int32
	// tw[h-1+k] = exp(−2πi k/(2h)) for the stage of half-length h, k < h;
	// twInv holds the conjugates.
	tw, twInv []complex128
	g         *fourier.CmplxFFT
}

func newFFT1(n int) *fft1 {
	p := &fft1{n: n}
	if n&(n-1) != 0 {
		p.g = fourier.NewCmplxFFT(n)
		return p
	}
	lg := bits.TrailingZeros(uint(n))
	p.lg = lg
	p.rev = make([]int32, n)
	for i := range n {
		if lg > 0 {
			p.rev[i] = int32(bits.Reverse(uint(i)) >> (bits.UintSize - lg))
		}
	}
	p.tw = make([]complex128, max(n-1, 0))
	p.twInv = make([]complex128, max(n-1, 0))
	for h := 1; h < n; h *= 2 {
		for k := range h {
			s, c := math.Sincos(-math.Pi * float64(k) / float64(h))
			p.tw[h-1+k] = complex(c, s)
			p.twInv[h-1+k] = complex(c, -s)
		}
	}
	return p
}

// do transforms x (len n) in place with exponent sign, unnormalised.
func (p *fft1) do(x []complex128, sign int) {
	if p.g != nil {
		if sign < 0 {
			p.g.Coefficients(x, x)
		} else {
			p.g.Sequence(x, x)
		}
		return
	}
	n := p.n
	x = x[:n]
	for i, r := range p.rev {
		if i < int(r) {
			x[i], x[r] = x[r], x[i]
		}
	}
	tw := p.tw
	if sign > 0 {
		tw = p.twInv
	}
	h := 1
	if p.lg%2 == 1 {
		for s := 0; s+1 < n; s += 2 {
			a, b := x[s], x[s+1]
			x[s], x[s+1] = a+b, a-b
		}
		h = 2
	}
	if h == 1 && n >= 4 {
		// Stages h = 1 and 2 together: all twiddles are 1 except
		// exp(∓2πi/4) = ∓i.
		neg := sign < 0
		for s := 0; s+3 < n; s += 4 {
			q := (*[4]complex128)(x[s : s+4])
			a, b, c, d := q[0], q[1], q[2], q[3]
			a1, b1, c1, d1 := a+b, a-b, c+d, c-d
			// d1 times ∓i.
			if neg {
				d1 = complex(imag(d1), -real(d1))
			} else {
				d1 = complex(-imag(d1), real(d1))
			}
			q[0], q[2], q[1], q[3] = a1+c1, a1-c1, b1+d1, b1-d1
		}
		h = 4
	}
	// Stages h and 2h together: within each group of 4h values the first
	// stage pairs (k, k+h) and (k+2h, k+3h) with twiddle W_2h^k, the second
	// pairs (k, k+2h) with W_4h^k and (k+h, k+3h) with W_4h^(k+h).
	for ; h < n; h *= 4 {
		w1s := tw[h-1 : 2*h-1]
		w2s := tw[2*h-1 : 4*h-1]
		for s := 0; s < n; s += 4 * h {
			q0 := x[s : s+h]
			q1 := x[s+h : s+2*h]
			q2 := x[s+2*h : s+3*h]
			q3 := x[s+3*h : s+4*h]
			for k := range q0 {
				w1 := w1s[k]
				b := q1[k] * w1
				d := q3[k] * w1
				a, c := q0[k], q2[k]
				a1, b1 := a+b, a-b
				c1 := (c + d) * w2s[k]
				d1 := (c - d) * w2s[k+h]
				q0[k], q2[k] = a1+c1, a1-c1
				q1[k], q3[k] = b1+d1, b1-d1
			}
		}
	}
}
