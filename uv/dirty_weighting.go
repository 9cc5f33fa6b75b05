package uv

import (
	"fmt"
	"math"
	"strings"
)

// Weighting is a visibility weighting scheme for dirty images.
type Weighting int

const (
	// Natural weighting images with W_k = w_k: the lowest noise.
	Natural Weighting = iota
	// Uniform weighting divides each weight by the total weight in its
	// cell of the uv grid, W_k = w_k / W_cell(k): the sharpest beam.
	Uniform
	// Briggs is robust weighting between the two (Briggs 1995), controlled
	// by the robustness R: W_k = w_k / (1 + W_cell(k) f²).
	Briggs
)

// String returns "natural", "uniform" or "briggs".
func (w Weighting) String() string {
	switch w {
	case Natural:
		return "natural"
	case Uniform:
		return "uniform"
	case Briggs:
		return "briggs"
	}
	return fmt.Sprintf("Weighting(%d)", int(w))
}

// ParseWeighting returns the Weighting named s (case-insensitive).
func ParseWeighting(s string) (Weighting, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "natural":
		return Natural, nil
	case "uniform":
		return Uniform, nil
	case "briggs", "robust":
		return Briggs, nil
	}
	return 0, fmt.Errorf("weighting %q: want natural, uniform or briggs", s)
}

// ImagingWeights returns the imaging weight W_k of every row of d on the
// uv grid of the image grid g (cells of 1/(N·Pixel) wavelengths, the grid
// an N×N image's FFT samples); flagged rows get zero. The gridded weight
// W_cell of a cell is the sum of the natural weights of the visibilities
// and of their Hermitian conjugates (−u, −v) that fall in it, as the
// gridding of a real image places both.
//
// Briggs weighting with robustness R uses
//
//	W_k = w_k / (1 + W_cell(k) f²),   f² = (5·10^−R)² / (Σ_cells W_cell² / Σ_k w_k),
//
// which tends to natural weighting for R ≫ 2 and to uniform weighting for
// R ≪ −2.
//
// References:
//
//   - Briggs D. S. 1995, PhD thesis, New Mexico Institute of Mining and
//     Technology, "High Fidelity Deconvolution of Moderately Resolved
//     Sources", ch. 3: robust weighting and the normalisation of f² quoted
//     above (from memory).
func ImagingWeights(d *Dataset, g Grid, scheme Weighting, robust float64) ([]float64, error) {
	n := d.Len()
	out := make([]float64, n)
	for k := range n {
		if !d.Flagged(k) {
			out[k] = d.Weight[k]
		}
	}
	if scheme == Natural {
		return out, nil
	}
	if scheme != Uniform && scheme != Briggs {
		return nil, fmt.Errorf("uv: unknown weighting %v", scheme)
	}
	du := ArcsecPerRadian / (float64(g.N) * g.Pixel)
	m := 0
	for k := range n {
		if out[k] > 0 {
			m = max(m, int(math.Abs(math.Round(d.U[k]/du))), int(math.Abs(math.Round(d.V[k]/du))))
		}
	}
	side := 2*m + 1
	if side > 1<<13 {
		return nil, fmt.Errorf("uv: uv grid of %d² cells for uniform weighting: the pixel (%g arcsec) is far coarser than the resolution", side, g.Pixel)
	}
	cell := func(k int) int {
		iu, iv := int(math.Round(d.U[k]/du)), int(math.Round(d.V[k]/du))
		return (iv+m)*side + iu + m
	}
	conj := func(k int) int {
		iu, iv := int(math.Round(d.U[k]/du)), int(math.Round(d.V[k]/du))
		return (-iv+m)*side - iu + m
	}
	grid := make([]float64, side*side)
	var sumW float64
	for k := range n {
		if w := out[k]; w > 0 {
			grid[cell(k)] += w
			grid[conj(k)] += w
			sumW += w
		}
	}
	var f2 float64
	if scheme == Briggs {
		// Σ_cells W_cell² over the grid of samples and conjugates, divided by
		// the total weight of the same samples, 2Σw.
		var s2 float64
		for _, v := range grid {
			s2 += v * v
		}
		f := 5 * math.Pow(10, -robust)
		f2 = f * f / (s2 / (2 * sumW))
	}
	for k := range n {
		if out[k] == 0 {
			continue
		}
		wc := grid[cell(k)]
		if scheme == Uniform {
			out[k] /= wc
		} else {
			out[k] /= 1 + wc*f2
		}
	}
	return out, nil
}
