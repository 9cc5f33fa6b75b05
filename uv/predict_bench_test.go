package uv

import (
	"fmt"
	"math/rand/v2"
	"os"
	"testing"
)

// BenchmarkDFT times PredictDFT, the exact model visibilities of a sky grid
// by the direct sum, for 10⁴, 10⁵ and 10⁶ visibilities, and reports the
// cost per visibility×pixel term (ns/term, cpu-ns/term) from which the
// NUFFT's speed-up follows. The direct sum at 10⁶ visibilities on 256²
// pixels is 6.6·10¹⁰ terms, minutes per operation, so the larger cases use
// smaller grids; set DEFLECT_LONG_TESTS=1 to add the 10⁶ × 256² case
// itself. The sum is separable: per visibility 2N exponentials by
// math.Sincos, then N² real multiply–adds, so small grids cost more per
// term (about 1.4 ns at 256², 2.8 ns at 32², one core, measured on a
// loaded machine): the small-grid figures overstate the cost at 256².
func BenchmarkDFT(b *testing.B) {
	rnd := rand.New(rand.NewPCG(3, 1))
	cases := []struct{ rows, n int }{{10000, 256}, {100000, 64}, {1000000, 32}}
	if os.Getenv("DEFLECT_LONG_TESTS") == "1" {
		cases = append(cases, struct{ rows, n int }{1000000, 256})
	}
	for _, tc := range cases {
		g := Grid{N: tc.n, Pixel: 0.03}
		u, v := randomCoverage(rnd, tc.rows, g)
		img := randomImage(rnd, g)
		beam := NewPrimaryBeam(12, 300e9)
		dst := make([]complex128, tc.rows)
		terms := float64(tc.rows) * float64(g.Len())
		b.Run(fmt.Sprintf("vis=%d/N=%d", tc.rows, tc.n), func(b *testing.B) {
			b.ReportAllocs()
			cpu := cpuSeconds()
			for b.Loop() {
				PredictDFT(dst, g, beam, img, u, v)
			}
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/terms, "ns/term")
			b.ReportMetric((cpuSeconds()-cpu)*1e9/float64(b.N)/terms, "cpu-ns/term")
		})
	}
}
