package nufft

import (
	"fmt"
	"math"
	"math/rand/v2"
	"syscall"
	"testing"
	"time"

	"gonum.org/v1/gonum/dsp/fourier"
)

// cpuClock measures the process's CPU time, so that benchmarks on a shared
// machine can report CPU milliseconds per operation beside wall time.
type cpuClock struct{ start time.Duration }

func cpuNow() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

func startCPU() cpuClock { return cpuClock{cpuNow()} }

// report adds the metric cpu-ms/op: CPU time of all threads per operation.
func (c cpuClock) report(b *testing.B) {
	b.ReportMetric(float64(cpuNow()-c.start)/1e6/float64(b.N), "cpu-ms/op")
}

func benchPoints(m int) (x, y []float64) {
	rnd := rand.New(rand.NewPCG(1, 1))
	x = make([]float64, m)
	y = make([]float64, m)
	for k := range x {
		x[k] = (rnd.Float64()*2 - 1) * math.Pi
		y[k] = (rnd.Float64()*2 - 1) * math.Pi
	}
	return x, y
}

// BenchmarkNUFFT times Type2 (grid → points) and Type1 (points → grid) on a
// 256² grid with the points already set (SetPoints is timed separately).
func BenchmarkNUFFT(b *testing.B) {
	const n = 256
	rnd := rand.New(rand.NewPCG(1, 1))
	f := randomComplex(rnd, n*n)
	for _, m := range []int{100_000, 1_000_000} {
		x, y := benchPoints(m)
		c := randomComplex(rnd, m)
		for _, tol := range []float64{1e-6, 1e-9} {
			p, err := NewPlan(n, tol)
			if err != nil {
				b.Fatal(err)
			}
			p.SetPoints(x, y)
			dst := make([]complex128, m)
			grid := make([]complex128, n*n)
			b.Run(fmt.Sprintf("type2/M=%d/n=%d/tol=%g", m, n, tol), func(b *testing.B) {
				b.ReportAllocs()
				clk := startCPU()
				for b.Loop() {
					p.Type2(dst, f, -1)
				}
				clk.report(b)
			})
			b.Run(fmt.Sprintf("type1/M=%d/n=%d/tol=%g", m, n, tol), func(b *testing.B) {
				b.ReportAllocs()
				clk := startCPU()
				for b.Loop() {
					p.Type1(grid, c, 1)
				}
				clk.report(b)
			})
			b.Run(fmt.Sprintf("setpoints/M=%d/n=%d/tol=%g", m, n, tol), func(b *testing.B) {
				b.ReportAllocs()
				clk := startCPU()
				for b.Loop() {
					p.SetPoints(x, y)
				}
				clk.report(b)
			})
		}
	}
}

// BenchmarkDFT times the direct sums and reports the cost per point×pixel
// term, from which the NUFFT speed-up at 10⁶ points × 256² follows.
func BenchmarkDFT(b *testing.B) {
	rnd := rand.New(rand.NewPCG(1, 1))
	for _, tc := range []struct{ m, n int }{{10_000, 256}, {100_000, 32}} {
		x, y := benchPoints(tc.m)
		f := randomComplex(rnd, tc.n*tc.n)
		fr := make([]float64, tc.n*tc.n)
		for i := range fr {
			fr[i] = real(f[i])
		}
		c := randomComplex(rnd, tc.m)
		dst := make([]complex128, tc.m)
		grid := make([]complex128, tc.n*tc.n)
		terms := float64(tc.m) * float64(tc.n*tc.n)
		var clk cpuClock
		report := func(b *testing.B) {
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/terms, "ns/term")
			b.ReportMetric(float64(cpuNow()-clk.start)/float64(b.N)/terms, "cpu-ns/term")
		}
		b.Run(fmt.Sprintf("type2/M=%d/n=%d", tc.m, tc.n), func(b *testing.B) {
			b.ReportAllocs()
			clk = startCPU()
			for b.Loop() {
				DFT2(dst, f, tc.n, x, y, -1)
			}
			report(b)
		})
		b.Run(fmt.Sprintf("type2real/M=%d/n=%d", tc.m, tc.n), func(b *testing.B) {
			b.ReportAllocs()
			clk = startCPU()
			for b.Loop() {
				DFT2Real(dst, fr, tc.n, x, y, -1)
			}
			report(b)
		})
		b.Run(fmt.Sprintf("type1/M=%d/n=%d", tc.m, tc.n), func(b *testing.B) {
			b.ReportAllocs()
			clk = startCPU()
			for b.Loop() {
				DFT1(grid, c, x, y, tc.n, 1)
			}
			report(b)
		})
	}
}

// BenchmarkFFT2 times the 2-D complex FFT (the NUFFT's fine grid for n = 256
// is 512²).
func BenchmarkFFT2(b *testing.B) {
	rnd := rand.New(rand.NewPCG(1, 1))
	for _, n := range []int{256, 512, 1024} {
		a := randomComplex(rnd, n*n)
		t := NewFFT2(n)
		b.Run(fmt.Sprint(n), func(b *testing.B) {
			b.ReportAllocs()
			clk := startCPU()
			for b.Loop() {
				t.Forward(a, a)
			}
			clk.report(b)
		})
	}
}

// BenchmarkGonumReal2D times a plain gonum real-input 512² FFT (rows with
// fourier.FFT, then the n/2+1 complex columns with fourier.CmplxFFT): the
// issue's calibration figure for this machine (about 5.7 ms unloaded), so
// that timings taken on a busy machine can be scaled.
func BenchmarkGonumReal2D(b *testing.B) {
	const n = 512
	f := fourier.NewFFT(n)
	cf := fourier.NewCmplxFFT(n)
	a := make([]float64, n*n)
	for i := range a {
		a[i] = float64(i % 7)
	}
	out := make([]complex128, n*(n/2+1))
	col := make([]complex128, n)
	clk := startCPU()
	for b.Loop() {
		for r := range n {
			f.Coefficients(out[r*(n/2+1):(r+1)*(n/2+1)], a[r*n:(r+1)*n])
		}
		for c := range n/2 + 1 {
			for r := range n {
				col[r] = out[r*(n/2+1)+c]
			}
			cf.Coefficients(col, col)
			for r := range n {
				out[r*(n/2+1)+c] = col[r]
			}
		}
	}
	clk.report(b)
}
