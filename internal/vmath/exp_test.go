package vmath

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestExp compares Exp with math.Exp (the standard library's, itself
// within an ulp of e^x) at random and special arguments, on the vector
// path and the one-value path.
func TestExp(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	x := []float64{0, -0, 1, -1, 1e-300, -1e-300, math.Ln2 / 2, -math.Ln2 / 2, 0.5, -0.5,
		expLo, expLo + 1e-9, expHi, expHi - 1e-9, -20, -1.6783, 3.7, 700, -700}
	for range 200003 {
		x = append(x, -745+1460*rnd.Float64())
	}
	for range 100000 {
		x = append(x, -30*rnd.Float64())
	}
	for _, vec := range []bool{true, false} {
		if vec && !haveAVX {
			continue
		}
		useAVX = vec
		got := make([]float64, len(x))
		Exp(got, x)
		useAVX = haveAVX
		var worst float64
		for i, v := range x {
			want := math.Exp(v)
			switch {
			case v < expLo:
				want = 0
			case v > expHi:
				want = math.Inf(1)
			}
			if got[i] == want {
				continue
			}
			ulp := math.Nextafter(want, math.Inf(1)) - want
			d := math.Abs(got[i]-want) / ulp
			worst = max(worst, d)
			if !(d <= 2) {
				t.Fatalf("vector %v: Exp(%v) = %v, want %v (%.3g ulp)", vec, v, got[i], want, d)
			}
		}
		t.Logf("vector %v: worst %.2f ulp over %d values", vec, worst, len(x))
	}
	got := make([]float64, 9)
	in := []float64{math.NaN(), math.Inf(1), math.Inf(-1), -800, 800, 0, 1, 2, math.NaN()}
	Exp(got, in)
	if !math.IsNaN(got[0]) || !math.IsInf(got[1], 1) || got[2] != 0 || got[3] != 0 || !math.IsInf(got[4], 1) || got[5] != 1 || !math.IsNaN(got[8]) {
		t.Errorf("special values: Exp(%v) = %v", in, got)
	}
}

func BenchmarkExp(b *testing.B) {
	x := make([]float64, 1024)
	for i := range x {
		x[i] = -10 * float64(i) / 1024
	}
	dst := make([]float64, len(x))
	for _, vec := range []bool{true, false} {
		name := "scalar"
		if vec {
			name = "avx"
			if !haveAVX {
				continue
			}
		}
		b.Run(name, func(b *testing.B) {
			useAVX = vec
			defer func() { useAVX = haveAVX }()
			for b.Loop() {
				Exp(dst, x)
			}
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(len(x)), "ns/value")
		})
	}
}
