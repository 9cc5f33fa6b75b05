package uv

import (
	"errors"
	"fmt"
	"io"
	"math"

	"deflect/uv/nufft"
)

// maxWeightCells is the largest side of the uv grid of gridded weights, as
// in ImagingWeights.
const maxWeightCells = 1 << 13

// WeightGrid holds the natural weights of a dataset summed in the cells of
// the uv grid of an image grid (cells of 1/(N·Pixel) wavelengths), each
// visibility counted at (u, v) and at its Hermitian conjugate (−u, −v), as
// in ImagingWeights. It is the first pass of uniform and Briggs weighting
// over data read in chunks: feed every chunk to Add, then hand the grid to
// NewDirtyAccumulator for the second pass. Memory is that of the grid, at
// most 8191² cells (512 MiB); the grid grows as longer baselines arrive.
type WeightGrid struct {
	grid  Grid
	du    float64   // cell width, wavelengths
	m     int       // cells −m … m along each axis
	cells []float64 // (2m+1)², row iv + m, column iu + m
	sumW  float64   // Σ w over the rows added (each row once)
	rows  int
}

// NewWeightGrid returns an empty WeightGrid for the image grid g.
func NewWeightGrid(g Grid) (*WeightGrid, error) {
	if g.N < 2 || g.N%2 != 0 || !(g.Pixel > 0) || math.IsInf(g.Pixel, 0) {
		return nil, fmt.Errorf("uv: grid %d×%d of %g arcsec pixels: want N even ≥ 2 and a positive pixel", g.N, g.N, g.Pixel)
	}
	return &WeightGrid{grid: g, du: ArcsecPerRadian / (float64(g.N) * g.Pixel), cells: make([]float64, 1)}, nil
}

// cellIndex returns the rounded cell coordinates of (u, v) wavelengths.
func (wg *WeightGrid) cellIndex(u, v float64) (iu, iv int) {
	return int(math.Round(u / wg.du)), int(math.Round(v / wg.du))
}

// grow makes room for cells −m … m, keeping the sums already made.
func (wg *WeightGrid) grow(m int) error {
	if m <= wg.m {
		return nil
	}
	if side := 2*m + 1; side > maxWeightCells {
		return fmt.Errorf("uv: uv grid of %d² cells for uniform weighting: the pixel (%g arcsec) is far coarser than the resolution", side, wg.grid.Pixel)
	}
	// Grow geometrically so that a table sorted by baseline length does not
	// copy the grid once per chunk.
	nm := min(max(m, 2*wg.m), (maxWeightCells-1)/2)
	ns, old := 2*nm+1, 2*wg.m+1
	cells := make([]float64, ns*ns)
	for r := range old {
		copy(cells[(r+nm-wg.m)*ns+nm-wg.m:], wg.cells[r*old:(r+1)*old])
	}
	wg.m, wg.cells = nm, cells
	return nil
}

// Add sums the weights of the unflagged rows of the chunk d. A weight that
// is not a positive finite number is an error.
func (wg *WeightGrid) Add(d *Dataset) error {
	n := d.Len()
	m := wg.m
	for k := range n {
		if d.Flagged(k) {
			continue
		}
		if err := checkWeight(d, k); err != nil {
			return err
		}
		iu, iv := wg.cellIndex(d.U[k], d.V[k])
		m = max(m, abs(iu), abs(iv))
	}
	if err := wg.grow(m); err != nil {
		return err
	}
	side := 2*wg.m + 1
	for k := range n {
		if d.Flagged(k) {
			continue
		}
		w := d.Weight[k]
		iu, iv := wg.cellIndex(d.U[k], d.V[k])
		wg.cells[(iv+wg.m)*side+iu+wg.m] += w
		wg.cells[(-iv+wg.m)*side-iu+wg.m] += w
		wg.sumW += w
		wg.rows++
	}
	return nil
}

// Cell returns the gridded weight W_cell of the cell holding (u, v)
// wavelengths, Jy⁻²: zero outside the cells seen so far.
func (wg *WeightGrid) Cell(u, v float64) float64 {
	iu, iv := wg.cellIndex(u, v)
	if abs(iu) > wg.m || abs(iv) > wg.m {
		return 0
	}
	return wg.cells[(iv+wg.m)*(2*wg.m+1)+iu+wg.m]
}

