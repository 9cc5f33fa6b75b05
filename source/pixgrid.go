package source

import (
	"fmt"
	"math"
	"slices"
	"sort"

	"deflect/lensmodel"
)

// PixelGrid is a source-plane grid of nodes on the tensor product of the
// ascending node coordinates X and Y (arcsec). A pixelated source is the
// surface brightness s_k (Jy/arcsec²) at each node k = iy·len(X) + ix,
// interpolated bilinearly inside each rectangle of four nodes and zero
// outside the grid.
type PixelGrid struct {
	X, Y []float64
}

// Len returns the number of nodes.
func (g *PixelGrid) Len() int { return len(g.X) * len(g.Y) }

// RegularGrid returns a grid of nx×ny equally spaced nodes spanning
// [x0, x1]×[y0, y1] arcsec. It panics unless nx, ny ≥ 2 and x0 < x1, y0 < y1.
func RegularGrid(x0, x1, y0, y1 float64, nx, ny int) *PixelGrid {
	if nx < 2 || ny < 2 || !(x0 < x1) || !(y0 < y1) {
		panic(fmt.Sprintf("source: regular grid needs ≥ 2 nodes and an increasing box, got %d×%d over [%v, %v]×[%v, %v]", nx, ny, x0, x1, y0, y1))
	}
	g := &PixelGrid{X: make([]float64, nx), Y: make([]float64, ny)}
	for i := range nx {
		g.X[i] = x0 + (x1-x0)*float64(i)/float64(nx-1)
	}
	for i := range ny {
		g.Y[i] = y0 + (y1-y0)*float64(i)/float64(ny-1)
	}
	return g
}

// BoundingGrid returns a regular nx×ny grid covering the source-plane
// positions (bx[k], by[k]) (e.g. ray-traced masked image pixels) with a
// margin of pad times the box size on each side.
func BoundingGrid(bx, by []float64, nx, ny int, pad float64) *PixelGrid {
	x0, x1 := bounds(bx)
	y0, y1 := bounds(by)
	dx, dy := (x1-x0)*pad, (y1-y0)*pad
	return RegularGrid(x0-dx, x1+dx, y0-dy, y1+dy, nx, ny)
}

func bounds(v []float64) (lo, hi float64) {
	if len(v) == 0 {
		panic("source: no positions to bound")
	}
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, x := range v {
		lo, hi = min(lo, x), max(hi, x)
	}
	if !(lo < hi) {
		hi = lo + 1e-3
	}
	return lo, hi
}

// AdaptiveGrid returns an nx×ny grid whose node spacing follows the
// density of the source-plane positions (bx[k], by[k]), typically ray-traced
// image pixels: where the magnification is high, many image pixels map to
// a small source area and the nodes crowd together. Along each axis the
// nodes sit at equal steps of the cumulative distribution
//
//	C(x) = (1 − u) F_emp(x) + u (x − x0)/(x1 − x0),
//
// F_emp the empirical distribution of the positions' coordinate and u the
// uniform fraction in (0, 1] (0 means 0.3), which keeps every spacing
// below 1/u times the regular one, so sparsely hit regions still get nodes. The grid is a tensor product, so it
// adapts to the marginal densities along x and y, not to arbitrary shapes.
func AdaptiveGrid(bx, by []float64, nx, ny int, uniform float64) *PixelGrid {
	if uniform == 0 {
		uniform = 0.3
	}
	if !(uniform > 0 && uniform <= 1) {
		panic(fmt.Sprintf("source: adaptive grid uniform fraction %v outside (0, 1]", uniform))
	}
	if nx < 2 || ny < 2 {
		panic(fmt.Sprintf("source: adaptive grid needs ≥ 2 nodes per axis, got %d×%d", nx, ny))
	}
	return &PixelGrid{X: quantileNodes(bx, nx, uniform), Y: quantileNodes(by, ny, uniform)}
}

