package lensmodel

import (
	"errors"
	"fmt"
	"math"
)

// Polyline is an ordered list of points in arcsec.
type Polyline struct {
	X, Y []float64
}

// Len returns the number of points.
func (p Polyline) Len() int { return len(p.X) }

// CurveKind says which eigenvalue of the lens Jacobian A vanishes on a
// critical curve.
type CurveKind int

const (
	// Tangential curves have 1 − κ − γ = 0; their images are stretched
	// along the curve.
	Tangential CurveKind = iota
	// Radial curves have 1 − κ + γ = 0; images are stretched across them.
	Radial
	// Cut marks the caustic of a singular centre, where α does not vanish
	// (a singular isothermal core): its critical curve is the centre itself
	// and its caustic the image of an infinitesimal circle about it, the
	// "cut" of the singular isothermal ellipsoid (Kormann, Schneider &
	// Bartelmann 1994, A&A 284, 285, section 4).
	Cut
)

// String returns "tangential", "radial" or "cut".
func (k CurveKind) String() string {
	switch k {
	case Tangential:
		return "tangential"
	case Radial:
		return "radial"
	case Cut:
		return "cut"
	}
	return fmt.Sprintf("CurveKind(%d)", int(k))
}

// Curve is one critical curve in the image plane and its caustic, the same
// points mapped through β = θ − α(θ), in the source plane.
type Curve struct {
	Kind   CurveKind
	Closed bool     // the polyline closes on itself (last point joins the first)
	Image  Polyline // critical curve, det A = 0, arcsec
	Source Polyline // caustic, arcsec
}

// CurveOptions are the settings of CriticalCurves. The zero value is the
// documented default for every field.
type CurveOptions struct {
	// CentreX, CentreY are the centre of the square searched, in arcsec.
	CentreX, CentreY float64
	// HalfWidth is the half side of the square searched in arcsec. Zero
	// means automatic: the smallest radius R = 0.5·2ⁿ″ about the centre at
	// which both the circles R and 2R have 1 − κ − γ > 0.2 everywhere (so
	// no tangential curve crosses them), times 1.25, enlarged to include
	// every component centre.
	HalfWidth float64
	// Grid is the number of base cells per side, at most 512; 0 means 64.
	Grid int
	// Depth is the number of quadtree refinements of a base cell, at most
	// 14; 0 means
	// 5, a finest spacing of 2·HalfWidth/(Grid·2^Depth).
	Depth int
	// VarTol is the relative variation of det A within a cell above which
	// the cell is refined even without a sign change, catching loops smaller
	// than a cell (the radial curves of small cores); 0 means 0.5.
	VarTol float64
	// MaxCells bounds the number of cells examined; 0 means 4 000 000.
	MaxCells int
}

// ErrTooManyCells is returned, wrapped, when a search exceeds its cell
// budget.
var ErrTooManyCells = errors.New("lensmodel: adaptive grid exceeded its cell budget")

// detA returns det A = (1 − ψ_xx)(1 − ψ_yy) − ψ_xy², A = ∂β/∂θ.
func detA(m Mass, x, y float64) float64 {
	hxx, hxy, hyy := m.Hessian(x, y)
	return (1-hxx)*(1-hyy) - hxy*hxy
}

// grid is a square lattice of finest spacing h whose det A values are
// computed on demand and cached: densely, in one batch, on the sub-lattice
// of half base cells that every search samples, and in a map below it.
type grid struct {
	m      Mass
	x0, y0 float64 // lower-left corner
	h      float64 // finest spacing
	depth  int
	n0     int // base cells per side
	det    blockCache[float64]
	stride int       // finest cells per coarse step
	nc     int       // coarse points per side
	cdet   []float64 // det A on the coarse lattice, index a·nc + b
	cbx    []float64 // β on the coarse lattice, when filled
	cby    []float64
}

// Batch evaluation, implemented by Lens.
type (
	hessianBatcher interface {
		HessianPoints(hxx, hxy, hyy, x, y []float64)
	}
	deflectBatcher interface {
		DeflectPoints(ax, ay, x, y []float64)
	}
)

