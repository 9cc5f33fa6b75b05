// Package fftconv is a plan for the linear 2-D convolution of real arrays
// on a small box with a fixed real kernel, by zero-padded FFTs.
//
// A box of nx×ny values is stored row by row, element (i, j) at j·nx + i
// (i the fast index, as the sky grid of ../shared/conventions.md). The
// kernel is given at every offset (di, dj) with |di| < nx, |dj| < ny, so
// the convolution is exact (no wrap-around) on the box whatever the
// kernel's extent: the padded periods Px ≥ 2nx − 1 and Py ≥ 2ny − 1 are
// the next sizes with no prime factor above 5, which gonum's FFTs handle
// with radix-2, 3, 4 and 5 passes.
package fftconv

import (
	"fmt"

	"gonum.org/v1/gonum/dsp/fourier"
)

// Conv is a reusable convolution plan:
//
//	dst(i, j) = Σ_{i', j'} K(i − i', j − j') src(i', j'),
//
// the sums over the nx×ny box. A Conv is not safe for concurrent use.
type Conv struct {
	nx, ny int
	px, py int          // padded periods
	hx     int          // px/2 + 1 complex coefficients per row
	kern   []complex128 // kernel spectrum / (px·py), py rows of hx
	rows   *fourier.FFT
	cols   *fourier.CmplxFFT
	buf    []float64    // one padded row
	spec   []complex128 // py × hx, row j at j·hx
	col    []complex128 // one column, length py
	colOut []complex128
}

// GoodSize returns the smallest n' ≥ n whose prime factors are 2, 3 and 5.
func GoodSize(n int) int {
	if n < 1 {
		return 1
	}
	for m := n; ; m++ {
		k := m
		for _, p := range []int{2, 3, 5} {
			for k%p == 0 {
				k /= p
			}
		}
		if k == 1 {
			return m
		}
	}
}

// New returns the plan for an nx×ny box and the kernel K(di, dj), which is
// called once for each offset |di| ≤ nx − 1, |dj| ≤ ny − 1. It panics
// unless nx, ny ≥ 1.
func New(nx, ny int, kernel func(di, dj int) float64) *Conv {
	if nx < 1 || ny < 1 {
		panic(fmt.Sprintf("fftconv: box %d×%d is empty", nx, ny))
	}
	c := &Conv{nx: nx, ny: ny, px: GoodSize(2*nx - 1), py: GoodSize(2*ny - 1)}
	c.hx = c.px/2 + 1
	c.rows = fourier.NewFFT(c.px)
	c.cols = fourier.NewCmplxFFT(c.py)
	c.buf = make([]float64, c.px)
	c.spec = make([]complex128, c.py*c.hx)
	c.col = make([]complex128, c.py)
	c.colOut = make([]complex128, c.py)
	// The kernel on the periodic lattice, offset (di, dj) at
	// (di mod px, dj mod py); the padding between +(n−1) and −(n−1) stays
	// zero.
	k := make([]float64, c.px*c.py)
	for dj := -(ny - 1); dj < ny; dj++ {
		row := ((dj + c.py) % c.py) * c.px
		for di := -(nx - 1); di < nx; di++ {
			k[row+(di+c.px)%c.px] = kernel(di, dj)
		}
	}
	c.kern = make([]complex128, c.py*c.hx)
	c.forward(c.kern, k, c.px, c.py)
	scale := complex(1/float64(c.px*c.py), 0)
	for q := range c.kern {
		c.kern[q] *= scale
	}
	return c
}

// Size returns the box size nx, ny.
func (c *Conv) Size() (nx, ny int) { return c.nx, c.ny }

// Padded returns the FFT periods Px, Py.
func (c *Conv) Padded() (px, py int) { return c.px, c.py }

// forward stores in spec the 2-D spectrum of the real array a of w×h
// values (row stride w, w ≤ px, h ≤ py), zero-padded to px×py.
func (c *Conv) forward(spec []complex128, a []float64, w, h int) {
	clear(spec)
	for j := range h {
		copy(c.buf, a[j*w:(j+1)*w])
		clear(c.buf[w:])
		c.rows.Coefficients(spec[j*c.hx:(j+1)*c.hx], c.buf)
	}
	for q := range c.hx {
		for j := range c.py {
			c.col[j] = spec[j*c.hx+q]
		}
		c.cols.Coefficients(c.colOut, c.col)
		for j := range c.py {
			spec[j*c.hx+q] = c.colOut[j]
		}
	}
}

// Apply stores the convolution of src with the kernel in dst (allocated
// when nil; both nx·ny long) and returns it. dst and src may be the same
// slice.
func (c *Conv) Apply(dst, src []float64) []float64 {
	n := c.nx * c.ny
	if len(src) != n {
		panic(fmt.Sprintf("fftconv: %d values for a %d×%d box", len(src), c.nx, c.ny))
	}
	if dst == nil {
		dst = make([]float64, n)
	} else if len(dst) != n {
		panic(fmt.Sprintf("fftconv: destination of %d values for a %d×%d box", len(dst), c.nx, c.ny))
	}
	c.forward(c.spec, src, c.nx, c.ny)
	for q := range c.hx {
		for j := range c.py {
			c.col[j] = c.spec[j*c.hx+q] * c.kern[j*c.hx+q]
		}
		c.cols.Sequence(c.colOut, c.col)
		// Only the rows of the box are needed back.
		for j := range c.ny {
			c.spec[j*c.hx+q] = c.colOut[j]
		}
	}
	for j := range c.ny {
		c.rows.Sequence(c.buf, c.spec[j*c.hx:(j+1)*c.hx])
		copy(dst[j*c.nx:(j+1)*c.nx], c.buf[:c.nx])
	}
	return dst
}

// Clone returns a plan sharing c's kernel spectrum with its own FFT work
// space, for use in another goroutine.
func (c *Conv) Clone() *Conv {
	d := *c
	d.rows = fourier.NewFFT(c.px)
	d.cols = fourier.NewCmplxFFT(c.py)
	d.buf = make([]float64, c.px)
	d.spec = make([]complex128, c.py*c.hx)
	d.col = make([]complex128, c.py)
	d.colOut = make([]complex128, c.py)
	return &d
}