// quantileNodes places n nodes at equal steps of the mixed cumulative
// distribution of v, with the end nodes at its extremes.
func quantileNodes(v []float64, n int, u float64) []float64 {
	s := slices.Clone(v)
	sort.Float64s(s)
	lo, hi := bounds(s)
	c := func(x float64) float64 {
		f := float64(sort.SearchFloat64s(s, x)) / float64(len(s))
		return (1-u)*f + u*(x-lo)/(hi-lo)
	}
	nodes := make([]float64, n)
	nodes[0], nodes[n-1] = lo, hi
	for k := 1; k < n-1; k++ {
		target := float64(k) / float64(n-1)
		a, b := lo, hi
		for range 60 {
			m := (a + b) / 2
			if c(m) < target {
				a = m
			} else {
				b = m
			}
		}
		nodes[k] = (a + b) / 2
	}
	return nodes
}

// Weights returns the source-plane area in arcsec² that each node's
// bilinear basis function integrates to, so that the source flux is
// Σ_k s_k w_k (Jy).
func (g *PixelGrid) Weights() []float64 {
	wx, wy := trapWeights(g.X), trapWeights(g.Y)
	w := make([]float64, g.Len())
	for iy, a := range wy {
		for ix, b := range wx {
			w[iy*len(g.X)+ix] = a * b
		}
	}
	return w
}

func trapWeights(x []float64) []float64 {
	w := make([]float64, len(x))
	for i := 1; i < len(x); i++ {
		h := (x[i] - x[i-1]) / 2
		w[i-1] += h
		w[i] += h
	}
	return w
}

// locate returns the index i with x[i] ≤ v < x[i+1] and the fraction
// t = (v − x[i])/(x[i+1] − x[i]), or ok false outside [x[0], x[n−1]].
func locate(x []float64, v float64) (i int, t float64, ok bool) {
	n := len(x)
	if !(v >= x[0] && v <= x[n-1]) {
		return 0, 0, false
	}
	i = sort.SearchFloat64s(x, v) - 1
	i = min(max(i, 0), n-2)
	return i, (v - x[i]) / (x[i+1] - x[i]), true
}

// Mapping is the sparse linear map L from the node values s (Jy/arcsec²) of
// a PixelGrid to the flux in Jy of the masked image pixels: row r belongs to
// image pixel Mask[r] (flat index k = j·N + i of the sky grid), and
//
//	(L s)_r = (Δ²/S²) Σ_sub Σ_k b_k(β_sub) s_k,
//
// the sum running over S×S sub-pixels of side Δ/S, each ray-traced to β_sub,
// and b_k the bilinear interpolation weights of its four surrounding nodes
// (rays landing outside the grid see zero brightness). Rows are stored in
// compressed sparse row form, the columns of each row ascending.
type Mapping struct {
	Mask    []int     // masked image pixels, flat indices
	N       int       // sky grid side
	NSource int       // number of source nodes
	RowPtr  []int     // row r holds Col[RowPtr[r]:RowPtr[r+1]]
	Col     []int     // node indices
	Val     []float64 // coefficients, arcsec²
}

// NewMapping builds the mapping for the masked pixels of pix seen through
// lens (nil for none) onto grid g, with sub×sub sub-pixels per pixel (0
// means 2).
func NewMapping(pix Pixels, lens lensmodel.Mass, mask []int, g *PixelGrid, sub int) *Mapping {
	sub = subOrDefault(sub)
	bx, by := TraceMask(pix, lens, mask, sub)
	return newMapping(pix, mask, g, sub, bx, by)
}

func subOrDefault(sub int) int {
	if sub == 0 {
		sub = 2
	}
	if sub < 1 {
		panic(fmt.Sprintf("source: sub-pixel count %d is not positive", sub))
	}
	return sub
}

