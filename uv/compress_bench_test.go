package uv

import (
	"fmt"
	"math/rand/v2"
	"testing"
)

func benchCompressed(b *testing.B, n, rows int) *Compressed {
	rnd := rand.New(rand.NewPCG(1, 1))
	g := Grid{N: n, Pixel: 0.03}
	d := simDataset(rnd, rows, g, 300e9)
	cs, err := Compress(d, g, CompressOptions{})
	if err != nil {
		b.Fatal(err)
	}
	return cs[0]
}

// BenchmarkChi2Compressed times one compressed χ² for a model filling the
// N×N grid, for a model whose support is a 128² box inside 256², and for
// 10⁴ against 10⁶ compressed visibilities (the cost must not change).
func BenchmarkChi2Compressed(b *testing.B) {
	rnd := rand.New(rand.NewPCG(2, 2))
	run := func(name string, c *Compressed, img []float64) {
		c.Chi2(img) // fill the cache of the beam's FFT for this box size
		b.Run(name, func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				c.Chi2(img)
			}
		})
	}
	for _, n := range []int{128, 256, 512} {
		c := benchCompressed(b, n, 10000)
		run(fmt.Sprintf("full/N=%d", n), c, randomImage(rnd, c.Grid()))
	}
	for _, rows := range []int{10000, 1000000} {
		c := benchCompressed(b, 256, rows)
		run(fmt.Sprintf("box128in256/vis=%d", rows), c, supportImage(rnd, c.Grid(), 64, 192, 70, 198))
		run(fmt.Sprintf("full/N=256/vis=%d", rows), c, randomImage(rnd, c.Grid()))
	}
}

// BenchmarkChi2Grad times χ² with its gradient (one full-grid convolution).
func BenchmarkChi2Grad(b *testing.B) {
	rnd := rand.New(rand.NewPCG(2, 3))
	c := benchCompressed(b, 256, 10000)
	img := supportImage(rnd, c.Grid(), 64, 192, 70, 198)
	grad := make([]float64, len(img))
	c.Chi2Grad(grad, img)
	b.ReportAllocs()
	for b.Loop() {
		c.Chi2Grad(grad, img)
	}
}

// BenchmarkChi2Visibilities times the uncompressed path: NUFFT model
// visibilities (ε = 1e-6, N = 256) and the χ² sum over the visibilities.
func BenchmarkChi2Visibilities(b *testing.B) {
	rnd := rand.New(rand.NewPCG(2, 4))
	g := Grid{N: 256, Pixel: 0.03}
	img := randomImage(rnd, g)
	for _, rows := range []int{10000, 100000, 1000000} {
		d := simDataset(rnd, rows, g, 300e9)
		p, err := NewPredictor(g, NewPrimaryBeam(12, 300e9), d.U, d.V, 1e-6)
		if err != nil {
			b.Fatal(err)
		}
		model := make([]complex128, rows)
		b.Run(fmt.Sprintf("vis=%d", rows), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				p.Predict(model, img)
				Chi2Visibilities(d, model)
			}
		})
	}
}

// BenchmarkAccumulate times the compression of 10⁶ rows onto a 256² grid
// (D and B by NUFFT type 1 at ε = 1e-12).
func BenchmarkAccumulate(b *testing.B) {
	rnd := rand.New(rand.NewPCG(2, 5))
	g := Grid{N: 256, Pixel: 0.03}
	d := simDataset(rnd, 1000000, g, 300e9)
	b.ReportAllocs()
	for b.Loop() {
		if _, err := CompressStream(d.Chunks(1<<16), g, CompressOptions{}); err != nil {
			b.Fatal(err)
		}
	}
}