// briggsF2 returns f² of ImagingWeights' Briggs formula for robustness R.
func (wg *WeightGrid) briggsF2(robust float64) float64 {
	var s2 float64
	for _, v := range wg.cells {
		s2 += v * v
	}
	f := 5 * math.Pow(10, -robust)
	return f * f / (s2 / (2 * wg.sumW))
}

func checkWeight(d *Dataset, k int) error {
	if w := d.Weight[k]; !(w > 0) || math.IsInf(w, 0) {
		return fmt.Errorf("uv: %s row %d of chunk: weight %v, want a positive finite number", d.Meta.Label, k, w)
	}
	return nil
}

// DirtyAccumulator builds the dirty image and dirty beam of a dataset read
// in chunks, with the result of MakeDirty on the whole dataset (equal to
// rounding): memory stays that of two NUFFT plans of the grid, O(N²), plus
// one chunk, whatever the number of rows. Natural weighting needs one pass
// over the data; uniform and Briggs weighting need the gridded weights of
// a first pass (a WeightGrid) and then a second.
type DirtyAccumulator struct {
	grid    Grid
	opt     ImagingOptions
	wg      *WeightGrid
	f2      float64
	img, bm *nufft.Plan
	x, y    []float64
	cI, cB  []complex128

	count               int
	sumW, sumIW, sumIW2 float64
}

// NewDirtyAccumulator returns a DirtyAccumulator for the grid g. With
// uniform or Briggs weighting, wg must hold the gridded weights of every
// row that will be added (the same rows, on the same grid); with natural
// weighting it is ignored and may be nil.
func NewDirtyAccumulator(g Grid, opt ImagingOptions, wg *WeightGrid) (*DirtyAccumulator, error) {
	if g.N < 2 || g.N%2 != 0 || !(g.Pixel > 0) || math.IsInf(g.Pixel, 0) {
		return nil, fmt.Errorf("uv: grid %d×%d of %g arcsec pixels: want N even ≥ 2 and a positive pixel", g.N, g.N, g.Pixel)
	}
	if opt.Tol == 0 {
		opt.Tol = 1e-9
	}
	a := &DirtyAccumulator{grid: g, opt: opt}
	switch opt.Weighting {
	case Natural:
	case Uniform, Briggs:
		if wg == nil {
			return nil, fmt.Errorf("uv: %v weighting needs the gridded weights of a first pass", opt.Weighting)
		}
		if wg.grid.N != g.N || wg.grid.Pixel != g.Pixel {
			return nil, fmt.Errorf("uv: gridded weights for a %d×%d grid of %g arcsec, image grid %d×%d of %g arcsec",
				wg.grid.N, wg.grid.N, wg.grid.Pixel, g.N, g.N, g.Pixel)
		}
		a.wg = wg
		if opt.Weighting == Briggs {
			a.f2 = wg.briggsF2(opt.Robust)
		}
	default:
		return nil, fmt.Errorf("uv: unknown weighting %v", opt.Weighting)
	}
	var err error
	if a.img, err = nufft.NewPlan(g.N, opt.Tol); err != nil {
		return nil, err
	}
	if a.bm, err = nufft.NewPlan(g.N, opt.Tol); err != nil {
		return nil, err
	}
	return a, nil
}

