package uv

import (
	"fmt"
	"sync"
)

// Compressed holds one frequency group of one dataset in the compressed form
// of the measurement operator, from which χ² of any sky model follows exactly
// at a cost that does not depend on the number of visibilities.
//
// With natural weights and the apparent model I'_j = A_j I_j (primary beam
// A times the sky image I in Jy per pixel),
//
//	χ²(I) = Σ_k w_k |d_k − V_k(I)|²
//	      = Σ_k w_k |d_k|² − 2 Σ_j I'_j D_j + Σ_j Σ_j' I'_j I'_j' B(x_j − x_j'),
//
// where, over the unflagged rows k of the group,
//
//	D_j = Re Σ_k w_k d_k exp(+2πi (u_k l_j + v_k m_j))   (unnormalised dirty image)
//	B(Δ) = Σ_k w_k cos(2π (u_k Δl + v_k Δm))             (unnormalised dirty beam)
//
// and B is held at all (2N − 1)² pixel offsets of the N×N grid. The identity
// is exact: it is the expansion of |d − V|² with V_k = Σ_j I'_j
// exp(−2πi(u_k l_j + v_k m_j)). D and B are accumulated once (see
// Accumulator); each χ² is then one zero-padded FFT over the bounding box of
// the model's non-zero pixels.
//
// The methods of a Compressed are safe for concurrent use.
//
// References:
//
//   - Thompson A. R., Moran J. M. & Swenson G. W. 2017, Interferometry and
//     Synthesis in Radio Astronomy, 3rd ed., Springer, ch. 3 and §11.1: the
//     measurement equation and the dirty image and beam.
type Compressed struct {
	grid  Grid
	label string
	// freq is the group's reference frequency, the geometric mean of its
	// lowest and highest row frequency; fmin, fmax those extremes (Hz).
	freq, fmin, fmax float64
	pb               PrimaryBeam
	count            int
	sumW             float64
	dataTerm         float64
	logNorm          float64
	dirty            []float64 // N², FITS order
	beam             []float64 // (2N−1)², index (dj+N−1)·(2N−1) + di+N−1
	gain             []float64 // N²

	mu      sync.Mutex
	spectra map[[2]int]*beamSpectrum
	images  sync.Pool // *[]float64 of N², apparent-model scratch
}

// Size returns N, the number of pixels on a side of the grid.
func (c *Compressed) Size() int { return c.grid.N }

// Grid returns the sky grid of the compression.
func (c *Compressed) Grid() Grid { return c.grid }

// Label returns the label of the dataset the group came from.
func (c *Compressed) Label() string { return c.label }

// Freq returns the reference frequency of the group in Hz (zero when the
// data carried no frequency): the geometric mean of the lowest and highest
// row frequency, at which the primary beam is evaluated.
func (c *Compressed) Freq() float64 { return c.freq }

// FreqRange returns the lowest and highest row frequency of the group in Hz.
func (c *Compressed) FreqRange() (lo, hi float64) { return c.fmin, c.fmax }

// PrimaryBeam returns the primary beam of the group (the zero value when
// none).
func (c *Compressed) PrimaryBeam() PrimaryBeam { return c.pb }

// Count returns the number of visibilities compressed (unflagged rows).
func (c *Compressed) Count() int { return c.count }

// SumWeights returns Σ_k w_k in Jy⁻². The natural-weighting image noise is
// its inverse square root in Jy/beam.
func (c *Compressed) SumWeights() float64 { return c.sumW }

// DataTerm returns Σ_k w_k |d_k|², the χ² of an empty model.
func (c *Compressed) DataTerm() float64 { return c.dataTerm }

// LogNorm returns the normalisation of the Gaussian likelihood,
// −Σ_k ln(2π/w_k) (real and imaginary parts together), so that
// ln L = −χ²/2 + LogNorm.
func (c *Compressed) LogNorm() float64 { return c.logNorm }

// DirtyAt returns D at pixel (i, j), FITS order on the compression's grid,
// in Jy⁻¹ (weights times Jy).
func (c *Compressed) DirtyAt(i, j int) float64 { return c.dirty[j*c.grid.N+i] }

