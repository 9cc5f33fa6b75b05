package plots

import (
	"math"
	"math/rand/v2"
)

// gaussImage returns an N×N image of a sum of circular Gaussians (peak,
// centre x, y arcsec, σ arcsec) plus optional noise of rms noise.
func gaussImage(n int, pixel float64, comps [][4]float64, noise float64, rng *rand.Rand) SkyImage {
	im := SkyImage{N: n, Pixel: pixel, Values: make([]float64, n*n)}
	for j := range n {
		for i := range n {
			x, y := im.XY(i, j)
			v := 0.0
			for _, c := range comps {
				dx, dy := x-c[1], y-c[2]
				v += c[0] * math.Exp(-(dx*dx+dy*dy)/(2*c[3]*c[3]))
			}
			if noise > 0 {
				v += noise * rng.NormFloat64()
			}
			im.Values[j*n+i] = v
		}
	}
	return im
}

// ring returns a closed circle of radius r arcsec about (x0, y0).
func ring(x0, y0, r float64, n int) Polyline {
	pl := make(Polyline, n+1)
	for k := range pl {
		s, c := math.Sincos(2 * math.Pi * float64(k) / float64(n))
		pl[k] = Point{X: x0 + r*c, Y: y0 + r*s}
	}
	return pl
}

// astroid returns the four-cusped caustic of an elliptical lens, roughly.
func astroid(a float64, n int) Polyline {
	pl := make(Polyline, n+1)
	for k := range pl {
		s, c := math.Sincos(2 * math.Pi * float64(k) / float64(n))
		pl[k] = Point{X: a * c * c * c, Y: 0.7 * a * s * s * s}
	}
	return pl
}

func dirtyFixture(n int) DirtyImages {
	rng := rand.New(rand.NewPCG(1, 1))
	pix := 0.05
	comps := [][4]float64{{2e-3, 0.4, 0.3, 0.12}, {1.5e-3, -0.5, -0.2, 0.1}, {0.8e-3, 0.1, -0.6, 0.08}}
	// Dirty-image noise is correlated on the beam scale: white noise
	// smoothed by a Gaussian of 2 pixels, rescaled to 50 μJy/beam rms.
	data := gaussImage(n, pix, comps, 0, rng)
	noise := smoothNoise(n, 2, rng)
	for k := range data.Values {
		data.Values[k] += 5e-5 * noise[k]
	}
	model := gaussImage(n, pix, comps[:2], 0, rng)
	res := SkyImage{N: n, Pixel: pix, Values: make([]float64, n*n)}
	for k := range res.Values {
		res.Values[k] = data.Values[k] - model.Values[k]
	}
	return DirtyImages{Data: data, Model: model, Residual: res, Sigma: 5e-5,
		Beam: Beam{Major: 0.3, Minor: 0.18, PA: 30}, Critical: []Polyline{ring(0, 0, 0.55, 128)}}
}

// figureCase is one figure: prepare makes its fixed input of about n pixels
// a side (or the equivalent amount of data) and returns the function that
// draws it, so that benchmarks time the figure, not the fixture.
type figureCase struct {
	name    string
	prepare func(n int) func() (*Figure, error)
}

// build prepares and draws a case.
func (c figureCase) build(n int) (*Figure, error) { return c.prepare(n)() }

