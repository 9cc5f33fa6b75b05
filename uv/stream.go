package uv

import (
	"errors"
	"fmt"
	"io"
	"math"
	"sort"

	"deflect/uv/nufft"
)

// DefaultMaxFracBandwidth is the default full fractional bandwidth
// (ν_max − ν_min)/ν of one frequency group, 0.35%.
//
// Grouping error. A group is compressed with each row's own (u, v) in
// wavelengths, so D and B are exact; what a group fixes is the frequency at
// which the model is evaluated: the primary beam A and the source spectrum
// S ∝ ν^α are taken at the group's reference frequency ν_g instead of each
// row's ν = ν_g(1 + ε). To first order in ε,
//
//	ν^α = ν_g^α (1 + α ε),
//	A_ν(r) = exp(−4 ln 2 r² ν²/(ν_g² θ_g²)) = A_g(r) (1 − 8 ln 2 (r/θ_g)² ε),
//
// θ_g the beam FWHM at ν_g, so the model visibility of a source at radius r
// is wrong by
//
//	|δV|/|V| = |α − 8 ln 2 (r/θ_g)²| |ε| ≤ K |ε|,  K = |α| + 8 ln 2 (r/θ_g)²
//
// (the two terms cancel in part for rising spectra, α > 0, and add for
// falling ones), and the χ² by Σ_k w_k |δV_k|² ≈ K² ⟨ε²⟩ Σ_k w_k |V_k|².
// With ν_g the geometric mean of the group's extremes, |ε| ≤ Δν/(2ν).
// Taking |α| ≤ 4 (the steep spectra of dust emission) and sources inside the half-power radius
// (r ≤ θ/2, so 8 ln 2 (r/θ)² ≤ 1.39) gives K ≤ 5.4, and Δν/ν = 0.35% keeps
// the error of every model visibility below 5.4 × 0.175% = 0.95% of its
// amplitude: below 1% of the noise wherever a single visibility's
// signal-to-noise ratio is at most 1, the usual case for channelised
// continuum data of lensed galaxies. The error grows linearly with Δν/ν (and
// the χ² error quadratically), so data of higher per-visibility
// signal-to-noise ratio s need MaxFracBandwidth ≤ 0.0035/s.
const DefaultMaxFracBandwidth = 0.0035

// DefaultCompressTol is the NUFFT tolerance of the compressed products.
const DefaultCompressTol = 1e-12

// CompressOptions are the settings of a compression. The zero value gives
// the documented defaults.
type CompressOptions struct {
	// Tol is the relative tolerance of the NUFFT that accumulates D and B;
	// zero means DefaultCompressTol. It must not exceed 1e-12.
	Tol float64
	// Exact computes D and B by the direct DFT instead of the NUFFT: exact,
	// but N²·(rows) work; for small problems and tests.
	Exact bool
	// MaxFracBandwidth is the largest full fractional bandwidth of a
	// frequency group; zero means DefaultMaxFracBandwidth, a negative value
	// puts every row in one group.
	MaxFracBandwidth float64
	// Dish overrides the dataset's dish diameter (metres) when positive.
	Dish float64
	// NoPrimaryBeam sets A = 1 whatever the dish.
	NoPrimaryBeam bool
	// BatchRows is the number of rows buffered per NUFFT pass; zero means
	// 1<<20. Memory is O(N²) per group plus about 72 bytes per buffered
	// row (40 in fixed-size blocks, recycled, 32 in the transform's input)
	// and up to one partly filled 320 kB block per group.
	BatchRows int
}

// Accumulator builds the compressed products of one dataset chunk by chunk,
// so that memory stays O(N²) per frequency group plus one chunk and one
// batch whatever the number of rows. Feed it with Add and finish with
// Result.
type Accumulator struct {
	grid   Grid
	opt    CompressOptions
	meta   Meta
	seen   bool
	groups map[int]*groupAcc
	// pending counts the buffered rows of all groups; past 2·BatchRows
	// every group is flushed, so memory stays bounded with many groups.
	pending int
	// free holds emptied row blocks for reuse.
	free []*rowBlock
	plan *nufft.Plan
	bufX []float64
	bufY []float64
	bufC []complex128
	out  []complex128
}

// blockRows is the number of rows of one rowBlock (320 kB), small enough
// that a partly filled block per frequency group costs little.
const blockRows = 1 << 13

// rowBlock holds up to blockRows buffered rows of one group, in the form
// the transforms need: NUFFT coordinates, weighted (and phase-shifted)
// data, and weights. Blocks are fixed in size and recycled, so buffering
// allocates nothing once the pool is as large as the largest batch.
type rowBlock struct {
	n    int
	x, y [blockRows]float64
	c    [blockRows]complex128
	w    [blockRows]float64
}