// fillCoarse evaluates det A, and β when withBeta is set, on the coarse
// lattice, in parallel when the mass distribution offers batch methods.
func (g *grid) fillCoarse(withBeta bool) {
	g.stride = max(1<<g.depth/2, 1)
	g.nc = g.n0*(1<<g.depth)/g.stride + 1
	n := g.nc * g.nc
	xs, ys := make([]float64, n), make([]float64, n)
	for a := 0; a < g.nc; a++ {
		for b := 0; b < g.nc; b++ {
			xs[a*g.nc+b], ys[a*g.nc+b] = g.pos(a*g.stride, b*g.stride)
		}
	}
	hxx, hxy, hyy := make([]float64, n), make([]float64, n), make([]float64, n)
	if hb, ok := g.m.(hessianBatcher); ok {
		hb.HessianPoints(hxx, hxy, hyy, xs, ys)
	} else {
		for k := range xs {
			hxx[k], hxy[k], hyy[k] = g.m.Hessian(xs[k], ys[k])
		}
	}
	g.cdet = hxx
	for k := range hxx {
		g.cdet[k] = (1-hxx[k])*(1-hyy[k]) - hxy[k]*hxy[k]
	}
	if !withBeta {
		return
	}
	g.cbx, g.cby = hxy, hyy
	if db, ok := g.m.(deflectBatcher); ok {
		db.DeflectPoints(g.cbx, g.cby, xs, ys)
	} else {
		for k := range xs {
			g.cbx[k], g.cby[k] = g.m.Deflect(xs[k], ys[k])
		}
	}
	for k := range xs {
		g.cbx[k] = xs[k] - g.cbx[k]
		g.cby[k] = ys[k] - g.cby[k]
	}
}

// scalarEvaluator is the per-point form of a prepared mass distribution of
// this package (a Lens prepared once), avoiding per-call set-up.
type scalarEvaluator interface {
	deflect(x, y float64) (ax, ay float64)
	kappa(x, y float64) float64
	hessian(x, y float64) (hxx, hxy, hyy float64)
	potential(x, y float64) float64
}

// preparedMass adapts a scalarEvaluator to Mass.
type preparedMass struct{ e scalarEvaluator }

func (p preparedMass) Deflect(x, y float64) (ax, ay float64)        { return p.e.deflect(x, y) }
func (p preparedMass) Kappa(x, y float64) float64                   { return p.e.kappa(x, y) }
func (p preparedMass) Hessian(x, y float64) (hxx, hxy, hyy float64) { return p.e.hessian(x, y) }
func (p preparedMass) Potential(x, y float64) float64               { return p.e.potential(x, y) }

// prepared returns a Mass equal to m that evaluates single points faster
// when m is one of this package's prepared types, and m otherwise.
func prepared(m Mass) Mass {
	if p, ok := m.(preparer); ok {
		if e, ok := p.prepare().(scalarEvaluator); ok {
			return preparedMass{e}
		}
	}
	return m
}

func latticeKey(i, j int) uint64 { return uint64(i)<<32 | uint64(uint32(j)) }

func (g *grid) pos(i, j int) (x, y float64) {
	return g.x0 + float64(i)*g.h, g.y0 + float64(j)*g.h
}

func (g *grid) at(i, j int) float64 {
	if i%g.stride == 0 && j%g.stride == 0 {
		return g.cdet[(i/g.stride)*g.nc+j/g.stride]
	}
	return g.det.get(i, j, func() float64 {
		x, y := g.pos(i, j)
		return detA(g.m, x, y)
	})
}

// blockCache memoises values on lattice vertices in 8×8 blocks, found
// through a map; a search touches vertices in runs, so most look-ups hit
// the last block used.
type blockCache[T any] struct {
	blocks  map[uint64]*cacheBlock[T]
	lastKey uint64
	last    *cacheBlock[T]
}

type cacheBlock[T any] struct {
	v   [64]T
	set uint64 // bit k set when v[k] holds a value
}

