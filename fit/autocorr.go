package fit

import (
	"math"

	"gonum.org/v1/gonum/dsp/fourier"
)

// DefaultAutocorrWindow is the constant c of the automated windowing in
// AutocorrTime.
const DefaultAutocorrWindow = 5.0

// AutocorrTime estimates the integrated autocorrelation time
//
//	τ = 1 + 2 Σ_{t=1}^{M} ρ(t)
//
// of one parameter from several chains of equal length (series[w][i] is
// step i of chain w, e.g. one walker of an ensemble). The normalised
// autocorrelation function ρ of each chain is computed by FFT (zero padded
// to a length ≥ 2n, so without wrap-around) about the chain's own
// mean, and the functions are averaged over chains before summing. The
// window M is the smallest M ≥ c τ(M) (Sokal's automated windowing; c = 5
// when c ≤ 0). ok is false when no such window exists within the chains,
// that is when the chains are too short for a reliable estimate; τ is then
// the estimate at the longest lag.
//
// References:
//   - Sokal, A. 1997, in Functional Integration, NATO ASI Series B 361,
//     p. 131, §3 (eqs. 3.19, 3.20 and the windowing procedure).
//   - Goodman, J. & Weare, J. 2010, Comm. App. Math. Comp. Sci. 5, 65, §5.
func AutocorrTime(series [][]float64, c float64) (tau float64, ok bool) {
	if len(series) == 0 || len(series[0]) < 2 {
		panic("fit: AutocorrTime needs at least one series of ≥ 2 steps")
	}
	var a acf
	rho := a.mean(series)
	return windowTau(rho, c)
}

// acf holds reusable work space for autocorrelation functions.
type acf struct {
	fft   *fourier.FFT
	pad   []float64
	coeff []complex128
	power []complex128
	seq   []float64
	sum   []float64
}

// mean returns the chain-averaged normalised autocorrelation function
// ρ(t), t = 0 … n−1. Each chain's power spectrum is normalised by its
// variance before summing, so that one inverse transform gives the mean of
// the normalised functions. The returned slice is reused by the next call.
func (a *acf) mean(series [][]float64) []float64 {
	n := len(series[0])
	m := fftSize(2 * n)
	if a.fft == nil || a.fft.Len() != m {
		a.fft = fourier.NewFFT(m)
		a.pad = make([]float64, m)
		a.seq = make([]float64, m)
		a.coeff = make([]complex128, m/2+1)
		a.power = make([]complex128, m/2+1)
	}
	clear(a.power)
	used := 0
	for _, x := range series {
		if len(x) != n {
			panic("fit: autocorrelation series of unequal length")
		}
		var mu float64
		for _, v := range x {
			mu += v
		}
		mu /= float64(n)
		clear(a.pad)
		var ss float64
		for i, v := range x {
			a.pad[i] = v - mu
			ss += a.pad[i] * a.pad[i]
		}
		if !(ss > 0) {
			// A chain that never moved carries no information on ρ.
			continue
		}
		a.coeff = a.fft.Coefficients(a.coeff, a.pad)
		// gonum's unnormalised inverse of |X|² is m times the
		// autocovariance sum, m Σ_i x_i x_{i+t}; divide by m Σ x_i².
		norm := 1 / (float64(m) * ss)
		for i, z := range a.coeff {
			a.power[i] += complex((real(z)*real(z)+imag(z)*imag(z))*norm, 0)
		}
		used++
	}
	if cap(a.sum) < n {
		a.sum = make([]float64, n)
	}
	a.sum = a.sum[:n]
	if used == 0 {
		// Constant chains: report ρ ≡ 1 so that τ grows with the window
		// and the caller sees no convergence.
		for t := range a.sum {
			a.sum[t] = 1
		}
		return a.sum
	}
	a.seq = a.fft.Sequence(a.seq, a.power)
	for t := range a.sum {
		a.sum[t] = a.seq[t] / float64(used)
	}
	return a.sum
}

// fftSize returns the smallest 2^a 3^b 5^c ≥ n, a length gonum's FFT
// handles efficiently.
func fftSize(n int) int {
	best := 1
	for best < n {
		best <<= 1
	}
	for p5 := 1; p5 < best; p5 *= 5 {
		for p35 := p5; p35 < best; p35 *= 3 {
			m := p35
			for m < n {
				m <<= 1
			}
			best = min(best, m)
		}
	}
	return best
}

// windowTau applies the automated windowing to ρ.
func windowTau(rho []float64, c float64) (float64, bool) {
	if c <= 0 {
		c = DefaultAutocorrWindow
	}
	tau := 1.0
	for m := 1; m < len(rho); m++ {
		tau += 2 * rho[m]
		if float64(m) >= c*tau {
			return tau, true
		}
	}
	return tau, false
}

// chainTaus returns τ per parameter of an ensemble chain [step][walker][dim]
// from step start on, and whether every estimate had a valid window. The
// parameters are processed in parallel.
func chainTaus(chain [][][]float64, start int, c float64) ([]float64, bool) {
	steps := chain[start:]
	n := len(steps)
	nw := len(steps[0])
	dim := len(steps[0][0])
	taus := make([]float64, dim)
	oks := make([]bool, dim)
	parallelFor(dim, func(d int) {
		series := make([][]float64, nw)
		for w := range series {
			series[w] = make([]float64, n)
		}
		for i, st := range steps {
			for w := range nw {
				series[w][i] = st[w][d]
			}
		}
		var a acf
		taus[d], oks[d] = windowTau(a.mean(series), c)
		if math.IsNaN(taus[d]) {
			oks[d] = false
		}
	})
	for _, ok := range oks {
		if !ok {
			return taus, false
		}
	}
	return taus, true
}