type groupAcc struct {
	fmin, fmax float64
	count      int
	sumW       float64
	dataTerm   float64
	logNorm    float64
	dirty      []float64
	beam       []float64
	// pending rows, flushed into dirty and beam by the NUFFT
	blocks []*rowBlock
	npend  int
}

// NewAccumulator returns an Accumulator for the grid g.
func NewAccumulator(g Grid, opt CompressOptions) (*Accumulator, error) {
	if g.N < 2 || g.N%2 != 0 || !(g.Pixel > 0) {
		return nil, fmt.Errorf("uv: grid %d×%d of %g arcsec pixels: want N even ≥ 2 and a positive pixel", g.N, g.N, g.Pixel)
	}
	if opt.Tol == 0 {
		opt.Tol = DefaultCompressTol
	}
	if opt.Tol > 1e-12 {
		return nil, fmt.Errorf("uv: compression tolerance %g: want ≤ 1e-12", opt.Tol)
	}
	if opt.MaxFracBandwidth == 0 {
		opt.MaxFracBandwidth = DefaultMaxFracBandwidth
	}
	if opt.BatchRows <= 0 {
		opt.BatchRows = 1 << 20
	}
	a := &Accumulator{grid: g, opt: opt, groups: make(map[int]*groupAcc)}
	if !opt.Exact {
		p, err := nufft.NewPlan(2*g.N, opt.Tol)
		if err != nil {
			return nil, err
		}
		a.plan = p
	}
	return a, nil
}

// unknownFreq is the group of rows without a frequency.
const unknownFreq = math.MinInt

// groupOf returns the frequency group of a row at freq Hz: bins of equal
// width in ln ν, ln(1 + MaxFracBandwidth) wide.
func (a *Accumulator) groupOf(freq float64) int {
	if !(freq > 0) {
		return unknownFreq
	}
	if a.opt.MaxFracBandwidth < 0 {
		return 0
	}
	return int(math.Floor(math.Log(freq) / math.Log1p(a.opt.MaxFracBandwidth)))
}

// Add accumulates the unflagged rows of the chunk d. Every chunk must carry
// the same Meta (label, dish) as the first.
func (a *Accumulator) Add(d *Dataset) error {
	if !a.seen {
		a.meta, a.seen = d.Meta, true
	}
	n := d.Len()
	xyScale := 2 * math.Pi * a.grid.Pixel / ArcsecPerRadian // as nufftPoints
	shifted := a.grid.X0 != 0 || a.grid.Y0 != 0
	for k := range n {
		if d.Flagged(k) {
			continue
		}
		w := d.Weight[k]
		if !(w > 0) || math.IsInf(w, 0) {
			return fmt.Errorf("uv: %s row %d of chunk: weight %v, want a positive finite number", d.Meta.Label, k, w)
		}
		f := d.FreqAt(k)
		gi := a.groupOf(f)
		g := a.groups[gi]
		if g == nil {
			n := a.grid.N
			g = &groupAcc{fmin: math.Inf(1), fmax: math.Inf(-1),
				dirty: make([]float64, n*n), beam: make([]float64, (2*n-1)*(2*n-1))}
			a.groups[gi] = g
		}
		if f > 0 {
			g.fmin, g.fmax = min(g.fmin, f), max(g.fmax, f)
		}
		re, im := d.Re[k], d.Im[k]
		g.count++
		g.sumW += w
		g.dataTerm += w * (re*re + im*im)
		g.logNorm += math.Log(w) - math.Log(2*math.Pi)
		b := a.block(g)
		i := b.n
		b.n++
		u, v := d.U[k], d.V[k]
		b.x[i], b.y[i] = -xyScale*u, xyScale*v
		c := complex(w*re, w*im)
		if shifted {
			s, co := math.Sincos(offsetPhase(a.grid, u, v))
			c *= complex(co, s)
		}
		b.c[i], b.w[i] = c, w
		g.npend++
		a.pending++
		if g.npend >= a.opt.BatchRows {
			a.flush(g)
		}
		if a.pending >= 2*a.opt.BatchRows {
			for _, g := range a.groups {
				a.flush(g)
			}
		}
	}
	return nil
}

// block returns a block of g with room for one more row, taking it from
// the pool (or allocating one) when the last is full.
func (a *Accumulator) block(g *groupAcc) *rowBlock {
	if nb := len(g.blocks); nb > 0 && g.blocks[nb-1].n < blockRows {
		return g.blocks[nb-1]
	}
	var b *rowBlock
	if nf := len(a.free); nf > 0 {
		b, a.free = a.free[nf-1], a.free[:nf-1]
	} else {
		b = new(rowBlock)
	}
	b.n = 0
	g.blocks = append(g.blocks, b)
	return b
}