func (c *blockCache[T]) get(i, j int, f func() T) T {
	key := latticeKey(i>>3, j>>3)
	b := c.last
	if b == nil || key != c.lastKey {
		if c.blocks == nil {
			c.blocks = make(map[uint64]*cacheBlock[T])
		}
		b = c.blocks[key]
		if b == nil {
			b = new(cacheBlock[T])
			c.blocks[key] = b
		}
		c.last, c.lastKey = b, key
	}
	k := (i&7)<<3 | j&7
	if b.set&(1<<k) != 0 {
		return b.v[k]
	}
	v := f()
	b.v[k] = v
	b.set |= 1 << k
	return v
}

// walk visits the cells of an adaptive quadtree over the lattice, calling
// refine(i, j, size) to decide whether a cell coarser than the finest level
// is split and leaf(i, j, size) for every cell that is not. It returns
// ErrTooManyCells when more than maxCells cells are examined.
func (g *grid) walk(maxCells int, refine func(i, j, size int) bool, leaf func(i, j, size int)) error {
	type cell struct{ i, j, size int }
	full := 1 << g.depth
	stack := make([]cell, 0, 4*g.n0*g.n0)
	for a := 0; a < g.n0; a++ {
		for b := 0; b < g.n0; b++ {
			stack = append(stack, cell{a * full, b * full, full})
		}
	}
	count := 0
	for len(stack) > 0 {
		c := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		count++
		if count > maxCells {
			return fmt.Errorf("%w (%d cells)", ErrTooManyCells, maxCells)
		}
		if c.size == 1 || !refine(c.i, c.j, c.size) {
			leaf(c.i, c.j, c.size)
			continue
		}
		s := c.size / 2
		stack = append(stack, cell{c.i, c.j, s}, cell{c.i + s, c.j, s}, cell{c.i, c.j + s, s}, cell{c.i + s, c.j + s, s})
	}
	return nil
}

// refineDet reports whether det A at the 3×3 points of the cell changes sign,
// is not finite, or varies by more than varTol·(1 + min |det A|).
func (g *grid) refineDet(i, j, size int, varTol float64) bool {
	s := size / 2
	lo, hi := math.Inf(1), math.Inf(-1)
	minAbs := math.Inf(1)
	pos, neg := false, false
	for a := 0; a <= 2; a++ {
		for b := 0; b <= 2; b++ {
			d := g.at(i+a*s, j+b*s)
			if math.IsNaN(d) || math.IsInf(d, 0) {
				return true
			}
			if d < 0 {
				neg = true
			} else {
				pos = true
			}
			lo, hi = math.Min(lo, d), math.Max(hi, d)
			minAbs = math.Min(minAbs, math.Abs(d))
		}
	}
	return (pos && neg) || hi-lo > varTol*(1+minAbs)
}

// containsCentre reports whether one of the centres lies in the cell or
// within one cell size of it.
func (g *grid) containsCentre(i, j, size int, centres []Centre) bool {
	x, y := g.pos(i, j)
	w := float64(size) * g.h
	for _, c := range centres {
		if c.X >= x-w && c.X <= x+2*w && c.Y >= y-w && c.Y <= y+2*w {
			return true
		}
	}
	return false
}

// autoHalfWidth implements CurveOptions.HalfWidth = 0.
func autoHalfWidth(m Mass, cx, cy float64, centres []Centre) (float64, error) {
	clear := func(r float64) bool {
		const n = 256
		for k := 0; k < n; k++ {
			s, c := math.Sincos(2 * math.Pi * (float64(k) + 0.5) / n)
			hxx, hxy, hyy := m.Hessian(cx+r*c, cy+r*s)
			kappa := (hxx + hyy) / 2
			gamma := math.Hypot((hxx-hyy)/2, hxy)
			if !(1-kappa-gamma > 0.2) {
				return false
			}
		}
		return true
	}
	r := 0.5
	for ; !(clear(r) && clear(2*r)); r *= 2 {
		if r > 1e4 {
			return 0, errors.New("lensmodel: no circle of radius ≤ 10⁴ arcsec is free of critical curves; set the search half-width explicitly")
		}
	}
	w := 1.25 * r
	for _, c := range centres {
		w = math.Max(w, 1.1*math.Max(math.Abs(c.X-cx), math.Abs(c.Y-cy)))
	}
	return w, nil
}

