package nufft

import (
	"testing"

	"gonum.org/v1/gonum/dsp/fourier"
)

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
