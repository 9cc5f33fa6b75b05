package uv

import "sync"

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

// beamSpectrum is the FFT b̂ of the circularly laid out dirty beam for one
// padded size (2^k or 3·2^k), and a pool of scratch space for transforms of
// that size.
type beamSpectrum struct {
	px, py int
	nx     int       // px/2 + 1 coefficients along x
	bhat   []float64 // b̂[kx·py + q], q the bit-reversed position along y
	pool   sync.Pool // *convWork
}

// convWork is the scratch space of one transform of size px × py.
type convWork struct {
	fx, fy *fftPlan
	t      []complex128 // py rows of nx coefficients, t[y·nx + kx]
	x      []complex128
	col    []complex128
	ra, rb []float64
}

func newConvWork(px, py int) *convWork {
	nx := px/2 + 1
	return &convWork{
		fx:  newFFTPlan(px),
		fy:  newFFTPlan(py),
		t:   make([]complex128, py*nx),
		x:   make([]complex128, max(px, py)),
		col: make([]complex128, py),
		ra:  make([]float64, px),
		rb:  make([]float64, px),
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
	n, nx := c.grid.N, s.nx
	// Offsets |d| ≤ ⌈P/2⌉ − 1, and at most N − 1 where B is known.
	hx, hy := min((px+1)/2-1, n-1), min((py+1)/2-1, n-1)
	fill := func(row []float64, y int) {
		clear(row)
		dy := y
		if y > py/2 {
			dy = y - py
		}
		if dy < -hy || dy > hy {
			return
		}
		for dx := -hx; dx <= hx; dx++ {
			row[(dx+px)%px] = c.BeamAt(dx, dy)
		}
	}
	for y := 0; y < py; y += 2 {
		fill(w.ra, y)
		fill(w.rb, y+1)
		w.fx.realPair(w.t[y*nx:(y+1)*nx], w.t[(y+1)*nx:(y+2)*nx], w.ra, w.rb, w.x, false)
	}
	s.bhat = make([]float64, nx*py)
	for kx := range nx {
		for y := range py {
			w.col[y] = w.t[y*nx+kx]
		}
		w.fy.forward(w.col, false)
		for q, v := range w.col {
			s.bhat[kx*py+q] = real(v)
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
// zero-padded to the power of two ≥ 2b − 1 on each axis.
func (c *Compressed) quadratic(ap []float64, bx box) float64 {
	n := c.grid.N
	wx, wy := bx.i1-bx.i0, bx.j1-bx.j0
	s := c.spectrum(nextFFTSize(2*wx-1), nextFFTSize(2*wy-1))
	w := s.pool.Get().(*convWork)
	defer s.pool.Put(w)
	nx, py := s.nx, s.py
	for y := 0; y < wy; y += 2 {
		r := (bx.j0 + y) * n
		a := ap[r+bx.i0 : r+bx.i1]
		var b []float64
		var cb []complex128
		if y+1 < wy {
			b = ap[r+n+bx.i0 : r+n+bx.i1]
			cb = w.t[(y+1)*nx : (y+2)*nx]
		}
		w.fx.realPair(w.t[y*nx:(y+1)*nx], cb, a, b, w.x, true)
	}
	var sum float64
	for kx := range nx {
		for y := range wy {
			w.col[y] = w.t[y*nx+kx]
		}
		clear(w.col[wy:])
		w.fy.forward(w.col, true)
		bh := s.bhat[kx*py : (kx+1)*py]
		var part float64
		for q, v := range w.col {
			part += bh[q] * (real(v)*real(v) + imag(v)*imag(v))
		}
		// Coefficients kx and px − kx are conjugates of each other; only
		// kx = 0 and kx = px/2 are their own partners.
		if kx == 0 || kx == s.px/2 {
			sum += part
		} else {
			sum += 2 * part
		}
	}
	return sum / float64(s.px*py)
}

// convolve sets dst to (B⋆ap)_j = Σ_j' B(x_j − x_j') ap_j' on the whole
// N×N grid, for the apparent model ap with support bx. It pads to the power
// of two ≥ 2N − 1 so that every offset of the grid is represented once.
func (c *Compressed) convolve(dst, ap []float64, bx box) {
	n := c.grid.N
	p := nextPow2(2*n - 1)
	s := c.spectrum(p, p)
	w := s.pool.Get().(*convWork)
	defer s.pool.Put(w)
	nx := s.nx
	clear(w.t)
	for y := bx.j0 &^ 1; y < bx.j1; y += 2 {
		w.fx.realPair(w.t[y*nx:(y+1)*nx], w.t[(y+1)*nx:(y+2)*nx],
			ap[y*n:(y+1)*n], ap[(y+1)*n:(y+2)*n], w.x, true)
	}
	for kx := range nx {
		for y := range n {
			w.col[y] = w.t[y*nx+kx]
		}
		clear(w.col[n:])
		w.fy.forward(w.col, true)
		bh := s.bhat[kx*p : (kx+1)*p]
		for q, b := range bh {
			w.col[q] = complex(real(w.col[q])*b, imag(w.col[q])*b)
		}
		w.fy.inverse(w.col)
		for y := range n {
			w.t[y*nx+kx] = w.col[y]
		}
	}
	norm := 1 / float64(p*p)
	for y := 0; y < n; y += 2 {
		w.fx.realPairInverse(w.ra[:n], w.rb[:n], w.t[y*nx:(y+1)*nx], w.t[(y+1)*nx:(y+2)*nx], w.x)
		for i := range n {
			dst[y*n+i] = w.ra[i] * norm
			dst[(y+1)*n+i] = w.rb[i] * norm
		}
	}
}
