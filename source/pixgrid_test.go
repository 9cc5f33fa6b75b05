package source

import (
	"math"
	"math/rand/v2"
	"testing"

	"deflect/lensmodel"
)

func TestMappingReproducesPlanes(t *testing.T) {
	// Bilinear interpolation is exact for s = a + b x + c y, and the
	// midpoint rule is exact for a linear function over each sub-pixel, so
	// without a lens (L s)_r = Δ² s(x_r, y_r) (the pixel-centre value).
	g := testGrid{n: 20, pixel: 0.1}
	grid := RegularGrid(-1.2, 1.1, -1.05, 1.3, 9, 7)
	var mask []int
	for k := range g.n * g.n {
		if x, y := g.Centre(k); math.Abs(x) < 0.9 && math.Abs(y) < 0.9 {
			mask = append(mask, k)
		}
	}
	plane := func(x, y float64) float64 { return 0.3 + 1.7*x - 0.6*y }
	s := make([]float64, grid.Len())
	for iy, y := range grid.Y {
		for ix, x := range grid.X {
			s[iy*len(grid.X)+ix] = plane(x, y)
		}
	}
	for _, sub := range []int{1, 2, 3} {
		mp := NewMapping(g, nil, mask, grid, sub)
		out := mp.Apply(nil, s)
		for r, k := range mask {
			x, y := g.Centre(k)
			within(t, "pixel flux", out[r], 0.01*plane(x, y), 1e-12)
		}
	}
}

func TestMappingLensed(t *testing.T) {
	// Each sub-pixel lands where the lens sends it: a source bright only at
	// one node is seen in the pixels whose traced sub-pixels fall in the
	// four cells around it, with the bilinear weights of those positions.
	g := testGrid{n: 16, pixel: 0.15}
	lens := lensmodel.SIE{ThetaE: 0.8, Q: 0.7, PA: 15}
	grid := RegularGrid(-0.5, 0.5, -0.5, 0.5, 11, 11)
	mask := make([]int, g.n*g.n)
	for k := range mask {
		mask[k] = k
	}
	mp := NewMapping(g, lens, mask, grid, 2)
	s := make([]float64, grid.Len())
	node := 5*11 + 6
	s[node] = 1
	out := mp.Apply(nil, s)
	for r, k := range mask {
		cx, cy := g.Centre(k)
		var want float64
		for a := range 2 {
			for b := range 2 {
				x := cx + g.pixel*((float64(a)+0.5)/2-0.5)
				y := cy + g.pixel*((float64(b)+0.5)/2-0.5)
				ax, ay := lens.Deflect(x, y)
				tx := 1 - math.Abs(x-ax-grid.X[6])/0.1
				ty := 1 - math.Abs(y-ay-grid.Y[5])/0.1
				if tx > 0 && ty > 0 {
					want += g.pixel * g.pixel / 4 * tx * ty
				}
			}
		}
		within(t, "pixel flux", out[r], want, 1e-12)
	}
}

func TestGridWeights(t *testing.T) {
	// Σ_k s_k w_k integrates the bilinear surface exactly: a plane over a
	// rectangle integrates to its centre value times the area.
	grid := AdaptiveGrid([]float64{0, 0.1, 0.12, 0.5, 1, 1.1}, []float64{-1, 0, 0.01, 0.02, 2}, 8, 6, 0.3)
	var sum, area float64
	w := grid.Weights()
	for iy, y := range grid.Y {
		for ix, x := range grid.X {
			sum += (2 + x - 3*y) * w[iy*len(grid.X)+ix]
			area += w[iy*len(grid.X)+ix]
		}
	}
	within(t, "area", area, 1.1*3, 1e-12)
	within(t, "∫ plane", sum, (2+0.55-3*0.5)*3.3, 1e-12)
}

func TestAdaptiveGridFollowsDensity(t *testing.T) {
	// Half of the positions crowd into 5% of the range: the node spacing
	// there must be much finer than elsewhere, and never above 1/u times
	// the regular spacing.
	rng := rand.New(rand.NewPCG(1, 1))
	var x, y []float64
	for range 5000 {
		x = append(x, rng.Float64())
		y = append(y, rng.Float64())
		x = append(x, 0.5+0.05*rng.Float64())
		y = append(y, rng.Float64())
	}
	grid := AdaptiveGrid(x, y, 21, 11, 0.3)
	var fine, coarse float64 = 1, 0
	for i := 1; i < len(grid.X); i++ {
		h := grid.X[i] - grid.X[i-1]
		if !(h <= (grid.X[20]-grid.X[0])/20/0.3*(1+1e-9)) {
			t.Errorf("spacing %v above the uniform bound", h)
		}
		mid := (grid.X[i] + grid.X[i-1]) / 2
		if mid > 0.5 && mid < 0.55 {
			fine = min(fine, h)
		} else if mid < 0.4 || mid > 0.65 {
			coarse = max(coarse, h)
		}
	}
	if !(fine < coarse/2) {
		t.Errorf("spacing inside the crowd %v, outside %v: does not follow the density", fine, coarse)
	}
}

func TestRegularizationForms(t *testing.T) {
	grid := RegularGrid(0, 1, 0, 1, 5, 4)
	nx := len(grid.X)
	rng := rand.New(rand.NewPCG(1, 1))
	s := make([]float64, grid.Len())
	for k := range s {
		s[k] = rng.NormFloat64()
	}
	quad := func(kind Regularization) float64 {
		r := RegularizationMatrix(grid, kind, 1e-300) // negligible zeroth term
		var q float64
		for i := range s {
			for j := range s {
				q += s[i] * r.At(i, j) * s[j]
			}
		}
		return q
	}
	// Direct sums of squared differences (definitions in regularize.go).
	var grad, curv, zero float64
	for iy := range 4 {
		for ix := range nx {
			k := iy*nx + ix
			zero += s[k] * s[k]
			if ix+1 < nx {
				grad += (s[k+1] - s[k]) * (s[k+1] - s[k])
			}
			if iy+1 < 4 {
				grad += (s[k+nx] - s[k]) * (s[k+nx] - s[k])
			}
			if ix > 0 && ix+1 < nx {
				d := s[k-1] - 2*s[k] + s[k+1]
				curv += d * d
			}
			if iy > 0 && iy+1 < 4 {
				d := s[k-nx] - 2*s[k] + s[k+nx]
				curv += d * d
			}
		}
	}
	within(t, "zeroth sᵀRs", quad(Zeroth), zero, 1e-12)
	within(t, "gradient sᵀRs", quad(Gradient), grad, 1e-12)
	within(t, "curvature sᵀRs", quad(Curvature), curv, 1e-12)
	// Null spaces: constants for the gradient, planes for the curvature.
	for k := range s {
		s[k] = 1.5 + 0.3*float64(k%nx) - 0.7*float64(k/nx)
	}
	within(t, "curvature of a plane", quad(Curvature), 0, 1e-12)
	for k := range s {
		s[k] = 2.5
	}
	within(t, "gradient of a constant", quad(Gradient), 0, 1e-12)
}