var figureCases = []figureCase{
	{"uvcoverage", func(n int) func() (*Figure, error) {
		in := uvFixture(n)
		return func() (*Figure, error) { return UVCoverageFigure(in) }
	}},
	{"visibilities", func(n int) func() (*Figure, error) {
		in := visFixture(n)
		return func() (*Figure, error) { return VisibilityFigure(in) }
	}},
	{"visibilities-ampphase", func(n int) func() (*Figure, error) {
		in := visFixture(n)
		in.AmpPhase = true
		return func() (*Figure, error) { return VisibilityFigure(in) }
	}},
	{"visibilities-faint", func(n int) func() (*Figure, error) {
		in := faintVisFixture(n * 4)
		return func() (*Figure, error) { return VisibilityFigure(in) }
	}},
	{"dirty", func(n int) func() (*Figure, error) {
		in := dirtyFixture(n)
		return func() (*Figure, error) { return DirtyFigure(in) }
	}},
	{"dirty-zoom", func(n int) func() (*Figure, error) {
		in := dirtyFixture(n)
		in.Zoom = &Box{XMin: -1, XMax: 1, YMin: -1, YMax: 1}
		in.Sigma = 0
		return func() (*Figure, error) { return DirtyFigure(in) }
	}},
	{"sky", func(n int) func() (*Figure, error) {
		d := dirtyFixture(n)
		// A Gaussian main lobe of the beam's shape (FWHM Major × Minor at
		// PA) with a negative ring sidelobe,
		// peak 1, on a grid centred at the origin.
		bm := SkyImage{N: n, Pixel: d.Data.Pixel, Values: make([]float64, n*n)}
		for j := range n {
			for i := range n {
				x, y := bm.XY(i, j)
				s, c := math.Sincos(d.Beam.PA * math.Pi / 180)
				r := math.Hypot((x*s+y*c)/d.Beam.Major, (x*c-y*s)/d.Beam.Minor)
				bm.Values[j*n+i] = math.Exp(-4*math.Ln2*r*r) - 0.1*math.Exp(-(r-2)*(r-2))
			}
		}
		zoom := &Box{XMin: -1, XMax: 1, YMin: -1, YMax: 1}
		in := []SkyPanel{
			{Title: "dirty image", Image: d.Data, Scale: 1e3, Unit: "mJy/beam", Beam: d.Beam, Curves: d.Critical, Marks: []Point{{0.4, 0.3}}},
			{Title: "dirty beam", Image: bm, Unit: "dirty beam (peak 1)", Beam: d.Beam, BeamAtCentre: true, Zoom: zoom},
		}
		return func() (*Figure, error) { return SkyFigure(in...) }
	}},
	{"source", func(n int) func() (*Figure, error) {
		in := SourceImage{Image: sourceFixture(n), Unit: "mJy/pixel", Scale: 1e3, Caustics: []Polyline{astroid(0.3, 200)}}
		return func() (*Figure, error) { return SourceFigure(in) }
	}},
	{"source-sigma", func(n int) func() (*Figure, error) {
		s := sourceFixture(n)
		sig := s
		sig.Values = make([]float64, len(s.Values))
		for k, v := range s.Values {
			sig.Values[k] = 2e-5 + 0.1*v
		}
		in := SourceImage{Image: s, Unit: "mJy/pixel", Scale: 1e3, Sigma: &sig, Caustics: []Polyline{astroid(0.3, 200)}}
		return func() (*Figure, error) { return SourceFigure(in) }
	}},
	{"magnification", func(n int) func() (*Figure, error) {
		in := magFixture(n)
		return func() (*Figure, error) { return MagnificationFigure(in) }
	}},
	{"corner", func(n int) func() (*Figure, error) {
		in := cornerFixture(n)
		return func() (*Figure, error) { return CornerFigure(in) }
	}},
	{"trace", func(n int) func() (*Figure, error) {
		in := chainFixture(n)
		return func() (*Figure, error) { return TraceFigure(in) }
	}},
	{"autocorr", func(n int) func() (*Figure, error) {
		in := chainFixture(n)
		return func() (*Figure, error) { return AutocorrFigure(in, 0) }
	}},
	{"probe", func(n int) func() (*Figure, error) {
		in := probeFixture(n)
		return func() (*Figure, error) { return ProbeFigure(in) }
	}},
	{"predict", func(n int) func() (*Figure, error) {
		in := predictFixture(n)
		return func() (*Figure, error) { return PredictFigure(in) }
	}},
	{"predict-curves", func(n int) func() (*Figure, error) {
		in := predictFixture(n)
		in.Lensed, in.Source = SkyImage{}, SkyImage{}
		return func() (*Figure, error) { return PredictFigure(in) }
	}},
}