type curveSettings struct {
	cx, cy, half float64
	grid, depth  int
	varTol       float64
	maxCells     int
}

func (o CurveOptions) settings(m Mass, centres []Centre) (curveSettings, error) {
	s := curveSettings{cx: o.CentreX, cy: o.CentreY, half: o.HalfWidth, grid: o.Grid, depth: o.Depth, varTol: o.VarTol, maxCells: o.MaxCells}
	if s.grid == 0 {
		s.grid = 64
	}
	if s.depth == 0 {
		s.depth = 5
	}
	if s.varTol == 0 {
		s.varTol = 0.5
	}
	if s.maxCells == 0 {
		s.maxCells = 4000000
	}
	switch {
	case s.grid < 2 || s.grid > 512:
		return s, fmt.Errorf("lensmodel: critical curves: Grid = %d, want 2…512", o.Grid)
	case s.depth < 0 || s.depth > 14:
		return s, fmt.Errorf("lensmodel: critical curves: Depth = %d, want 0…14", o.Depth)
	case !(s.half >= 0) || math.IsInf(s.half, 0):
		return s, fmt.Errorf("lensmodel: critical curves: HalfWidth = %v, want a finite number ≥ 0", o.HalfWidth)
	case !(s.varTol > 0):
		return s, fmt.Errorf("lensmodel: critical curves: VarTol = %v, want > 0", o.VarTol)
	}
	if s.half == 0 {
		var err error
		if s.half, err = autoHalfWidth(m, s.cx, s.cy, centres); err != nil {
			return s, err
		}
	}
	return s, nil
}

// newGrid returns the lattice of s for the lens m (batch methods are used
// on m; point evaluations go through fast, the same lens prepared).
func (s curveSettings) newGrid(m, fast Mass, withBeta bool) *grid {
	// Offset the lattice by an irrational fraction of a finest cell so that
	// symmetric lens centres do not fall exactly on a vertex.
	h := 2 * s.half / float64(s.grid<<s.depth)
	g := &grid{
		m: m, h: h, depth: s.depth, n0: s.grid,
		x0: s.cx - s.half + 0.2718281828*h,
		y0: s.cy - s.half + 0.3141592654*h,
	}
	g.fillCoarse(withBeta)
	g.m = fast
	return g
}

// CriticalCurves returns the critical curves of m, where det A = 0 with
// A = I − ∇∇ψ, as ordered polylines together with their caustics.
//
// det A is sampled on an adaptive quadtree over a square (CurveOptions):
// base cells are split where det A changes sign among nine samples, where it
// varies by more than VarTol·(1 + min |det A|), and at the centres of the
// lens components (see Centred), down to the finest level. On the finest cells the zero
// contour is traced by marching squares (saddle cells resolved by the value
// at the cell centre); each crossing is polished onto det A = 0 by the
// Illinois variant of regula falsi along its cell edge, so the points lie on
// the curve to rounding. Crossings shared by neighbouring cells join the
// segments into closed loops wherever the curve stays inside the square.
// For every singular centre with bounded deflection (see Centred) a Cut
// curve is added.
func CriticalCurves(m Mass, opt CurveOptions) ([]Curve, error) {
	centres := centresOf(m)
	fast := prepared(m)
	s, err := opt.settings(fast, centres)
	if err != nil {
		return nil, err
	}
	g := s.newGrid(m, fast, false)
	m = fast
	type cellRef struct{ i, j int }
	var cells []cellRef
	err = g.walk(s.maxCells, func(i, j, size int) bool {
		return g.refineDet(i, j, size, s.varTol) || g.containsCentre(i, j, size, centres)
	}, func(i, j, size int) {
		if size == 1 {
			cells = append(cells, cellRef{i, j})
		}
	})
	if err != nil {
		return nil, err
	}
	var tr tracer
	tr.init(g)
	for _, c := range cells {
		tr.cell(c.i, c.j)
	}
	curves := tr.chains()
	for _, c := range centres {
		if cut, ok := cutCurve(m, c); ok {
			curves = append(curves, cut)
		}
	}
	return curves, nil
}

