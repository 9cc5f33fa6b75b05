package probe

import (
	"errors"
	"math"
	"runtime"
	"sync"

	"gonum.org/v1/gonum/optimize"

	"deflect/uv"
)

// Rows are the unflagged visibilities of one or more datasets side by side,
// with the base model (the best fit without the feature) and what the point
// template of the direct test needs at each row.
type Rows struct {
	U, V []float64    // wavelengths
	Data []complex128 // Jy
	Base []complex128 // base model, Jy
	W    []float64    // weights 1/σ², Jy⁻²
	// Freq is the row frequency in Hz, Dish the antenna diameter in metres
	// (0: no primary beam) and Scale the dataset's flux scale.
	Freq, Dish, Scale []float64
	// Time is the time stamp in s (NaN when the table had none) and Set the
	// index of the dataset the row came from.
	Time []float64
	Set  []int
	// Labels names the datasets.
	Labels []string
	// RefFreq (Hz) and Alpha give the spectral scaling (ν/RefFreq)^Alpha of
	// the point template, so that fluxes from different frequencies compare;
	// RefFreq 0 disables it.
	RefFreq, Alpha float64
}

// Add appends the unflagged rows of d with base model visibilities base
// (one per row of d) and flux scale scale.
func (r *Rows) Add(d *uv.Dataset, base []complex128, scale float64) {
	set := len(r.Labels)
	r.Labels = append(r.Labels, d.Meta.Label)
	for k := 0; k < d.Len(); k++ {
		if d.Flagged(k) {
			continue
		}
		r.U = append(r.U, d.U[k])
		r.V = append(r.V, d.V[k])
		r.Data = append(r.Data, complex(d.Re[k], d.Im[k]))
		b := complex128(0)
		if base != nil {
			b = base[k]
		}
		r.Base = append(r.Base, b)
		r.W = append(r.W, d.Weight[k])
		r.Freq = append(r.Freq, d.FreqAt(k))
		r.Dish = append(r.Dish, d.Meta.Dish)
		r.Scale = append(r.Scale, scale)
		t := math.NaN()
		if d.Time != nil {
			t = d.Time[k]
		}
		r.Time = append(r.Time, t)
		r.Set = append(r.Set, set)
	}
}

// Len returns the number of rows.
func (r *Rows) Len() int { return len(r.U) }

// Subset returns the rows whose indices keep selects, sharing nothing with r.
func (r *Rows) Subset(keep func(k int) bool) *Rows {
	s := &Rows{Labels: r.Labels, RefFreq: r.RefFreq, Alpha: r.Alpha}
	for k := range r.U {
		if !keep(k) {
			continue
		}
		s.U, s.V = append(s.U, r.U[k]), append(s.V, r.V[k])
		s.Data, s.Base = append(s.Data, r.Data[k]), append(s.Base, r.Base[k])
		s.W = append(s.W, r.W[k])
		s.Freq, s.Dish, s.Scale = append(s.Freq, r.Freq[k]), append(s.Dish, r.Dish[k]), append(s.Scale, r.Scale[k])
		s.Time, s.Set = append(s.Time, r.Time[k]), append(s.Set, r.Set[k])
	}
	return s
}

// amp returns the real amplitude of the point template of unit flux at
// (x, y) for row k: flux scale × primary beam × spectral factor.
func (r *Rows) amp(k int, x, y float64) float64 {
	a := r.Scale[k]
	if r.Dish[k] > 0 {
		a *= uv.NewPrimaryBeam(r.Dish[k], r.Freq[k]).At(x, y)
	}
	if r.RefFreq > 0 && r.Alpha != 0 && r.Freq[k] > 0 {
		a *= math.Pow(r.Freq[k]/r.RefFreq, r.Alpha)
	}
	return a
}

// normal returns the two sums of the linear least-squares flux of a point
// source at (x, y) in the residual visibilities data − base:
//
//	b = Σ_k w_k Re(t_k* r_k),  a = Σ_k w_k |t_k|²,
//	t_k = A_k exp(−2πi (u_k l + v_k m)),  r_k = d_k − base_k,
//
// so that the flux is F = b/a and, the noise of each part being 1/√w_k,
// its standard deviation exactly a^−½.
func (r *Rows) normal(x, y float64) (b, a float64) {
	l, m := x/uv.ArcsecPerRadian, y/uv.ArcsecPerRadian
	for k := range r.U {
		amp := r.amp(k, x, y)
		s, c := math.Sincos(-2 * math.Pi * (r.U[k]*l + r.V[k]*m))
		res := r.Data[k] - r.Base[k]
		// t* r with t = amp (c + i s): Re = amp (c Re r + s Im r).
		b += r.W[k] * amp * (c*real(res) + s*imag(res))
		a += r.W[k] * amp * amp
	}
	return b, a
}

