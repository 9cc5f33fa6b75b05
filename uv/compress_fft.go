package uv

import (
	"math"
	"math/bits"
)

// fftPow2 is an in-place complex FFT of a power-of-two length n, the kernel
// of the compressed χ². The forward transform (exponent sign −1) is the
// decimation-in-frequency form, natural order in and bit-reversed order out;
// the inverse (sign +1) is the decimation-in-time form, bit-reversed in and
// natural out. A product in the frequency domain therefore needs no
// permutation at all: the beam spectrum is stored in bit-reversed order.
//
// References:
//
//   - Cooley J. W. & Tukey J. W. 1965, Math. Comp. 19, 297.
//   - Gentleman W. M. & Sande G. 1966, AFIPS Fall Joint Computer Conference
//     29, 563: the decimation-in-frequency form.
type fftPow2 struct {
	n   int
	rev []int32 // bit reversal of 0 … n−1
	// tw[h−1+k] = exp(−πi k/h), k < h, for the stage of half-length h:
	// each stage's twiddles are contiguous.
	tw []complex128
}

func newFFTPow2(n int) *fftPow2 {
	if n < 2 || n&(n-1) != 0 {
		panic("uv: FFT length is not a power of two ≥ 2")
	}
	lg := bits.TrailingZeros(uint(n))
	f := &fftPow2{n: n, rev: make([]int32, n), tw: make([]complex128, n-1)}
	for i := range n {
		f.rev[i] = int32(bits.Reverse(uint(i)) >> (bits.UintSize - lg))
	}
	for h := 1; h < n; h *= 2 {
		for k := range h {
			s, c := math.Sincos(-math.Pi * float64(k) / float64(h))
			f.tw[h-1+k] = complex(c, s)
		}
	}
	return f
}

// nextPow2 returns the smallest power of two ≥ max(m, 2).
func nextPow2(m int) int {
	n := 2
	for n < m {
		n *= 2
	}
	return n
}

// nextFFTSize returns the smallest length ≥ max(m, 2) of the form 2^k or
// 3·2^k (k ≥ 1) that fftPlan transforms.
func nextFFTSize(m int) int {
	n := nextPow2(m)
	if t := 3 * n / 4; t >= m && t%2 == 0 {
		return t
	}
	return n
}

// fftPlan is an in-place complex FFT of length n = m or 3m, m a power of
// two, in the orders of fftPow2: the forward transform (sign −1) takes
// natural order to the digit-reversed order rev (coefficient f at x[rev[f]])
// and the inverse (sign +1, unnormalised) takes that order back to natural.
// For n = 3m the forward transform is one radix-3 decimation-in-frequency
// stage (Gentleman & Sande 1966) on the whole sequence, with twiddles
// W_n^{qk}, W_n = exp(−2πi/n), followed by the power-of-two transform of
// each third; coefficient f then lies in third f mod 3 at the bit-reversed
// position of f div 3.
type fftPlan struct {
	n   int
	rev []int32
	p2  *fftPow2
	tw3 []complex128 // n = 3m: W_n^k, W_n^{2k} at 2k, 2k + 1 for k < m
}

func newFFTPlan(n int) *fftPlan {
	if n&(n-1) == 0 {
		p := newFFTPow2(n)
		return &fftPlan{n: n, rev: p.rev, p2: p}
	}
	m := n / 3
	if n%3 != 0 || m < 2 || m&(m-1) != 0 {
		panic("uv: FFT length is not 2^k or 3·2^k with k ≥ 1")
	}
	p := newFFTPow2(m)
	f := &fftPlan{n: n, rev: make([]int32, n), p2: p, tw3: make([]complex128, 2*m)}
	for k := range n {
		f.rev[k] = int32(k%3*m) + p.rev[k/3]
	}
	for k := range m {
		s, c := math.Sincos(-2 * math.Pi * float64(k) / float64(n))
		f.tw3[2*k] = complex(c, s)
		s, c = math.Sincos(-4 * math.Pi * float64(k) / float64(n))
		f.tw3[2*k+1] = complex(c, s)
	}
	return f
}

// sin60 is sin(π/3) = √3/2.
const sin60 = 0.86602540378443864676

