package uv

import (
	"sync"

	"gonum.org/v1/gonum/dsp/fourier"
)

// This file holds the FFT machinery of the compressed χ²: the quadratic
// form Σ_j Σ_j' I_j I_j' B(x_j − x_j') and the convolution B⋆I, both by
// zero-padded real-to-complex FFTs of size Px × Py.
//
// For a model whose non-zero pixels fit a box of bx × by pixels, pairs of
// pixels in the box differ by at most bx − 1, by − 1 pixels. With the dirty
// beam laid out circularly, b[d mod P] = B(d) for |d| ≤ ⌈P/2⌉ − 1, a
// circular convolution of size P ≥ 2b − 1 equals the linear one on the box,
// so by Parseval's theorem
//
//	Σ_j Σ_j' I_j I_j' B(x_j − x_j') = (1/(Px Py)) Σ_k b̂_k |Î_k|²,
//
// b̂ real because B is even. The quadratic form costs one forward FFT of
// the box, padded; b̂ depends only on (Px, Py) and is cached per size.

// fftSize returns the smallest n ≥ m of the form 2^a·3^b·5^c, sizes the
// mixed-radix FFT handles quickly.
func fftSize(m int) int {
	for n := max(m, 1); ; n++ {
		k := n
		for _, p := range []int{2, 3, 5} {
			for k%p == 0 {
				k /= p
			}
		}
		if k == 1 {
			return n
		}
	}
}

// beamSpectrum is the FFT b̂ of the circularly laid out dirty beam for one
// padded size, and a pool of scratch space for transforms of that size.
type beamSpectrum struct {
	px, py int
	nx     int       // px/2 + 1 coefficients along x
	bhat   []float64 // b̂[kx·py + ky], real part
	pool   sync.Pool // *convWork
}

// convWork is the scratch space of one transform of size px × py.
type convWork struct {
	rfft *fourier.FFT
	cfft *fourier.CmplxFFT
	row  []float64
	rowc []complex128
	t    []complex128 // py rows of nx coefficients, t[y·nx + kx]
	col  []complex128
}

func newConvWork(px, py int) *convWork {
	nx := px/2 + 1
	return &convWork{
		rfft: fourier.NewFFT(px),
		cfft: fourier.NewCmplxFFT(py),
		row:  make([]float64, px),
		rowc: make([]complex128, nx),
		t:    make([]complex128, py*nx),
		col:  make([]complex128, py),
	}
}

// spectrum returns the cached b̂ for the padded size px × py, computing it
// on first use. It is safe for concurrent use.
func (c *Compressed) spectrum(px, py int) *beamSpectrum {
	key := [2]int{px, py}
	c.mu.Lock()
	defer c.mu.Unlock()
	if s, ok := c.spectra[key]; ok {
		return s
	}
	if c.spectra == nil || len(c.spectra) >= 32 {
		c.spectra = make(map[[2]int]*beamSpectrum)
	}
	s := &beamSpectrum{px: px, py: py, nx: px/2 + 1}
	s.pool.New = func() any { return newConvWork(px, py) }
	w := s.pool.Get().(*convWork)
	n := c.grid.N
	// Offsets |d| ≤ ⌈P/2⌉ − 1, and at most N − 1 where B is known.
	hx, hy := min((px+1)/2-1, n-1), min((py+1)/2-1, n-1)
	for y := range py {
		dy := y
		if y > py/2 {
			dy = y - py
		}
		clear(w.row)
		if dy >= -hy && dy <= hy {
			for dx := -hx; dx <= hx; dx++ {
				w.row[(dx+px)%px] = c.BeamAt(dx, dy)
			}
		}
		w.rfft.Coefficients(w.rowc, w.row)
		copy(w.t[y*s.nx:(y+1)*s.nx], w.rowc)
	}
	s.bhat = make([]float64, s.nx*py)
	for kx := range s.nx {
		for y := range py {
			w.col[y] = w.t[y*s.nx+kx]
		}
		w.cfft.Coefficients(w.col, w.col)
		for ky, v := range w.col {
			s.bhat[kx*py+ky] = real(v)
		}
	}
	s.pool.Put(w)
	c.spectra[key] = s
	return s
}