// TraceMask returns the source-plane positions of the sub×sub sub-pixel
// centres (0 means 2) of each masked pixel of pix seen through lens (nil for
// none), sub-pixel (a, b) of mask entry r at index (r·sub + a)·sub + b, e.g.
// to size a PixelGrid with BoundingGrid or AdaptiveGrid.
func TraceMask(pix Pixels, lens lensmodel.Mass, mask []int, sub int) (bx, by []float64) {
	sub = subOrDefault(sub)
	n := pix.Size()
	d := pix.PixelSize()
	x := make([]float64, len(mask)*sub*sub)
	y := make([]float64, len(x))
	for r, k := range mask {
		if k < 0 || k >= n*n {
			panic(fmt.Sprintf("source: mask pixel %d outside the %d×%d grid", k, n, n))
		}
		cx, cy := pix.Centre(k)
		for a := range sub {
			for b := range sub {
				q := (r*sub+a)*sub + b
				x[q] = cx + d*((float64(a)+0.5)/float64(sub)-0.5)
				y[q] = cy + d*((float64(b)+0.5)/float64(sub)-0.5)
			}
		}
	}
	bx, by = make([]float64, len(x)), make([]float64, len(x))
	switch l := lens.(type) {
	case nil:
		copy(bx, x)
		copy(by, y)
	case lensmodel.Lens:
		l.Trace(bx, by, x, y)
	default:
		lensmodel.Lens{lens}.Trace(bx, by, x, y)
	}
	return bx, by
}

// newMapping builds the mapping from the traced sub-pixel positions.
func newMapping(pix Pixels, mask []int, g *PixelGrid, sub int, bx, by []float64) *Mapping {
	n := pix.Size()
	d := pix.PixelSize()
	m := len(mask)
	mp := &Mapping{Mask: slices.Clone(mask), N: n, NSource: g.Len(), RowPtr: make([]int, 1, m+1)}
	w := d * d / float64(sub*sub)
	nx := len(g.X)
	acc := map[int]float64{}
	var cols []int
	for r := range m {
		clear(acc)
		for q := r * sub * sub; q < (r+1)*sub*sub; q++ {
			ix, tx, okx := locate(g.X, bx[q])
			iy, ty, oky := locate(g.Y, by[q])
			if !okx || !oky {
				continue
			}
			k := iy*nx + ix
			acc[k] += w * (1 - tx) * (1 - ty)
			acc[k+1] += w * tx * (1 - ty)
			acc[k+nx] += w * (1 - tx) * ty
			acc[k+nx+1] += w * tx * ty
		}
		cols = cols[:0]
		for k, v := range acc {
			if v != 0 {
				cols = append(cols, k)
			}
		}
		slices.Sort(cols)
		for _, k := range cols {
			mp.Col = append(mp.Col, k)
			mp.Val = append(mp.Val, acc[k])
		}
		mp.RowPtr = append(mp.RowPtr, len(mp.Col))
	}
	return mp
}

// Apply stores L s in dst (allocated when nil) and returns it: the flux in
// Jy of each masked pixel.
func (mp *Mapping) Apply(dst, s []float64) []float64 {
	if len(s) != mp.NSource {
		panic(fmt.Sprintf("source: %d source values for %d nodes", len(s), mp.NSource))
	}
	if dst == nil {
		dst = make([]float64, len(mp.Mask))
	}
	for r := range mp.Mask {
		var v float64
		for p := mp.RowPtr[r]; p < mp.RowPtr[r+1]; p++ {
			v += mp.Val[p] * s[mp.Col[p]]
		}
		dst[r] = v
	}
	return dst
}

// Image returns the full N×N sky image (Jy per pixel) of the source s:
// L s on the masked pixels, zero elsewhere.
func (mp *Mapping) Image(s []float64) []float64 {
	img := make([]float64, mp.N*mp.N)
	for r, v := range mp.Apply(nil, s) {
		img[mp.Mask[r]] = v
	}
	return img
}
