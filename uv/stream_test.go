package uv

import (
	"io"
	"math"
	"math/rand/v2"
	"os"
	"runtime"
	"testing"
)

// synthReader yields rows rows of random coverage in chunks of size,
// generating them on the fly so that nothing but one chunk is ever held.
type synthReader struct {
	rnd        *rand.Rand
	rows, size int
	umax       float64
	done       int
}

func (r *synthReader) Next(dst *Dataset) error {
	if r.done >= r.rows {
		return io.EOF
	}
	n := min(r.size, r.rows-r.done)
	r.done += n
	dst.Meta = Meta{Label: "synth", Freq: 300e9, Dish: 12}
	for _, col := range []*[]float64{&dst.U, &dst.V, &dst.Re, &dst.Im, &dst.Weight} {
		if cap(*col) < n {
			*col = make([]float64, n)
		}
		*col = (*col)[:n]
	}
	dst.Flag, dst.FreqIndex, dst.Freqs = nil, nil, nil
	for k := range n {
		dst.U[k] = r.umax * (2*r.rnd.Float64() - 1)
		dst.V[k] = r.umax * (2*r.rnd.Float64() - 1)
		dst.Re[k], dst.Im[k] = r.rnd.NormFloat64(), r.rnd.NormFloat64()
		dst.Weight[k] = 1
	}
	return nil
}

// heapDuring runs fn while sampling the live heap and returns its peak
// above the heap before fn.
func heapDuring(t *testing.T, fn func(sample func())) uint64 {
	runtime.GC()
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	base, peak := ms.HeapAlloc, ms.HeapAlloc
	fn(func() {
		runtime.ReadMemStats(&ms)
		peak = max(peak, ms.HeapAlloc)
	})
	return peak - base
}

type sampledReader struct {
	r      ChunkReader
	sample func()
	chunks int
}

func (s *sampledReader) Next(dst *Dataset) error {
	s.chunks++
	if s.chunks%16 == 0 {
		s.sample()
	}
	return s.r.Next(dst)
}

// Streaming keeps memory at O(N²) plus a chunk and a batch, whatever the
// number of rows: 10⁶ rows (40 MB if they were held) in chunks of 4096 and
// batches of 16384 on a 64² grid stay under 16 MB of heap (the grid
// products are 0.2 MB, the NUFFT plan on 128² about 2 MB, a batch about
// 1.5 MB). With
// DEFLECT_LONG_TESTS=1, 10⁸ rows on a 256² grid with the default batch stay
// under 1 GB.
func TestStreamingMemory(t *testing.T) {
	cases := []struct {
		name       string
		rows, n    int
		chunk, bat int
		limit      uint64
	}{{"1e6 rows", 1000000, 64, 4096, 16384, 16 << 20}}
	if os.Getenv("DEFLECT_LONG_TESTS") == "1" {
		cases = append(cases, struct {
			name       string
			rows, n    int
			chunk, bat int
			limit      uint64
		}{"1e8 rows", 100000000, 256, 1 << 16, 0, 1 << 30})
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			g := Grid{N: tc.n, Pixel: 0.05}
			var cs []*Compressed
			peak := heapDuring(t, func(sample func()) {
				r := &sampledReader{r: &synthReader{rnd: rand.New(rand.NewPCG(1, 1)), rows: tc.rows, size: tc.chunk,
					umax: ArcsecPerRadian / (2 * g.Pixel)}, sample: sample}
				var err error
				cs, err = CompressStream(r, g, CompressOptions{BatchRows: tc.bat})
				if err != nil {
					t.Fatal(err)
				}
				sample()
			})
			if cs[0].Count() != tc.rows {
				t.Errorf("%d rows compressed, want %d", cs[0].Count(), tc.rows)
			}
			if peak > tc.limit {
				t.Errorf("peak heap %d MB above the start, want ≤ %d MB", peak>>20, tc.limit>>20)
			}
			t.Logf("%s: peak heap %.1f MB", tc.name, float64(peak)/(1<<20))
		})
	}
}