// edge identifies a finest-lattice edge: from vertex (i, j) to (i+1, j)
// when horizontal, to (i, j+1) when vertical.
type edge uint64

func hEdge(i, j int) edge { return edge(latticeKey(i, j) << 1) }
func vEdge(i, j int) edge { return edge(latticeKey(i, j)<<1 | 1) }

// tracer collects marching-squares segments between edge crossings.
type tracer struct {
	g     *grid
	segs  [][2]edge
	byEdg map[edge][]int // segments touching each edge
	pt    map[edge][2]float64
}

func (t *tracer) init(g *grid) {
	t.g = g
	t.byEdg = make(map[edge][]int)
	t.pt = make(map[edge][2]float64)
}

func (t *tracer) add(a, b edge) {
	k := len(t.segs)
	t.segs = append(t.segs, [2]edge{a, b})
	t.byEdg[a] = append(t.byEdg[a], k)
	t.byEdg[b] = append(t.byEdg[b], k)
}

// cell adds the zero-contour segments of finest cell (i, j).
func (t *tracer) cell(i, j int) {
	g := t.g
	d00, d10, d11, d01 := g.at(i, j), g.at(i+1, j), g.at(i+1, j+1), g.at(i, j+1)
	for _, d := range [4]float64{d00, d10, d11, d01} {
		if math.IsNaN(d) || math.IsInf(d, 0) {
			return
		}
	}
	p00, p10, p11, p01 := d00 >= 0, d10 >= 0, d11 >= 0, d01 >= 0
	bottom, right, top, left := hEdge(i, j), vEdge(i+1, j), hEdge(i, j+1), vEdge(i, j)
	var cross []edge
	if p00 != p10 {
		cross = append(cross, bottom)
	}
	if p10 != p11 {
		cross = append(cross, right)
	}
	if p11 != p01 {
		cross = append(cross, top)
	}
	if p01 != p00 {
		cross = append(cross, left)
	}
	switch len(cross) {
	case 2:
		t.add(cross[0], cross[1])
	case 4:
		x, y := g.pos(i, j)
		pc := detA(g.m, x+g.h/2, y+g.h/2) >= 0
		if pc == p00 {
			// The centre joins the corners of p00's sign: the contour
			// cuts off the other two corners.
			t.add(bottom, right) // around (i+1, j)
			t.add(top, left)     // around (i, j+1)
		} else {
			t.add(left, bottom) // around (i, j)
			t.add(right, top)   // around (i+1, j+1)
		}
	}
}

// point returns the polished crossing on edge e.
func (t *tracer) point(e edge) (x, y float64) {
	if p, ok := t.pt[e]; ok {
		return p[0], p[1]
	}
	g := t.g
	k := uint64(e) >> 1
	i, j := int(k>>32), int(int32(uint32(k)))
	x0, y0 := g.pos(i, j)
	di, dj := 1, 0
	if e&1 == 1 {
		di, dj = 0, 1
	}
	dx, dy := float64(di)*g.h, float64(dj)*g.h
	da, db := g.at(i, j), g.at(i+di, j+dj)
	u := polishEdge(func(u float64) float64 { return detA(g.m, x0+u*dx, y0+u*dy) }, da, db)
	x, y = x0+u*dx, y0+u*dy
	t.pt[e] = [2]float64{x, y}
	return x, y
}

