package source

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"
)

// MaxDensePrior is the largest node count for which NewPrior stores the
// dense matrix Prior.R (beyond it R would take N_s² × 8 bytes; the sparse
// form serves the matrix-free solver).
const MaxDensePrior = 4096

// csr is a sparse square matrix in compressed sparse row form.
type csr struct {
	n      int
	rowPtr []int
	col    []int
	val    []float64
}

// mulVec stores A x in dst.
func (a *csr) mulVec(dst, x []float64) {
	for i := range a.n {
		var s float64
		for p := a.rowPtr[i]; p < a.rowPtr[i+1]; p++ {
			s += a.val[p] * x[a.col[p]]
		}
		dst[i] = s
	}
}

// diag returns the diagonal of A.
func (a *csr) diag() []float64 {
	d := make([]float64, a.n)
	for i := range a.n {
		for p := a.rowPtr[i]; p < a.rowPtr[i+1]; p++ {
			if a.col[p] == i {
				d[i] += a.val[p]
			}
		}
	}
	return d
}

// denseToCSR returns the non-zeros of a symmetric dense matrix.
func denseToCSR(r *mat.SymDense) *csr {
	n := r.SymmetricDim()
	a := &csr{n: n, rowPtr: make([]int, 1, n+1)}
	for i := range n {
		for j := range n {
			if v := r.At(i, j); v != 0 {
				a.col = append(a.col, j)
				a.val = append(a.val, v)
			}
		}
		a.rowPtr = append(a.rowPtr, len(a.col))
	}
	return a
}

// lattice1D returns the one-dimensional form of the regularisation on n
// nodes: DᵀD with D the first differences (Gradient: the path-graph
// Laplacian) or the interior second differences (Curvature), or zero for
// Zeroth.
func lattice1D(kind Regularization, n int) *mat.SymDense {
	c := mat.NewSymDense(n, nil)
	add := func(idx []int, w []float64) {
		for a := range idx {
			for b := a; b < len(idx); b++ {
				c.SetSym(idx[a], idx[b], c.At(idx[a], idx[b])+w[a]*w[b])
			}
		}
	}
	switch kind {
	case Zeroth:
	case Gradient:
		for i := 0; i+1 < n; i++ {
			add([]int{i, i + 1}, []float64{-1, 1})
		}
	case Curvature:
		for i := 1; i+1 < n; i++ {
			add([]int{i - 1, i, i + 1}, []float64{1, -2, 1})
		}
	default:
		panic(fmt.Sprintf("source: unknown regularization %d", int(kind)))
	}
	return c
}

// latticePrior is the regularisation of grid g in the Kronecker-sum form
// that RegularizationMatrix builds:
//
//	R = I_y ⊗ C_x + C_y ⊗ I_x + e I,
//
// node k = iy·nx + ix, C the one-dimensional matrices of lattice1D, e the
// zeroth-order term (1 with C = 0 for Zeroth). Its eigenvalues are
// c_a + c'_b + e over the eigenvalues c_a of C_x and c'_b of C_y (Horn &
// Johnson 1991, Topics in Matrix Analysis, thm. 4.4.5), so
//
//	ln det R = Σ_a Σ_b ln(c_a + c'_b + e)
//
// exactly, from two small dense eigenproblems.
func latticePrior(g *PixelGrid, kind Regularization, eps float64) (sp *csr, logDet float64, err error) {
	nx, ny := len(g.X), len(g.Y)
	if kind == Zeroth {
		eps = 1
	} else if eps == 0 {
		eps = 1e-6
	}
	if !(eps > 0) {
		panic(fmt.Sprintf("source: zeroth-order term %v is not positive", eps))
	}
	cx, cy := lattice1D(kind, nx), lattice1D(kind, ny)
	var ex, ey mat.EigenSym
	if !ex.Factorize(cx, false) || !ey.Factorize(cy, false) {
		return nil, 0, fmt.Errorf("source: %v regularization: eigenvalues of the %d×%d lattice did not converge", kind, nx, ny)
	}
	vx, vy := ex.Values(nil), ey.Values(nil)
	for _, a := range vy {
		for _, b := range vx {
			e := a + b + eps
			if !(e > 0) {
				return nil, 0, fmt.Errorf("source: %v regularization matrix of %d nodes is not positive definite (eigenvalue %g)", kind, nx*ny, e)
			}
			logDet += math.Log(e)
		}
	}
	n := nx * ny
	sp = &csr{n: n, rowPtr: make([]int, 1, n+1)}
	for iy := range ny {
		for ix := range nx {
			// Row iy·nx + ix: C_y couples (iy', ix), C_x couples (iy, ix'); both
			// are banded (half-width ≤ 2), so the columns come out in
			// order.
			for jy := max(0, iy-2); jy <= min(ny-1, iy+2); jy++ {
				if jy < iy {
					if v := cy.At(iy, jy); v != 0 {
						sp.col = append(sp.col, jy*nx+ix)
						sp.val = append(sp.val, v)
					}
				}
			}
			for jx := max(0, ix-2); jx <= min(nx-1, ix+2); jx++ {
				v := cx.At(ix, jx)
				if jx == ix {
					v += cy.At(iy, iy) + eps
				}
				if v != 0 {
					sp.col = append(sp.col, iy*nx+jx)
					sp.val = append(sp.val, v)
				}
			}
			for jy := iy + 1; jy <= min(ny-1, iy+2); jy++ {
				if v := cy.At(iy, jy); v != 0 {
					sp.col = append(sp.col, jy*nx+ix)
					sp.val = append(sp.val, v)
				}
			}
			sp.rowPtr = append(sp.rowPtr, len(sp.col))
		}
	}
	return sp, logDet, nil
}

// Len returns the number of source nodes of the prior.
func (p *Prior) Len() int {
	if p.sp != nil {
		return p.sp.n
	}
	return p.R.SymmetricDim()
}

// sparse returns R in sparse form, derived from the dense R when the
// Prior was not made by NewPrior.
func (p *Prior) sparse() *csr {
	if p.sp == nil {
		p.sp = denseToCSR(p.R)
	}
	return p.sp
}

// Energy returns ½ sᵀ R s, the prior's E_S(s).
func (p *Prior) Energy(s []float64) float64 {
	sp := p.sparse()
	if len(s) != sp.n {
		panic(fmt.Sprintf("source: %d source values for a prior of %d nodes", len(s), sp.n))
	}
	rs := make([]float64, sp.n)
	sp.mulVec(rs, s)
	var e float64
	for k, v := range s {
		e += v * rs[k]
	}
	return e / 2
}
