package source

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

func TestLatticePriorMatchesDense(t *testing.T) {
	// The sparse Kronecker-sum R equals RegularizationMatrix entry by
	// entry, and its closed-form ln det R equals the Cholesky log
	// determinant of the dense R (gonum mat) to 1e-9 relative.
	rng := rand.New(rand.NewPCG(1, 1))
	for _, tc := range []struct {
		name   string
		nx, ny int
		kind   Regularization
		eps    float64
	}{
		{"zeroth 5×4", 5, 4, Zeroth, 0},
		{"gradient 7×6", 7, 6, Gradient, 0},
		{"gradient 2×9 eps 0.1", 2, 9, Gradient, 0.1},
		{"curvature 8×5", 8, 5, Curvature, 0},
		{"curvature 2×2", 2, 2, Curvature, 0.3},
		{"curvature 13×11 eps 1e-3", 13, 11, Curvature, 1e-3},
	} {
		t.Run(tc.name, func(t *testing.T) {
			g := RegularGrid(0, 1, 0, 2, tc.nx, tc.ny)
			p, err := NewPrior(g, tc.kind, tc.eps)
			if err != nil {
				t.Fatal(err)
			}
			r := RegularizationMatrix(g, tc.kind, tc.eps)
			n := g.Len()
			x := make([]float64, n)
			for k := range x {
				x[k] = rng.NormFloat64()
			}
			got := make([]float64, n)
			p.sp.mulVec(got, x)
			var want mat.VecDense
			want.MulVec(r, mat.NewVecDense(n, x))
			for k := range got {
				within(t, "R x", got[k], want.AtVec(k), 1e-13)
			}
			d := p.sp.diag()
			for k := range d {
				within(t, "diag R", d[k], r.At(k, k), 1e-15)
			}
			var ch mat.Cholesky
			if !ch.Factorize(r) {
				t.Fatal("dense R not positive definite")
			}
			within(t, "ln det R", p.LogDet, ch.LogDet(), 1e-9)
			within(t, "E_S", p.Energy(x), 0.5*mat.Inner(mat.NewVecDense(n, x), r, mat.NewVecDense(n, x)), 1e-12)
		})
	}
}

func TestPriorLargeIsSparseOnly(t *testing.T) {
	g := RegularGrid(0, 1, 0, 1, 80, 60)
	p, err := NewPrior(g, Curvature, 0)
	if err != nil {
		t.Fatal(err)
	}
	if p.R != nil || p.Len() != 4800 {
		t.Errorf("prior of 4800 nodes: dense R %v, Len %d", p.R != nil, p.Len())
	}
	if math.IsNaN(p.LogDet) || math.IsInf(p.LogDet, 0) {
		t.Errorf("ln det R = %v", p.LogDet)
	}
}