// Flux is a fitted point-source flux and its 1σ error in Jy.
type Flux struct {
	Value float64 `json:"flux_jy"`
	Err   float64 `json:"err_jy"`
}

// SNR returns Value/Err.
func (f Flux) SNR() float64 { return f.Value / f.Err }

// FluxAt returns the least-squares flux of a point source at (x, y) arcsec
// fitted to the residual visibilities, with its exact error
//
//	F = Σ w Re(t* r) / Σ w |t|²,   σ_F = (Σ_k w_k |t_k|²)^−½,
//
// |t_k| the primary beam, spectral factor and flux scale of row k, the sums
// counting the real and imaginary parts together (χ² = Σ w |r − F t|²).
func (r *Rows) FluxAt(x, y float64) Flux {
	b, a := r.normal(x, y)
	return Flux{Value: b / a, Err: 1 / math.Sqrt(a)}
}

// Direct is the result of the direct test.
type Direct struct {
	// X, Y is the best position within the search radius (arcsec) and
	// Flux the point-source flux fitted there.
	X    float64 `json:"x_arcsec"`
	Y    float64 `json:"y_arcsec"`
	Flux Flux    `json:"flux"`
	SNR  float64 `json:"snr"`
	// Fixed is the flux at the probed position itself, where the fit is
	// linear and its error exact; FixedSNR its signal-to-noise ratio and
	// FixedP the one-sided Gaussian p-value of a flux at least as large
	// under the null hypothesis of no source, ½ erfc(S/N / √2).
	Fixed    Flux    `json:"fixed_flux"`
	FixedSNR float64 `json:"fixed_snr"`
	FixedP   float64 `json:"fixed_p_value"`
}

// DirectTest fits a point source to the residual visibilities of r at
// (x0, y0) and, for radius > 0, at the position within radius of it of
// largest signal-to-noise ratio F/σ_F = b/√a (positive flux: a lensed image
// cannot be negative; there Δχ² = b²/a is largest too): a grid search with steps of
// step arcsec (radius/6 when step ≤ 0), refined by a Nelder–Mead simplex on
// the exact visibilities.
func DirectTest(r *Rows, x0, y0, radius, step float64) (*Direct, error) {
	if r.Len() == 0 {
		return nil, errors.New("probe: no visibilities")
	}
	fx := r.FluxAt(x0, y0)
	out := &Direct{X: x0, Y: y0, Flux: fx, SNR: fx.SNR(), Fixed: fx, FixedSNR: fx.SNR(),
		FixedP: 0.5 * math.Erfc(fx.SNR()/math.Sqrt2)}
	if radius <= 0 {
		return out, nil
	}
	if step <= 0 {
		step = radius / 6
	}
	type pt struct{ x, y, d float64 }
	var pts []pt
	n := int(math.Ceil(radius / step))
	for j := -n; j <= n; j++ {
		for i := -n; i <= n; i++ {
			x, y := x0+float64(i)*step, y0+float64(j)*step
			if (x-x0)*(x-x0)+(y-y0)*(y-y0) <= radius*radius {
				pts = append(pts, pt{x: x, y: y})
			}
		}
	}
	var wg sync.WaitGroup
	next := make(chan int)
	for range runtime.GOMAXPROCS(0) {
		wg.Go(func() {
			for i := range next {
				b, a := r.normal(pts[i].x, pts[i].y)
				pts[i].d = b / math.Sqrt(a)
			}
		})
	}
	for i := range pts {
		next <- i
	}
	close(next)
	wg.Wait()
	best := 0
	for i := range pts {
		if pts[i].d > pts[best].d {
			best = i
		}
	}
	// Refine: maximise the S/N inside the disc.
	obj := func(p []float64) float64 {
		dx, dy := p[0]-x0, p[1]-y0
		if dx*dx+dy*dy > radius*radius {
			return math.Inf(1)
		}
		b, a := r.normal(p[0], p[1])
		return -b / math.Sqrt(a)
	}
	res, _ := optimize.Minimize(optimize.Problem{Func: obj}, []float64{pts[best].x, pts[best].y},
		&optimize.Settings{FuncEvaluations: 200}, &optimize.NelderMead{SimplexSize: step / 2})
	bx, by := pts[best].x, pts[best].y
	if res != nil && res.F < -pts[best].d { // a hit evaluation cap still leaves a valid best point
		bx, by = res.X[0], res.X[1]
	}
	f := r.FluxAt(bx, by)
	out.X, out.Y, out.Flux, out.SNR = bx, by, f, f.SNR()
	return out, nil
}