// forward transforms x in place, sign −1, output in the order rev. When
// half is true the caller promises x[n/2:] is zero (used to prune the
// power-of-two transform).
func (f *fftPlan) forward(x []complex128, half bool) {
	if f.tw3 == nil {
		f.p2.forward(x, half)
		return
	}
	m := f.p2.n
	x0, x1, x2 := x[:m], x[m:2*m], x[2*m:3*m]
	tw := f.tw3[:2*m]
	for k := range x0 {
		a0, a1, a2 := x0[k], x1[k], x2[k]
		// y_q = Σ_j a_j ω^{jq}, ω = exp(−2πi/3) = −1/2 − i √3/2.
		t1 := a1 + a2
		t2 := a0 - 0.5*t1
		d := a1 - a2
		t3 := complex(sin60*imag(d), -sin60*real(d)) // −i (√3/2)(a1 − a2)
		y1, y2 := t2+t3, t2-t3
		w1, w2 := tw[2*k], tw[2*k+1]
		x0[k] = a0 + t1
		x1[k] = complex(real(y1)*real(w1)-imag(y1)*imag(w1), real(y1)*imag(w1)+imag(y1)*real(w1))
		x2[k] = complex(real(y2)*real(w2)-imag(y2)*imag(w2), real(y2)*imag(w2)+imag(y2)*real(w2))
	}
	f.p2.forward(x0, false)
	f.p2.forward(x1, false)
	f.p2.forward(x2, false)
}

// inverse transforms x in place, sign +1, unnormalised, from the order rev
// to natural order.
func (f *fftPlan) inverse(x []complex128) {
	if f.tw3 == nil {
		f.p2.inverse(x)
		return
	}
	m := f.p2.n
	x0, x1, x2 := x[:m], x[m:2*m], x[2*m:3*m]
	f.p2.inverse(x0)
	f.p2.inverse(x1)
	f.p2.inverse(x2)
	tw := f.tw3[:2*m]
	for k := range x0 {
		w1, w2 := tw[2*k], tw[2*k+1]
		b0, c1, c2 := x0[k], x1[k], x2[k]
		// Undo the twiddles: b_q = c_q conj(W_n^{qk}).
		b1 := complex(real(c1)*real(w1)+imag(c1)*imag(w1), imag(c1)*real(w1)-real(c1)*imag(w1))
		b2 := complex(real(c2)*real(w2)+imag(c2)*imag(w2), imag(c2)*real(w2)-real(c2)*imag(w2))
		// a_j = Σ_q b_q ω^{−jq}.
		t1 := b1 + b2
		t2 := b0 - 0.5*t1
		d := b1 - b2
		t3 := complex(-sin60*imag(d), sin60*real(d)) // +i (√3/2)(b1 − b2)
		x0[k] = b0 + t1
		x1[k] = t2 + t3
		x2[k] = t2 - t3
	}
}

// forward transforms x in place, sign −1, output in bit-reversed order.
// When half is true the caller promises x[n/2:] is zero, and the first
// stage is pruned accordingly.
func (f *fftPow2) forward(x []complex128, half bool) {
	n := f.n
	x = x[:n]
	h := n / 2
	if half {
		lo, hi := x[:h], x[h:n]
		tw := f.tw[h-1 : 2*h-1]
		for k, w := range tw {
			a := lo[k]
			hi[k] = complex(real(a)*real(w)-imag(a)*imag(w), real(a)*imag(w)+imag(a)*real(w))
		}
		h /= 2
	}
	// Two stages at a time (half-lengths h and h/2) in one pass over
	// each block of 2h values: the same butterflies and twiddles as the
	// stages one by one, so the same values, with half the passes over
	// memory.
	for ; h >= 4; h /= 4 {
		q := h / 2
		tw1 := f.tw[h-1 : 2*h-1]
		tw2 := f.tw[q-1 : 2*q-1]
		for s := 0; s < n; s += 2 * h {
			x0, x1 := x[s:s+q], x[s+q:s+h]
			x2, x3 := x[s+h:s+h+q], x[s+h+q:s+2*h]
			x1, x2, x3 = x1[:len(x0)], x2[:len(x0)], x3[:len(x0)]
			wa, wb, wc := tw1[:len(x0)], tw1[q:q+len(x0)], tw2[:len(x0)]
			for k := range x0 {
				a0, a1, a2, a3 := x0[k], x1[k], x2[k], x3[k]
				w := wa[k]
				dr, di := real(a0)-real(a2), imag(a0)-imag(a2)
				b0 := complex(real(a0)+real(a2), imag(a0)+imag(a2))
				b2 := complex(dr*real(w)-di*imag(w), dr*imag(w)+di*real(w))
				w = wb[k]
				dr, di = real(a1)-real(a3), imag(a1)-imag(a3)
				b1 := complex(real(a1)+real(a3), imag(a1)+imag(a3))
				b3 := complex(dr*real(w)-di*imag(w), dr*imag(w)+di*real(w))
				w = wc[k]
				dr, di = real(b0)-real(b1), imag(b0)-imag(b1)
				x0[k] = complex(real(b0)+real(b1), imag(b0)+imag(b1))
				x1[k] = complex(dr*real(w)-di*imag(w), dr*imag(w)+di*real(w))
				dr, di = real(b2)-real(b3), imag(b2)-imag(b3)
				x2[k] = complex(real(b2)+real(b3), imag(b2)+imag(b3))
				x3[k] = complex(dr*real(w)-di*imag(w), dr*imag(w)+di*real(w))
			}
		}
	}
	for ; h >= 2; h /= 2 {
		tw := f.tw[h-1 : 2*h-1]
		for s := 0; s < n; s += 2 * h {
			lo, hi := x[s:s+h], x[s+h:s+2*h]
			hi = hi[:len(lo)]
			tw := tw[:len(lo)]
			for k := range lo {
				w := tw[k]
				a, b := lo[k], hi[k]
				dr, di := real(a)-real(b), imag(a)-imag(b)
				lo[k] = complex(real(a)+real(b), imag(a)+imag(b))
				hi[k] = complex(dr*real(w)-di*imag(w), dr*imag(w)+di*real(w))
			}
		}
	}
	if h == 1 {
		// The last stage has unit twiddles.
		for s := 0; s+1 < n; s += 2 {
			a, b := x[s], x[s+1]
			x[s], x[s+1] = a+b, a-b
		}
	}
}