func uvFixture(n int) []UVSet {
	rng := rand.New(rand.NewPCG(1, 1))
	var sets []UVSet
	for d, name := range []string{"band A", "band B"} {
		s := UVSet{Label: name}
		// Earth-rotation-like arcs: baselines of random length and angle,
		// each traced over a range of hour angles.
		for range n / 4 {
			b := (50 + 400*rng.Float64()) * 1e3 * float64(d+1)
			a0 := 2 * math.Pi * rng.Float64()
			for h := range 4 * 4 {
				a := a0 + 0.05*float64(h)
				s.U = append(s.U, b*math.Cos(a))
				s.V = append(s.V, 0.7*b*math.Sin(a))
			}
		}
		sets = append(sets, s)
	}
	return sets
}

// visFixture is a 2 mJy point source 0.3″ east, 0.2″ north of the phase
// centre plus a 5 mJy Gaussian at the centre, with noise; the model is the
// noiseless truth.
func visFixture(n int) Visibilities {
	rng := rand.New(rand.NewPCG(1, 1))
	m := n * 40
	v := Visibilities{Shift: &Point{0.3, 0.2}}
	const sigma = 2e-3 // Jy per visibility and part
	l0, m0 := 0.3/arcsecPerRadian, 0.2/arcsecPerRadian
	for range m {
		u, w := (rng.Float64()*2-1)*8e5, (rng.Float64()*2-1)*8e5
		g := 5e-3 * math.Exp(-2*math.Pi*math.Pi*(0.15/arcsecPerRadian)*(0.15/arcsecPerRadian)*(u*u+w*w))
		ph := -2 * math.Pi * (u*l0 + w*m0)
		re, im := g+2e-3*math.Cos(ph), 2e-3*math.Sin(ph)
		v.U, v.V = append(v.U, u), append(v.V, w)
		v.ModelRe, v.ModelIm = append(v.ModelRe, re), append(v.ModelIm, im)
		v.Re, v.Im = append(v.Re, re+sigma*rng.NormFloat64()), append(v.Im, im+sigma*rng.NormFloat64())
		v.Weight = append(v.Weight, 1/(sigma*sigma))
	}
	return v
}

// faintVisFixture is m visibilities of a −1 mJy point source at the phase
// centre (phase 180°) with 3 mJy noise per part, model the truth, drawn as
// amplitude and phase: a case whose phase error bars pass ±180°.
func faintVisFixture(m int) Visibilities {
	rng := rand.New(rand.NewPCG(1, 1))
	const sigma = 3e-3
	in := Visibilities{AmpPhase: true}
	for range m {
		u, v := (2*rng.Float64()-1)*5e5, (2*rng.Float64()-1)*5e5
		in.U, in.V = append(in.U, u), append(in.V, v)
		in.Re, in.Im = append(in.Re, -1e-3+sigma*rng.NormFloat64()), append(in.Im, sigma*rng.NormFloat64())
		in.ModelRe, in.ModelIm = append(in.ModelRe, -1e-3), append(in.ModelIm, 0)
		in.Weight = append(in.Weight, 1/(sigma*sigma))
	}
	return in
}

func sourceFixture(n int) SkyImage {
	rng := rand.New(rand.NewPCG(2, 1))
	s := gaussImage(n, 1.2/float64(n), [][4]float64{{1e-4, 0.05, 0.02, 0.06}, {5e-5, -0.1, 0.1, 0.04}}, 0, rng)
	return s
}

func magFixture(n int) MagnificationMap {
	// Singular isothermal sphere of θ_E = 1″ with μ = 1/(1 − θ_E/θ)
	// (Schneider, Ehlers & Falco 1992, §8.1.4): critical curve at θ = θ_E.
	im := SkyImage{N: n, Pixel: 4.0 / float64(n), Values: make([]float64, n*n)}
	for j := range n {
		for i := range n {
			x, y := im.XY(i, j)
			im.Values[j*n+i] = 1 / (1 - 1/math.Hypot(x, y))
		}
	}
	return MagnificationMap{Mu: im, Critical: []Polyline{ring(0, 0, 1, 200)}}
}

