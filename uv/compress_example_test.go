package uv_test

import (
	"fmt"
	"math"
	"math/rand/v2"

	"deflect/uv"
)

// A point source of 30 mJy observed with 2000 noisy visibilities: the
// compressed χ² of the true sky is about 2 per visibility (real and
// imaginary parts), that of an empty sky much larger.
func ExampleCompressed() {
	rnd := rand.New(rand.NewPCG(1, 1))
	g := uv.Grid{N: 32, Pixel: 0.1}
	const n, sigma = 2000, 0.01 // σ per part, Jy
	d := &uv.Dataset{Meta: uv.Meta{Label: "example", Freq: 300e9, Dish: 12},
		U: make([]float64, n), V: make([]float64, n), Re: make([]float64, n), Im: make([]float64, n), Weight: make([]float64, n)}
	sx, sy := g.XY(20, 12) // the source sits on pixel (20, 12)
	for k := range n {
		d.U[k], d.V[k] = 4e5*(2*rnd.Float64()-1), 4e5*(2*rnd.Float64()-1)
		d.Weight[k] = 1 / (sigma * sigma)
	}
	beam := uv.NewPrimaryBeam(12, 300e9)
	vis := uv.PredictPoints(nil, d.U, d.V, beam, []float64{sx}, []float64{sy}, []float64{0.03})
	for k, v := range vis {
		d.Re[k] = real(v) + sigma*rnd.NormFloat64()
		d.Im[k] = imag(v) + sigma*rnd.NormFloat64()
	}

	cs, err := uv.Compress(d, g, uv.CompressOptions{})
	if err != nil {
		fmt.Println(err)
		return
	}
	c := cs[0]
	sky := make([]float64, g.Len())
	sky[12*g.N+20] = 0.03 // Jy per pixel; the primary beam is applied by Chi2
	chi2 := c.Chi2(sky)
	fmt.Printf("groups: %d, visibilities: %d\n", len(cs), c.Count())
	fmt.Printf("χ²/visibility, true sky: %.2f\n", chi2/float64(c.Count()))
	fmt.Printf("χ²/visibility, empty sky: %.2f\n", c.Chi2(make([]float64, g.Len()))/float64(c.Count()))
	fmt.Printf("ln L = %.1f\n", -chi2/2+c.LogNorm())
	fmt.Printf("image noise: %.3g mJy/beam\n", 1000/math.Sqrt(c.SumWeights()))
	// Output:
	// groups: 1, visibilities: 2000
	// χ²/visibility, true sky: 1.95
	// χ²/visibility, empty sky: 10.73
	// ln L = 12792.4
	// image noise: 0.224 mJy/beam
}