// inverse transforms x in place, sign +1, unnormalised, from bit-reversed
// to natural order.
func (f *fftPow2) inverse(x []complex128) {
	n := f.n
	x = x[:n]
	// The first stage has unit twiddles.
	for s := 0; s+1 < n; s += 2 {
		a, b := x[s], x[s+1]
		x[s], x[s+1] = a+b, a-b
	}
	for h := 2; h < n; h *= 2 {
		tw := f.tw[h-1 : 2*h-1]
		for s := 0; s < n; s += 2 * h {
			lo, hi := x[s:s+h], x[s+h:s+2*h]
			hi = hi[:len(lo)]
			tw := tw[:len(lo)]
			for k := range lo {
				w := tw[k]
				wr, wi := real(w), -imag(w)
				b := hi[k]
				br, bi := real(b)*wr-imag(b)*wi, real(b)*wi+imag(b)*wr
				a := lo[k]
				lo[k] = complex(real(a)+br, imag(a)+bi)
				hi[k] = complex(real(a)-br, imag(a)-bi)
			}
		}
	}
}

// realPair sets ca and cb to the first n/2 + 1 Fourier coefficients (sign
// −1, natural order) of the real sequences a and b (nil for zeros), using
// one complex FFT of a + ib. x is scratch of length n. When half is true, a
// and b are zero beyond n/2.
func (f *fftPlan) realPair(ca, cb []complex128, a, b []float64, x []complex128, half bool) {
	n := f.n
	clear(x[:n])
	for i, v := range a {
		x[i] = complex(v, 0)
	}
	for i, v := range b {
		x[i] = complex(real(x[i]), v)
	}
	f.forward(x, half)
	for k := 0; k <= n/2; k++ {
		z := x[f.rev[k]]
		zc := x[f.rev[(n-k)%n]]
		zc = complex(real(zc), -imag(zc))
		// A = (Z_k + conj Z_{n−k})/2, B = (Z_k − conj Z_{n−k})/(2i)
		ca[k] = complex(0.5*(real(z)+real(zc)), 0.5*(imag(z)+imag(zc)))
		if cb != nil {
			cb[k] = complex(0.5*(imag(z)-imag(zc)), -0.5*(real(z)-real(zc)))
		}
	}
}

// realPairInverse sets a and b to the real sequences (unnormalised, sign
// +1) whose first n/2 + 1 coefficients are ca and cb, with one complex FFT.
// Only the first len(a) values are written; b may be nil.
func (f *fftPlan) realPairInverse(a, b []float64, ca, cb []complex128, x []complex128) {
	n := f.n
	for k := range n {
		var za, zb complex128
		if k <= n/2 {
			za = ca[k]
			if cb != nil {
				zb = cb[k]
			}
		} else {
			za = ca[n-k]
			za = complex(real(za), -imag(za))
			if cb != nil {
				zb = cb[n-k]
				zb = complex(real(zb), -imag(zb))
			}
		}
		// Z = A + iB
		x[f.rev[k]] = complex(real(za)-imag(zb), imag(za)+real(zb))
	}
	f.inverse(x)
	for i := range a {
		a[i] = real(x[i])
	}
	for i := range b {
		b[i] = imag(x[i])
	}
}
