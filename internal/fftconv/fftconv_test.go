package fftconv

import (
	"math"
	"math/rand/v2"
	"testing"
)

func TestGoodSize(t *testing.T) {
	// 5-smooth ("regular") numbers, from memory: 1 2 3 4 5 6 8 9 10 12 15
	// 16 18 20 24 25 27 30 32 ...
	for _, tc := range []struct{ n, want int }{
		{1, 1}, {7, 8}, {11, 12}, {13, 15}, {17, 18}, {26, 27}, {31, 32}, {339, 360}, {513, 540},
	} {
		if got := GoodSize(tc.n); got != tc.want {
			t.Errorf("GoodSize(%d) = %d, want %d", tc.n, got, tc.want)
		}
	}
}

func TestConvMatchesDirectSum(t *testing.T) {
	// The FFT convolution equals the direct double sum (the definition) to
	// 1e-12 of the output's scale, for odd, even and prime box sides and a
	// non-symmetric kernel spanning every offset.
	rng := rand.New(rand.NewPCG(1, 1))
	for _, tc := range []struct {
		name   string
		nx, ny int
	}{
		{"1x1", 1, 1},
		{"7x5", 7, 5},
		{"16x16", 16, 16},
		{"13x31", 13, 31},
		{"40x23", 40, 23},
	} {
		t.Run(tc.name, func(t *testing.T) {
			nx, ny := tc.nx, tc.ny
			kt := make([]float64, (2*nx-1)*(2*ny-1))
			for q := range kt {
				kt[q] = rng.NormFloat64()
			}
			kern := func(di, dj int) float64 { return kt[(dj+ny-1)*(2*nx-1)+di+nx-1] }
			c := New(nx, ny, kern)
			src := make([]float64, nx*ny)
			for q := range src {
				src[q] = rng.NormFloat64()
			}
			got := c.Apply(nil, src)
			var scale float64
			for j := range ny {
				for i := range nx {
					var s float64
					for j2 := range ny {
						for i2 := range nx {
							s += kern(i-i2, j-j2) * src[j2*nx+i2]
						}
					}
					want := s
					scale = max(scale, math.Abs(want))
					if d := math.Abs(got[j*nx+i] - want); d > 1e-12*float64(nx*ny) {
						t.Fatalf("(%d, %d): FFT %v, direct %v", i, j, got[j*nx+i], want)
					}
				}
			}
			// A clone gives the same, bit for bit.
			cl := c.Clone().Apply(nil, src)
			for q := range cl {
				if cl[q] != got[q] {
					t.Fatalf("clone's result differs at %d", q)
				}
			}
			// In place gives the same.
			in := append([]float64(nil), src...)
			c.Apply(in, in)
			for q := range in {
				if in[q] != got[q] {
					t.Fatalf("in-place result differs at %d", q)
				}
			}
		})
	}
}

func BenchmarkConv(b *testing.B) {
	for _, n := range []int{64, 128, 180} {
		b.Run("box="+itoa(n), func(b *testing.B) {
			c := New(n, n, func(di, dj int) float64 { return math.Exp(-float64(di*di+dj*dj) / 50) })
			src := make([]float64, n*n)
			for q := range src {
				src[q] = float64(q % 7)
			}
			dst := make([]float64, n*n)
			b.ReportAllocs()
			for b.Loop() {
				c.Apply(dst, src)
			}
		})
	}
}

func itoa(n int) string {
	if n == 0 {
		return "0"
	}
	var s []byte
	for ; n > 0; n /= 10 {
		s = append([]byte{byte('0' + n%10)}, s...)
	}
	return string(s)
}