// box is the bounding box [i0, i1) × [j0, j1) of a model's non-zero pixels.
type box struct{ i0, i1, j0, j1 int }

func (b box) empty() bool { return b.i1 <= b.i0 || b.j1 <= b.j0 }

// supportBox returns the bounding box of the non-zero pixels of img, an
// N×N image in FITS order.
func supportBox(img []float64, n int) box {
	b := box{i0: n, j0: n}
	for j := range n {
		row := img[j*n : (j+1)*n]
		lo := -1
		for i, v := range row {
			if v != 0 {
				lo = i
				break
			}
		}
		if lo < 0 {
			continue
		}
		hi := lo
		for i := n - 1; i > lo; i-- {
			if row[i] != 0 {
				hi = i
				break
			}
		}
		b.i0, b.i1 = min(b.i0, lo), max(b.i1, hi+1)
		b.j0, b.j1 = min(b.j0, j), j+1
	}
	return b
}

// quadratic returns Σ_j Σ_j' I_j I_j' B(x_j − x_j') for the apparent model
// ap (primary beam applied) whose support is bx, by the FFT of the box
// zero-padded to fftSize(2b − 1) on each axis.
func (c *Compressed) quadratic(ap []float64, bx box) float64 {
	n := c.grid.N
	wx, wy := bx.i1-bx.i0, bx.j1-bx.j0
	s := c.spectrum(fftSize(2*wx-1), fftSize(2*wy-1))
	w := s.pool.Get().(*convWork)
	defer s.pool.Put(w)
	nx, py := s.nx, s.py
	clear(w.row)
	for y := range wy {
		copy(w.row[:wx], ap[(bx.j0+y)*n+bx.i0:])
		w.rfft.Coefficients(w.rowc, w.row)
		copy(w.t[y*nx:(y+1)*nx], w.rowc)
	}
	var sum float64
	for kx := range nx {
		for y := range wy {
			w.col[y] = w.t[y*nx+kx]
		}
		clear(w.col[wy:])
		w.cfft.Coefficients(w.col, w.col)
		bh := s.bhat[kx*py : (kx+1)*py]
		var part float64
		for ky, v := range w.col {
			part += bh[ky] * (real(v)*real(v) + imag(v)*imag(v))
		}
		// Coefficients kx and px − kx are conjugates of each other; only
		// kx = 0 and, for even px, kx = px/2 are their own partners.
		if kx == 0 || (s.px%2 == 0 && kx == s.px/2) {
			sum += part
		} else {
			sum += 2 * part
		}
	}
	return sum / float64(s.px*py)
}

// convolve sets dst to (B⋆ap)_j = Σ_j' B(x_j − x_j') ap_j' on the whole
// N×N grid, for the apparent model ap with support bx. It pads to
// fftSize(2N − 1) so that every offset of the grid is represented once.
func (c *Compressed) convolve(dst, ap []float64, bx box) {
	n := c.grid.N
	p := fftSize(2*n - 1)
	s := c.spectrum(p, p)
	w := s.pool.Get().(*convWork)
	defer s.pool.Put(w)
	nx := s.nx
	clear(w.t)
	clear(w.row)
	for j := bx.j0; j < bx.j1; j++ {
		copy(w.row[bx.i0:bx.i1], ap[j*n+bx.i0:j*n+bx.i1])
		w.rfft.Coefficients(w.rowc, w.row)
		copy(w.t[j*nx:(j+1)*nx], w.rowc)
	}
	for kx := range nx {
		for y := range p {
			w.col[y] = w.t[y*nx+kx]
		}
		w.cfft.Coefficients(w.col, w.col)
		bh := s.bhat[kx*p : (kx+1)*p]
		for ky := range w.col {
			w.col[ky] *= complex(bh[ky], 0)
		}
		w.cfft.Sequence(w.col, w.col)
		for y := range n {
			w.t[y*nx+kx] = w.col[y]
		}
	}
	norm := 1 / float64(p*p)
	for j := range n {
		w.rfft.Sequence(w.row, w.t[j*nx:(j+1)*nx])
		out := dst[j*n : (j+1)*n]
		for i := range out {
			out[i] = w.row[i] * norm
		}
	}
}