// flush adds the pending rows of g to its D and B and returns its blocks
// to the pool.
func (a *Accumulator) flush(g *groupAcc) {
	m := g.npend
	if m == 0 {
		return
	}
	a.pending -= m
	if cap(a.bufX) < m {
		// Grow geometrically up to one batch, then reuse.
		c := min(max(m, 2*cap(a.bufX)), max(m, a.opt.BatchRows))
		a.bufX, a.bufY, a.bufC = make([]float64, c), make([]float64, c), make([]complex128, c)
	}
	x, y, cbuf := a.bufX[:m], a.bufY[:m], a.bufC[:m]
	off := 0
	for _, b := range g.blocks {
		copy(x[off:], b.x[:b.n])
		copy(y[off:], b.y[:b.n])
		copy(cbuf[off:], b.c[:b.n])
		off += b.n
	}
	n := a.grid.N
	n2 := 2 * n
	if a.out == nil {
		a.out = make([]complex128, n2*n2)
	}
	type1 := func(c []complex128) []complex128 {
		if a.opt.Exact {
			return nufft.DFT1(a.out, c, x, y, n2, +1)
		}
		return a.plan.Type1(a.out, c, +1)
	}
	if a.plan != nil {
		a.plan.SetPoints(x, y)
	}
	// Modes m = i − N/2 of the N grid sit at i + N/2 of the 2N grid.
	out := type1(cbuf)
	for j := range n {
		src := out[(j+n/2)*n2+n/2:]
		dst := g.dirty[j*n : (j+1)*n]
		for i := range dst {
			dst[i] += real(src[i])
		}
	}
	off = 0
	for _, b := range g.blocks {
		for i, w := range b.w[:b.n] {
			cbuf[off+i] = complex(w, 0)
		}
		off += b.n
	}
	out = type1(cbuf)
	nb := 2*n - 1
	for dj := range nb {
		src := out[(dj+1)*n2+1:]
		dst := g.beam[dj*nb : (dj+1)*nb]
		for di := range dst {
			dst[di] += real(src[di])
		}
	}
	a.free = append(a.free, g.blocks...)
	clear(g.blocks)
	g.blocks, g.npend = g.blocks[:0], 0
}

// Result finishes the accumulation and returns one Compressed per
// frequency group, in increasing frequency. It fails when no unflagged row
// was added.
func (a *Accumulator) Result() ([]*Compressed, error) {
	if len(a.groups) == 0 {
		return nil, errors.New("uv: no unflagged visibilities to compress")
	}
	keys := make([]int, 0, len(a.groups))
	for k := range a.groups {
		keys = append(keys, k)
	}
	sort.Ints(keys)
	dish := a.meta.Dish
	if a.opt.Dish > 0 {
		dish = a.opt.Dish
	}
	n := a.grid.N
	var res []*Compressed
	for _, key := range keys {
		g := a.groups[key]
		a.flush(g)
		c := &Compressed{grid: a.grid, label: a.meta.Label, count: g.count, sumW: g.sumW,
			dataTerm: g.dataTerm, logNorm: g.logNorm, dirty: g.dirty, beam: g.beam}
		if g.fmax > 0 {
			c.fmin, c.fmax = g.fmin, g.fmax
			c.freq = math.Sqrt(g.fmin * g.fmax)
		}
		if !a.opt.NoPrimaryBeam {
			c.pb = NewPrimaryBeam(dish, c.freq)
		}
		c.gain = c.pb.Gains(nil, a.grid)
		// B is even; make it so to rounding, so that its FFT is real.
		nb := 2*n - 1
		for k := range len(c.beam) / 2 {
			s := 0.5 * (c.beam[k] + c.beam[nb*nb-1-k])
			c.beam[k], c.beam[nb*nb-1-k] = s, s
		}
		res = append(res, c)
	}
	a.groups = nil
	return res, nil
}

// CompressStream reads every chunk of r and returns the compressed
// products of its frequency groups.
func CompressStream(r ChunkReader, g Grid, opt CompressOptions) ([]*Compressed, error) {
	a, err := NewAccumulator(g, opt)
	if err != nil {
		return nil, err
	}
	var chunk Dataset
	for {
		err := r.Next(&chunk)
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, err
		}
		if err := a.Add(&chunk); err != nil {
			return nil, err
		}
	}
	return a.Result()
}

// Compress returns the compressed products of the in-memory dataset d.
func Compress(d *Dataset, g Grid, opt CompressOptions) ([]*Compressed, error) {
	return CompressStream(d.Chunks(1<<20), g, opt)
}