// Add accumulates the unflagged rows of the chunk d.
func (a *DirtyAccumulator) Add(d *Dataset) error {
	a.x, a.y = a.x[:0], a.y[:0]
	a.cI, a.cB = a.cI[:0], a.cB[:0]
	g := a.grid
	shift := g.X0 != 0 || g.Y0 != 0
	p := 2 * math.Pi * g.Pixel / ArcsecPerRadian
	for k := range d.Len() {
		if d.Flagged(k) {
			continue
		}
		if err := checkWeight(d, k); err != nil {
			return err
		}
		w := d.Weight[k]
		wt := w
		switch a.opt.Weighting {
		case Uniform, Briggs:
			wc := a.wg.Cell(d.U[k], d.V[k])
			if !(wc > 0) {
				return fmt.Errorf("uv: %s row %d of chunk: (u, v) = (%g, %g) λ is in no cell of the gridded weights; the two passes read different rows",
					d.Meta.Label, k, d.U[k], d.V[k])
			}
			if a.opt.Weighting == Uniform {
				wt /= wc
			} else {
				wt /= 1 + wc*a.f2
			}
		}
		a.count++
		a.sumW += w
		a.sumIW += wt
		a.sumIW2 += wt * wt / w
		a.x = append(a.x, -p*d.U[k])
		a.y = append(a.y, p*d.V[k])
		c := complex(d.Re[k]*wt, d.Im[k]*wt)
		if shift {
			s, co := math.Sincos(offsetPhase(g, d.U[k], d.V[k]))
			c *= complex(co, s)
		}
		a.cI = append(a.cI, c)
		a.cB = append(a.cB, complex(wt, 0))
	}
	if len(a.x) == 0 {
		return nil
	}
	a.img.SetPoints(a.x, a.y)
	a.img.AddType1(a.cI)
	a.bm.SetPoints(a.x, a.y)
	a.bm.AddType1(a.cB)
	return nil
}

// Result returns the dirty image and beam of every row added so far, as
// MakeDirty would, with the fitted clean beam. It fails when no unflagged
// row was added.
func (a *DirtyAccumulator) Result() (*DirtyImage, error) {
	if a.count == 0 {
		return nil, errors.New("uv: no unflagged visibilities to image")
	}
	g := a.grid
	im := a.img.FinishType1(nil, +1)
	bm := a.bm.FinishType1(nil, +1)
	out := &DirtyImage{Grid: g, Image: make([]float64, g.Len()), Beam: make([]float64, g.Len()),
		Noise: math.Sqrt(a.sumIW2) / a.sumIW, NaturalNoise: 1 / math.Sqrt(a.sumW),
		Count: a.count, SumWeights: a.sumW, Weighting: a.opt.Weighting, Robust: a.opt.Robust}
	for k := range out.Image {
		out.Image[k] = real(im[k]) / a.sumIW
		out.Beam[k] = real(bm[k]) / a.sumIW
	}
	cb, err := FitCleanBeam(out.Beam, g.N, g.Pixel)
	if err != nil {
		return nil, err
	}
	out.Clean = cb
	return out, nil
}

// MakeDirtyStream returns the dirty image and beam of a dataset read in
// chunks: the same result as MakeDirty on the whole dataset, in O(N²)
// memory plus a chunk. open must return a fresh reader over the same rows
// each time it is called: once for natural weighting, twice for uniform
// and Briggs (gridded weights, then the image). Readers that are also
// io.Closers are closed.
func MakeDirtyStream(open func() (ChunkReader, error), g Grid, opt ImagingOptions) (*DirtyImage, error) {
	var wg *WeightGrid
	if opt.Weighting == Uniform || opt.Weighting == Briggs {
		var err error
		if wg, err = NewWeightGrid(g); err != nil {
			return nil, err
		}
		if err := eachChunk(open, wg.Add); err != nil {
			return nil, err
		}
	}
	a, err := NewDirtyAccumulator(g, opt, wg)
	if err != nil {
		return nil, err
	}
	if err := eachChunk(open, a.Add); err != nil {
		return nil, err
	}
	if wg != nil && a.count != wg.rows {
		return nil, fmt.Errorf("uv: the imaging pass read %d unflagged rows, the weighting pass %d", a.count, wg.rows)
	}
	return a.Result()
}

// eachChunk opens a reader and calls add on every chunk.
func eachChunk(open func() (ChunkReader, error), add func(*Dataset) error) (err error) {
	r, err := open()
	if err != nil {
		return err
	}
	if c, ok := r.(io.Closer); ok {
		defer func() {
			if cerr := c.Close(); err == nil {
				err = cerr
			}
		}()
	}
	var chunk Dataset
	for {
		err := r.Next(&chunk)
		if err == io.EOF {
			return nil
		}
		if err != nil {
			return err
		}
		if err := add(&chunk); err != nil {
			return err
		}
	}
}