func cornerFixture(n int) Posterior {
	rng := rand.New(rand.NewPCG(1, 1))
	names := []string{"θ_E (arcsec)", "q", "PA (deg)", "flux (mJy)"}
	ns := n * 40
	p := Posterior{Names: names, Marker: []float64{1.2, 0.7, 30, 2.5}, MarkerLabel: "truth"}
	for range ns {
		a, b := rng.NormFloat64(), rng.NormFloat64()
		x := []float64{1.2 + 0.01*a, 0.7 + 0.03*(0.8*a+0.6*b), 30 + 2*rng.NormFloat64(), 2.5 + 0.2*rng.NormFloat64()}
		p.Samples = append(p.Samples, x)
		p.Weights = append(p.Weights, 0.5+rng.Float64())
	}
	return p
}

// chainFixture is an AR(1) walk per walker and parameter, coefficient 0.9
// (integrated time 19).
func chainFixture(n int) Chain {
	rng := rand.New(rand.NewPCG(1, 1))
	names := []string{"θ_E (arcsec)", "q", "γ"}
	steps := n * 4
	ch := Chain{Names: names}
	for range 16 {
		wk := make([][]float64, steps)
		x := make([]float64, len(names))
		for t := range steps {
			row := make([]float64, len(names))
			for k := range names {
				x[k] = 0.9*x[k] + math.Sqrt(1-0.81)*rng.NormFloat64()
				row[k] = float64(k+1) + 0.1*x[k]
			}
			wk[t] = row
		}
		ch.Samples = append(ch.Samples, wk)
	}
	return ch
}

func probeFixture(n int) Probe {
	rng := rand.New(rand.NewPCG(1, 1))
	im := gaussImage(n, 0.03, [][4]float64{{0.15e-3, 0.05, -0.03, 0.08}}, 3e-5, rng)
	pr := Probe{Image: im, Beam: Beam{Major: 0.2, Minor: 0.15, PA: 60}, At: Point{0.05, -0.03},
		Direct: Flux{0.16, 0.04}, Splits: []Flux{{0.12, 0.07}, {0.2, 0.07}, {0.15, 0.06}, {0.18, 0.08}}, Observed: 0.16}
	for range 999 {
		pr.Null = append(pr.Null, 0.04*rng.NormFloat64())
	}
	return pr
}

func predictFixture(n int) Prediction {
	rng := rand.New(rand.NewPCG(1, 1))
	lensed := gaussImage(n, 3.0/float64(n), [][4]float64{{1e-4, 0.8, 0.5, 0.06}, {0.6e-4, -0.6, -0.45, 0.05}}, 0, rng)
	src := sourceFixture(n)
	return Prediction{Lensed: lensed, Source: src, Unit: "mJy/pixel", Scale: 1e3,
		Critical: []Polyline{ring(0, 0, 0.95, 200)}, Caustics: []Polyline{astroid(0.3, 200)},
		Images: []Point{{0.8, 0.5}, {-0.6, -0.45}}, Sources: []Point{{0.05, 0.02}}}
}

// smoothNoise returns n×n unit-rms white noise smoothed by a Gaussian of
// sigma pixels (periodic edges).
func smoothNoise(n int, sigma float64, rng *rand.Rand) []float64 {
	x := make([]float64, n*n)
	for k := range x {
		x[k] = rng.NormFloat64()
	}
	h := int(3 * sigma)
	ker := make([]float64, 2*h+1)
	for k := range ker {
		d := float64(k - h)
		ker[k] = math.Exp(-d * d / (2 * sigma * sigma))
	}
	tmp := make([]float64, n*n)
	for j := range n {
		for i := range n {
			s := 0.0
			for k, kv := range ker {
				s += kv * x[j*n+((i+k-h)%n+n)%n]
			}
			tmp[j*n+i] = s
		}
	}
	for j := range n {
		for i := range n {
			s := 0.0
			for k, kv := range ker {
				s += kv * tmp[(((j+k-h)%n+n)%n)*n+i]
			}
			x[j*n+i] = s
		}
	}
	ss := 0.0
	for _, v := range x {
		ss += v * v
	}
	rms := math.Sqrt(ss / float64(len(x)))
	for k := range x {
		x[k] /= rms
	}
	return x
}
