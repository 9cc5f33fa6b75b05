package uv

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"
)

// The streamed dirty image and beam equal MakeDirty's on the whole dataset
// to 1e-12 of their peaks (the same sums, spread onto the NUFFT grid in a
// different order), for every weighting, with flagged rows, an offset grid
// and chunks that do not divide the rows evenly; the weights' sums (noise,
// count) are formed in the same order and agree to rounding.
func TestMakeDirtyStreamMatchesMakeDirty(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	g := Grid{N: 48, Pixel: 0.05, X0: 0.2, Y0: -0.15}
	d := simDataset(rnd, 3000, g, 250e9)
	for k := range d.U {
		d.U[k] *= 0.3
		d.V[k] *= 0.3
	}
	// Longest baselines last: the weight grid grows chunk after chunk.
	idx := make([]int, d.Len())
	for k := range idx {
		idx[k] = k
	}
	slices.SortFunc(idx, func(a, b int) int {
		return int(math.Copysign(1, math.Hypot(d.U[a], d.V[a])-math.Hypot(d.U[b], d.V[b])))
	})
	sorted := &Dataset{Meta: d.Meta, Flag: make([]bool, d.Len())}
	for _, k := range idx {
		sorted.U = append(sorted.U, d.U[k])
		sorted.V = append(sorted.V, d.V[k])
		sorted.Re = append(sorted.Re, d.Re[k])
		sorted.Im = append(sorted.Im, d.Im[k])
		sorted.Weight = append(sorted.Weight, d.Weight[k])
		sorted.Flag[len(sorted.U)-1] = d.Flag[k]
	}
	for _, tc := range []struct {
		name string
		opt  ImagingOptions
	}{
		{"natural", ImagingOptions{}},
		{"uniform", ImagingOptions{Weighting: Uniform}},
		{"briggs 0.5", ImagingOptions{Weighting: Briggs, Robust: 0.5}},
		{"briggs -1", ImagingOptions{Weighting: Briggs, Robust: -1}},
	} {
		for _, chunk := range []int{97, 1000, 5000} {
			t.Run(fmt.Sprintf("%s/chunk%d", tc.name, chunk), func(t *testing.T) {
				want, err := MakeDirty(sorted, g, tc.opt)
				if err != nil {
					t.Fatal(err)
				}
				opens := 0
				got, err := MakeDirtyStream(func() (ChunkReader, error) {
					opens++
					return sorted.Chunks(chunk), nil
				}, g, tc.opt)
				if err != nil {
					t.Fatal(err)
				}
				wantOpens := 2
				if tc.opt.Weighting == Natural {
					wantOpens = 1
				}
				if opens != wantOpens {
					t.Errorf("%d passes over the data, want %d", opens, wantOpens)
				}
				for _, c := range []struct {
					name      string
					got, want []float64
				}{{"image", got.Image, want.Image}, {"beam", got.Beam, want.Beam}} {
					peak := 0.0
					for _, v := range c.want {
						peak = math.Max(peak, math.Abs(v))
					}
					for k := range c.want {
						if e := math.Abs(c.got[k] - c.want[k]); e > 1e-12*peak {
							t.Fatalf("chunks of %d: %s pixel %d: %v, MakeDirty %v (|Δ| = %.3g × peak)", chunk, c.name, k, c.got[k], c.want[k], e/peak)
						}
					}
				}
				if got.Count != want.Count || math.Abs(got.Noise-want.Noise) > 1e-14*want.Noise ||
					math.Abs(got.NaturalNoise-want.NaturalNoise) > 1e-14*want.NaturalNoise ||
					math.Abs(got.SumWeights-want.SumWeights) > 1e-14*want.SumWeights {
					t.Errorf("count %d noise %v natural %v Σw %v; MakeDirty %d %v %v %v", got.Count, got.Noise, got.NaturalNoise,
						got.SumWeights, want.Count, want.Noise, want.NaturalNoise, want.SumWeights)
				}
				if math.Abs(got.Clean.BMaj-want.Clean.BMaj) > 1e-9*want.Clean.BMaj ||
					math.Abs(got.Clean.BMin-want.Clean.BMin) > 1e-9*want.Clean.BMin ||
					math.Abs(got.Clean.BPA-want.Clean.BPA) > 1e-6 {
					t.Errorf("clean beam %+v, MakeDirty %+v", got.Clean, want.Clean)
				}
			})
		}
	}
}