// polishEdge finds u in [0, 1] with f(u) = 0 given f(0) = fa and f(1) = fb
// of opposite signs, by the Illinois method (Dowell & Jarratt 1971, BIT 11,
// 168), to a bracket of 1e-14.
func polishEdge(f func(float64) float64, fa, fb float64) float64 {
	a, b := 0.0, 1.0
	side := 0
	for it := 0; it < 100 && b-a > 1e-14; it++ {
		c := (a*fb - b*fa) / (fb - fa)
		if !(c > a && c < b) {
			c = (a + b) / 2
		}
		fc := f(c)
		if fc == 0 {
			return c
		}
		if (fc < 0) == (fb < 0) {
			b, fb = c, fc
			if side == -1 {
				fa /= 2
			}
			side = -1
		} else {
			a, fa = c, fc
			if side == 1 {
				fb /= 2
			}
			side = 1
		}
	}
	if math.Abs(fa) < math.Abs(fb) {
		return a
	}
	return b
}

// chains joins the segments into polylines, classifies and maps them.
func (t *tracer) chains() []Curve {
	used := make([]bool, len(t.segs))
	// next returns the unused segment sharing edge e, other than k.
	next := func(e edge, k int) int {
		for _, s := range t.byEdg[e] {
			if s != k && !used[s] {
				return s
			}
		}
		return -1
	}
	var curves []Curve
	for start := range t.segs {
		if used[start] {
			continue
		}
		used[start] = true
		first, last := t.segs[start][0], t.segs[start][1]
		fwd := []edge{first, last}
		closed := false
		for k := start; ; {
			n := next(last, k)
			if n < 0 {
				break
			}
			used[n] = true
			s := t.segs[n]
			if s[0] == last {
				last = s[1]
			} else {
				last = s[0]
			}
			k = n
			if last == first {
				closed = true
				break
			}
			fwd = append(fwd, last)
		}
		if !closed {
			// Extend backwards from the first edge.
			var back []edge
			for k, e := start, first; ; {
				n := next(e, k)
				if n < 0 {
					break
				}
				used[n] = true
				s := t.segs[n]
				if s[0] == e {
					e = s[1]
				} else {
					e = s[0]
				}
				k = n
				back = append(back, e)
			}
			for l, r := 0, len(back)-1; l < r; l, r = l+1, r-1 {
				back[l], back[r] = back[r], back[l]
			}
			fwd = append(back, fwd...)
		}
		curves = append(curves, t.curve(fwd, closed))
	}
	return curves
}

func (t *tracer) curve(edges []edge, closed bool) Curve {
	m := t.g.m
	c := Curve{Closed: closed}
	n := len(edges)
	c.Image = Polyline{X: make([]float64, n), Y: make([]float64, n)}
	c.Source = Polyline{X: make([]float64, n), Y: make([]float64, n)}
	votes := 0
	for k, e := range edges {
		x, y := t.point(e)
		ax, ay := m.Deflect(x, y)
		c.Image.X[k], c.Image.Y[k] = x, y
		c.Source.X[k], c.Source.Y[k] = x-ax, y-ay
		hxx, hxy, hyy := m.Hessian(x, y)
		kappa := (hxx + hyy) / 2
		gamma := math.Hypot((hxx-hyy)/2, hxy)
		if math.Abs(1-kappa-gamma) < math.Abs(1-kappa+gamma) {
			votes++
		} else {
			votes--
		}
	}
	if votes < 0 {
		c.Kind = Radial
	}
	return c
}

// cutSamples is the number of points on a cut.
const cutSamples = 512

// cutCurve returns the cut of a singular centre with bounded deflection.
func cutCurve(m Mass, c Centre) (Curve, bool) {
	if singularity(m, c) != boundedSingular {
		return Curve{}, false
	}
	cv := Curve{Kind: Cut, Closed: true,
		Image:  Polyline{X: []float64{c.X}, Y: []float64{c.Y}},
		Source: Polyline{X: make([]float64, cutSamples), Y: make([]float64, cutSamples)},
	}
	for k := 0; k < cutSamples; k++ {
		s, co := math.Sincos(2 * math.Pi * float64(k) / cutSamples)
		x, y := c.X+singularProbe*co, c.Y+singularProbe*s
		ax, ay := m.Deflect(x, y)
		cv.Source.X[k], cv.Source.Y[k] = x-ax, y-ay
	}
	return cv, true
}