// With many groups and tiny batches (flushes per group and of all groups
// at once), the products equal those of one batch per group to 1e-12.
func TestStreamingManyGroups(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 6))
	g := Grid{N: 16, Pixel: 0.3}
	d := simDataset(rnd, 400, g, 0)
	d.Freqs = []float64{2.00e12, 2.01e12, 2.02e12, 2.03e12, 2.04e12}
	d.FreqIndex = make([]uint32, d.Len())
	for k := range d.FreqIndex {
		d.FreqIndex[k] = uint32(rnd.IntN(len(d.Freqs)))
	}
	a, err := Compress(d, g, CompressOptions{})
	if err != nil {
		t.Fatal(err)
	}
	b, err := CompressStream(d.Chunks(11), g, CompressOptions{BatchRows: 7})
	if err != nil {
		t.Fatal(err)
	}
	if len(a) != 5 || len(b) != 5 {
		t.Fatalf("%d and %d groups, want 5", len(a), len(b))
	}
	for gi := range a {
		for j := range g.N {
			for i := range g.N {
				if x, y := a[gi].DirtyAt(i, j), b[gi].DirtyAt(i, j); math.Abs(x-y) > 1e-12*a[gi].SumWeights() {
					t.Fatalf("group %d D(%d,%d): %v vs %v", gi, i, j, x, y)
				}
				if x, y := a[gi].BeamAt(i-8, j-8), b[gi].BeamAt(i-8, j-8); math.Abs(x-y) > 1e-12*a[gi].SumWeights() {
					t.Fatalf("group %d B(%d,%d): %v vs %v", gi, i-8, j-8, x, y)
				}
			}
		}
	}
}

// The grouping error bound of DefaultMaxFracBandwidth: within one default
// group, a source at the half-power radius with spectral index α has model
// visibilities wrong by K·|ε| to first order when the primary beam and the
// spectrum are taken at the group frequency, K = α − 8 ln 2 (r/θ)² (the two
// terms have opposite signs for α > 0), so |δV|/|V| ≤ (|α| + 1.39)·Δν/(2ν)
// = 0.95% for |α| ≤ 4. Checked for α = ±4 against the exact ratio, to 2%
// of the first-order value (second-order terms).
func TestGroupingErrorBound(t *testing.T) {
	const dish = 12.0
	a, _ := NewAccumulator(Grid{N: 2, Pixel: 1}, CompressOptions{})
	// The default group containing 300 GHz: its edges in ln ν.
	gi := a.groupOf(300e9)
	w := math.Log1p(DefaultMaxFracBandwidth)
	lo, hi := math.Exp(float64(gi)*w), math.Exp(float64(gi+1)*w)
	ng := math.Sqrt(lo * hi)
	r := NewPrimaryBeam(dish, ng).FWHM / 2
	bound := (4 + 8*math.Ln2*0.25) * (hi - lo) / ng / 2
	if bound > 0.0095 {
		t.Errorf("bound %.5f, want ≤ 0.0095", bound)
	}
	for _, alpha := range []float64{4, -4} {
		model := func(nu float64) float64 { return NewPrimaryBeam(dish, nu).At(r, 0) * math.Pow(nu/ng, alpha) }
		var worst float64
		for k := 0; k <= 100; k++ {
			nu := lo + (hi-lo)*float64(k)/100
			worst = max(worst, math.Abs(model(nu)/model(ng)-1))
		}
		first := math.Abs(alpha-8*math.Ln2*0.25) * (hi - lo) / ng / 2
		if math.Abs(worst/first-1) > 0.02 || worst > 1.02*bound {
			t.Errorf("α = %v: largest relative model error %.5f, first order %.5f, bound %.5f", alpha, worst, first, bound)
		}
	}
}

// The Accumulator's buffers are fixed in size and recycled. Per buffered
// row of a batch it allocates 40 bytes of blocks and 32 of transform input,
// and the NUFFT's point sort 52 more (124 in all; when the buffers grew by
// append it was about 300); bound 140. Past one batch nothing grows: 16
// batches allocate at most 1 MB more than 4 (12 more flushes, each with
// the point sort's small per-call allocations).
func TestAccumulateAllocationBounded(t *testing.T) {
	g := Grid{N: 32, Pixel: 0.1}
	alloc := func(rows, batch int) uint64 {
		r := &synthReader{rnd: rand.New(rand.NewPCG(1, 2)), rows: rows, size: 4096,
			umax: ArcsecPerRadian / (2 * g.Pixel)}
		var ms runtime.MemStats
		runtime.ReadMemStats(&ms)
		before := ms.TotalAlloc
		if _, err := CompressStream(r, g, CompressOptions{BatchRows: batch}); err != nil {
			t.Fatal(err)
		}
		runtime.ReadMemStats(&ms)
		return ms.TotalAlloc - before
	}
	const small, large = 16384, 262144
	perRow := float64(alloc(large, large)-alloc(small, small)) / (large - small)
	t.Logf("%.1f bytes allocated per buffered row", perRow)
	if perRow > 140 {
		t.Errorf("%.1f bytes allocated per buffered row, want ≤ 140", perRow)
	}
	four, sixteen := alloc(4*small, small), alloc(16*small, small)
	t.Logf("allocated %.2f MB for 4 batches, %.2f MB for 16", float64(four)/(1<<20), float64(sixteen)/(1<<20))
	if sixteen > four+1<<20 {
		t.Errorf("allocated %d bytes for 16 batches, %d for 4: want at most 1 MB more", sixteen, four)
	}
}