// BeamAt returns B at the pixel offset (di, dj), |di|, |dj| ≤ N − 1: the sky
// offset Δx = −di·Pixel (east), Δy = dj·Pixel (north). B(0, 0) = Σ w.
func (c *Compressed) BeamAt(di, dj int) float64 {
	n := c.grid.N
	if di <= -n || di >= n || dj <= -n || dj >= n {
		panic(fmt.Sprintf("uv: beam offset (%d, %d) outside ±%d", di, dj, n-1))
	}
	return c.beam[(dj+n-1)*(2*n-1)+di+n-1]
}

// GainAt returns the primary-beam gain A at pixel (i, j), 1 when the group
// has no primary beam.
func (c *Compressed) GainAt(i, j int) float64 { return c.gain[j*c.grid.N+i] }

// Dirty returns a copy of the unnormalised dirty image D in FITS order.
func (c *Compressed) Dirty() []float64 { return append([]float64(nil), c.dirty...) }

// apparent returns A·img in scratch space and the bounding box of its
// non-zero pixels; the caller returns the scratch with c.images.Put.
func (c *Compressed) apparent(img []float64) (*[]float64, box) {
	if len(img) != c.grid.Len() {
		panic(fmt.Sprintf("uv: image of %d pixels, compression grid has %d", len(img), c.grid.Len()))
	}
	p, _ := c.images.Get().(*[]float64)
	if p == nil {
		s := make([]float64, len(img))
		p = &s
	}
	ap := *p
	for k, v := range img {
		ap[k] = c.gain[k] * v
	}
	return p, supportBox(ap, c.grid.N)
}

// Chi2 returns χ²(img) for the sky image img in Jy per pixel (FITS order on
// the compression's grid; the primary beam is applied here). Its cost is
// that of one FFT of the model's bounding box padded to twice its size.
func (c *Compressed) Chi2(img []float64) float64 {
	p, bx := c.apparent(img)
	defer c.images.Put(p)
	ap := *p
	if bx.empty() {
		return c.dataTerm
	}
	n := c.grid.N
	var lin float64
	for j := bx.j0; j < bx.j1; j++ {
		for i := bx.i0; i < bx.i1; i++ {
			lin += ap[j*n+i] * c.dirty[j*n+i]
		}
	}
	return c.dataTerm - 2*lin + c.quadratic(ap, bx)
}

// Chi2Grad returns χ²(img) and sets grad to its gradient with respect to
// the sky image,
//
//	∂χ²/∂I_j = −2 A_j (D − B⋆I')_j,
//
// in Jy⁻¹ per (Jy per pixel). grad must have the length of img.
func (c *Compressed) Chi2Grad(grad, img []float64) float64 {
	if len(grad) != len(img) {
		panic("uv: Chi2Grad gradient length differs from the image")
	}
	p, bx := c.apparent(img)
	defer c.images.Put(p)
	ap := *p
	res := c.residual(grad, ap, bx)
	chi2 := c.dataTerm
	for k, v := range ap {
		chi2 -= v * (c.dirty[k] + res[k])
		grad[k] = -2 * c.gain[k] * res[k]
	}
	return chi2
}

// ResidualDirty sets dst to the unnormalised dirty image of the residual
// visibilities d − V(img),
//
//	R_j = D_j − Σ_j' B(x_j − x_j') A_j' img_j',
//
// and returns it; dst is allocated when nil. Dividing by SumWeights gives
// the natural-weighting residual image in Jy/beam.
func (c *Compressed) ResidualDirty(dst, img []float64) []float64 {
	if dst == nil {
		dst = make([]float64, c.grid.Len())
	} else if len(dst) != c.grid.Len() {
		panic("uv: ResidualDirty destination length differs from the grid")
	}
	p, bx := c.apparent(img)
	defer c.images.Put(p)
	return c.residual(dst, *p, bx)
}

func (c *Compressed) residual(dst, ap []float64, bx box) []float64 {
	if bx.empty() {
		copy(dst, c.dirty)
		return dst
	}
	c.convolve(dst, ap, bx)
	for k := range dst {
		dst[k] = c.dirty[k] - dst[k]
	}
	return dst
}
