package source

import (
	"fmt"

	"gonum.org/v1/gonum/mat"
)

// Regularization selects the form of the prior on a pixelated source,
// E_S(s) = ½ sᵀ R s, counted on the node lattice of a PixelGrid (unit
// spacing in index space, whatever the node spacing in arcsec).
type Regularization int

const (
	// Zeroth is R = I: E_S = ½ Σ_k s_k².
	Zeroth Regularization = iota
	// Gradient is R = DᵀD with D the first differences between neighbouring
	// nodes along x and y: E_S = ½ Σ (s_a − s_b)². Constants are its null
	// space.
	Gradient
	// Curvature is R = DᵀD with D the second differences
	// s_{i−1} − 2 s_i + s_{i+1} along x and y over interior nodes: planes
	// are its null space.
	Curvature
)

// String returns the name of the regularisation.
func (r Regularization) String() string {
	switch r {
	case Zeroth:
		return "zeroth"
	case Gradient:
		return "gradient"
	case Curvature:
		return "curvature"
	}
	return fmt.Sprintf("Regularization(%d)", int(r))
}

// RegularizationMatrix returns R for grid g. To make the prior proper, the
// gradient and curvature forms get a zeroth-order term eps·I added
// (eps = 0 means 1e-6), so that det R > 0 and the evidence's ½ ln det R
// term is finite; eps is ignored for Zeroth.
func RegularizationMatrix(g *PixelGrid, kind Regularization, eps float64) *mat.SymDense {
	nx, ny := len(g.X), len(g.Y)
	n := nx * ny
	r := mat.NewSymDense(n, nil)
	if eps == 0 {
		eps = 1e-6
	}
	// addRow adds dᵀd for the difference row d with coefficients c at
	// nodes idx.
	addRow := func(idx []int, c []float64) {
		for a := range idx {
			for b := a; b < len(idx); b++ {
				i, j := idx[a], idx[b]
				v := c[a] * c[b]
				if i == j {
					r.SetSym(i, i, r.At(i, i)+v)
				} else {
					r.SetSym(i, j, r.At(i, j)+v)
				}
			}
		}
	}
	switch kind {
	case Zeroth:
		for k := range n {
			r.SetSym(k, k, 1)
		}
		return r
	case Gradient:
		for iy := range ny {
			for ix := range nx {
				k := iy*nx + ix
				if ix+1 < nx {
					addRow([]int{k, k + 1}, []float64{-1, 1})
				}
				if iy+1 < ny {
					addRow([]int{k, k + nx}, []float64{-1, 1})
				}
			}
		}
	case Curvature:
		for iy := range ny {
			for ix := range nx {
				k := iy*nx + ix
				if ix > 0 && ix+1 < nx {
					addRow([]int{k - 1, k, k + 1}, []float64{1, -2, 1})
				}
				if iy > 0 && iy+1 < ny {
					addRow([]int{k - nx, k, k + nx}, []float64{1, -2, 1})
				}
			}
		}
	default:
		panic(fmt.Sprintf("source: unknown regularization %d", int(kind)))
	}
	if !(eps > 0) {
		panic(fmt.Sprintf("source: zeroth-order term %v is not positive", eps))
	}
	for k := range n {
		r.SetSym(k, k, r.At(k, k)+eps)
	}
	return r
}