// The gridded weights of WeightGrid equal those ImagingWeights divides by:
// W_k·W_cell(k) = w_k for uniform weighting, whatever the growth of the
// grid on the way.
func TestWeightGridCells(t *testing.T) {
	rnd := rand.New(rand.NewPCG(2, 1))
	g := Grid{N: 32, Pixel: 0.1}
	d := simDataset(rnd, 800, g, 300e9)
	wts, err := ImagingWeights(d, g, Uniform, 0)
	if err != nil {
		t.Fatal(err)
	}
	wg, err := NewWeightGrid(g)
	if err != nil {
		t.Fatal(err)
	}
	r := d.Chunks(50)
	var c Dataset
	for r.Next(&c) == nil {
		if err := wg.Add(&c); err != nil {
			t.Fatal(err)
		}
	}
	for k := range d.Len() {
		if d.Flagged(k) {
			if wts[k] != 0 {
				t.Fatalf("flagged row %d has weight %v", k, wts[k])
			}
			continue
		}
		if got := wts[k] * wg.Cell(d.U[k], d.V[k]); math.Abs(got-d.Weight[k]) > 1e-13*d.Weight[k] {
			t.Fatalf("row %d: W·W_cell = %v, want w = %v", k, got, d.Weight[k])
		}
		// The Hermitian conjugate falls in the mirrored cell of equal weight.
		if a, b := wg.Cell(d.U[k], d.V[k]), wg.Cell(-d.U[k], -d.V[k]); a != b {
			t.Fatalf("row %d: cell %v, conjugate cell %v", k, a, b)
		}
	}
	if wg.Cell(1e12, 0) != 0 {
		t.Error("a cell outside the grid has weight")
	}
}

func TestDirtyStreamErrors(t *testing.T) {
	rnd := rand.New(rand.NewPCG(3, 1))
	g := Grid{N: 16, Pixel: 0.1}
	d := simDataset(rnd, 100, g, 300e9)
	if _, err := NewDirtyAccumulator(g, ImagingOptions{Weighting: Uniform}, nil); err == nil || !strings.Contains(err.Error(), "first pass") {
		t.Errorf("uniform without gridded weights: %v", err)
	}
	wg, _ := NewWeightGrid(Grid{N: 32, Pixel: 0.1})
	if _, err := NewDirtyAccumulator(g, ImagingOptions{Weighting: Briggs}, wg); err == nil || !strings.Contains(err.Error(), "gridded weights for a 32×32") {
		t.Errorf("mismatched grids: %v", err)
	}
	if _, err := NewDirtyAccumulator(Grid{N: 15, Pixel: 0.1}, ImagingOptions{}, nil); err == nil {
		t.Error("odd grid accepted")
	}
	a, _ := NewDirtyAccumulator(g, ImagingOptions{}, nil)
	if _, err := a.Result(); err == nil || !strings.Contains(err.Error(), "no unflagged") {
		t.Errorf("empty result: %v", err)
	}
	bad := d.Slice(0, d.Len())
	bad.Weight = slices.Clone(bad.Weight)
	bad.Flag = nil
	bad.Weight[7] = 0
	if err := a.Add(&bad); err == nil || !strings.Contains(err.Error(), "row 7") {
		t.Errorf("zero weight: %v", err)
	}
	// The two passes must read the same rows.
	n := 0
	_, err := MakeDirtyStream(func() (ChunkReader, error) {
		n++
		if n == 1 {
			h := d.Slice(0, 50)
			return h.Chunks(20), nil
		}
		return d.Chunks(20), nil
	}, g, ImagingOptions{Weighting: Uniform})
	if err == nil {
		t.Error("passes over different rows accepted")
	}
	// Too coarse a pixel for the uv grid.
	far := d.Slice(0, 1)
	far.U = []float64{1e9}
	fg, _ := NewWeightGrid(Grid{N: 16, Pixel: 10})
	if err := fg.Add(&far); err == nil || !strings.Contains(err.Error(), "far coarser") {
		t.Errorf("huge uv grid: %v", err)
	}
}

// BenchmarkMakeDirtyStream images 10⁵ and 10⁶ in-memory rows in chunks of
// DefaultChunkRows on a 256² grid: one pass for natural weighting, two for
// uniform.
func BenchmarkMakeDirtyStream(b *testing.B) {
	g := Grid{N: 256, Pixel: 0.05}
	for _, n := range []int{100000, 1000000} {
		d := simDataset(rand.New(rand.NewPCG(1, 1)), n, g, 300e9)
		for k := range d.U { // resolution ≈ 5 pixels
			d.U[k] *= 0.2
			d.V[k] *= 0.2
		}
		for _, w := range []Weighting{Natural, Uniform} {
			b.Run(fmt.Sprintf("%s/rows=%d", w, n), func(b *testing.B) {
				b.ReportAllocs()
				for b.Loop() {
					if _, err := MakeDirtyStream(func() (ChunkReader, error) { return d.Chunks(DefaultChunkRows), nil },
						g, ImagingOptions{Weighting: w}); err != nil {
						b.Fatal(err)
					}
				}
			})
		}
	}
}
