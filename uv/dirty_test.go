package uv

import (
	"math"
	"math/rand/v2"
	"testing"
)

// A point source of S Jy at a pixel centre peaks at S Jy/beam in the dirty
// image, at that pixel, for every weighting (the normalisation of
// ../shared/conventions.md); the dirty beam peaks at 1 at its centre.
func TestDirtyPointSource(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	g := Grid{N: 32, Pixel: 0.1, X0: 0.3, Y0: -0.2}
	d := simDataset(rnd, 2000, g, 300e9)
	// Shrink the coverage to resolution ≈ 5 pixels.
	for k := range d.U {
		d.U[k] *= 0.2
		d.V[k] *= 0.2
	}
	const s = 0.0123
	x, y := g.XY(20, 9)
	vis := PredictPoints(nil, d.U, d.V, PrimaryBeam{}, []float64{x}, []float64{y}, []float64{s})
	for k, v := range vis {
		d.Re[k], d.Im[k] = real(v), imag(v)
	}
	for _, tc := range []struct {
		name string
		opt  ImagingOptions
	}{
		{"natural", ImagingOptions{}},
		{"uniform", ImagingOptions{Weighting: Uniform}},
		{"briggs 0", ImagingOptions{Weighting: Briggs, Robust: 0}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			di, err := MakeDirty(d, g, tc.opt)
			if err != nil {
				t.Fatal(err)
			}
			best := 0
			for k, v := range di.Image {
				if v > di.Image[best] {
					best = k
				}
			}
			if best != 9*32+20 || math.Abs(di.Image[best]-s) > 1e-8*s {
				t.Errorf("peak %v at pixel (%d,%d), want %v at (20,9)", di.Image[best], best%32, best/32, s)
			}
			if c := di.Beam[16*32+16]; math.Abs(c-1) > 1e-8 {
				t.Errorf("beam centre %v, want 1", c)
			}
			if !(di.Noise >= di.NaturalNoise*(1-1e-12)) {
				t.Errorf("noise %v below the natural noise %v", di.Noise, di.NaturalNoise)
			}
		})
	}
}

// The natural dirty image equals Σ_k w_k Re(d_k e^{+2πi(ul+vm)})/Σ w written
// out directly, to 1e-8 of its peak; the natural noise is (Σ w)^−½, and the
// rms of pure-noise images agrees with it within 5% (Monte Carlo, 20 images).
func TestDirtyNatural(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 2))
	g := Grid{N: 32, Pixel: 0.3, X0: 0.5}
	d := simDataset(rnd, 500, g, 300e9)
	for k := range d.U {
		d.U[k] *= 0.2
		d.V[k] *= 0.2
	}
	di, err := MakeDirty(d, g, ImagingOptions{})
	if err != nil {
		t.Fatal(err)
	}
	r := make([]complex128, d.Len())
	for k := range r {
		r[k] = complex(d.Re[k], d.Im[k])
	}
	want := directDirty(d, g, r)
	sw := di.SumWeights
	for k := range want {
		want[k] /= sw
	}
	for k := range want {
		if math.Abs(di.Image[k]-want[k]) > 1e-8*maxAbs(want) {
			t.Fatalf("pixel %d: %v, want %v", k, di.Image[k], want[k])
		}
	}
	if math.Abs(di.Noise-1/math.Sqrt(sw)) > 1e-12*di.Noise || math.Abs(di.Noise-di.NaturalNoise) > 1e-12*di.Noise {
		t.Errorf("noise %v natural %v, want (Σw)^-1/2 = %v", di.Noise, di.NaturalNoise, 1/math.Sqrt(sw))
	}
	var ss float64
	var npix int
	for range 20 {
		for k := range d.Re {
			s := 1 / math.Sqrt(d.Weight[k])
			d.Re[k], d.Im[k] = s*rnd.NormFloat64(), s*rnd.NormFloat64()
		}
		di, err := MakeDirty(d, g, ImagingOptions{})
		if err != nil {
			t.Fatal(err)
		}
		for _, v := range di.Image {
			ss += v * v
			npix++
		}
	}
	if rms := math.Sqrt(ss / float64(npix)); math.Abs(rms/di.Noise-1) > 0.05 {
		t.Errorf("Monte Carlo image rms %v, predicted %v", rms, di.Noise)
	}
}

// Uniform weighting gives every occupied uv cell the same total imaging
// weight (samples and their conjugates: 1 per cell); Briggs weighting tends
// to natural for R = +8 and to uniform for R = −8 (Briggs 1995, ch. 3), to
// 1e-6 relative after normalisation.
func TestImagingWeights(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 3))
	g := Grid{N: 16, Pixel: 0.3}
	d := simDataset(rnd, 400, g, 300e9)
	for k := range d.U {
		d.U[k] *= 0.3
		d.V[k] *= 0.3
	}
	uni, err := ImagingWeights(d, g, Uniform, 0)
	if err != nil {
		t.Fatal(err)
	}
	du := ArcsecPerRadian / (float64(g.N) * g.Pixel)
	cells := map[[2]int]float64{}
	for k, w := range uni {
		if w > 0 {
			iu, iv := int(math.Round(d.U[k]/du)), int(math.Round(d.V[k]/du))
			cells[[2]int{iu, iv}] += w
			cells[[2]int{-iu, -iv}] += w
		}
	}
	for c, w := range cells {
		if math.Abs(w-1) > 1e-12 && !(c[0] == 0 && c[1] == 0) {
			t.Fatalf("cell %v: total uniform weight %v, want 1", c, w)
		}
	}
	nat, _ := ImagingWeights(d, g, Natural, 0)
	for _, tc := range []struct {
		r    float64
		want []float64
	}{{8, nat}, {-8, uni}} {
		br, err := ImagingWeights(d, g, Briggs, tc.r)
		if err != nil {
			t.Fatal(err)
		}
		var sb, sw float64
		for k := range br {
			sb += br[k]
			sw += tc.want[k]
		}
		for k := range br {
			if math.Abs(br[k]/sb-tc.want[k]/sw) > 1e-6*tc.want[k]/sw {
				t.Fatalf("R=%v row %d: normalised weight %v, want %v", tc.r, k, br[k]/sb, tc.want[k]/sw)
			}
		}
	}
}

// Briggs weights by hand: two rows in one cell (weights 1 and 3) and one
// row alone (weight 2); the grid holds the conjugates too, so Σ W_cell² =
// 2(4² + 2²) = 40 over total weight 2·6 = 12, and with R = 0,
// f² = 25/(40/12) = 7.5: W = w/(1 + 4·7.5) for the pair and 2/(1 + 2·7.5).
func TestBriggsByHand(t *testing.T) {
	g := Grid{N: 16, Pixel: 0.3}
	du := ArcsecPerRadian / (float64(g.N) * g.Pixel)
	d := &Dataset{U: []float64{3 * du, 3.2 * du, -5 * du}, V: []float64{du, 0.9 * du, 2 * du},
		Re: []float64{1, 1, 1}, Im: []float64{0, 0, 0}, Weight: []float64{1, 3, 2}}
	w, err := ImagingWeights(d, g, Briggs, 0)
	if err != nil {
		t.Fatal(err)
	}
	want := []float64{1 / 31.0, 3 / 31.0, 2 / 16.0}
	for k := range w {
		if math.Abs(w[k]-want[k]) > 1e-15 {
			t.Errorf("row %d: %v, want %v", k, w[k], want[k])
		}
	}
}

// An exactly Gaussian beam image is recovered to 1e-9.
func TestFitCleanBeamExact(t *testing.T) {
	const n, pix = 64, 0.05
	for _, want := range []CleanBeam{{0.6, 0.3, 30}, {0.5, 0.5, 0}, {0.8, 0.4, -60}, {0.7, 0.35, 90}} {
		img := make([]float64, n*n)
		pa := want.BPA * math.Pi / 180
		for j := range n {
			for i := range n {
				x, y := -float64(i-n/2)*pix, float64(j-n/2)*pix
				// along the major axis (sin PA, cos PA) and across it
				a := x*math.Sin(pa) + y*math.Cos(pa)
				b := x*math.Cos(pa) - y*math.Sin(pa)
				img[j*n+i] = math.Exp(-4 * math.Ln2 * (a*a/(want.BMaj*want.BMaj) + b*b/(want.BMin*want.BMin)))
			}
		}
		got, err := FitCleanBeam(img, n, pix)
		if err != nil {
			t.Fatal(err)
		}
		dpa := math.Mod(got.BPA-want.BPA+270, 180) - 90
		if math.Abs(got.BMaj-want.BMaj) > 1e-9 || math.Abs(got.BMin-want.BMin) > 1e-9 ||
			(want.BMaj != want.BMin && math.Abs(dpa) > 1e-6) {
			t.Errorf("fit %+v, want %+v", got, want)
		}
	}
}

// For Gaussian uv coverage of standard deviations σ₁ < σ₂ along directions
// at PA and PA + 90°, the expected dirty beam is exp(−2π² Σ σ² (l·e)²)
// (the Fourier transform of a Gaussian), so the clean beam has
// FWHM = √(2 ln 2)/(π σ) rad and its major axis at PA; 20000 samples give
// the FWHMs within 3% and the PA within 3°.
func TestCleanBeamGaussianCoverage(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 4))
	g := Grid{N: 64, Pixel: 0.05}
	const s1, s2 = 3e5, 6e5
	pa := 35 * math.Pi / 180
	n := 20000
	d := &Dataset{U: make([]float64, n), V: make([]float64, n), Re: make([]float64, n), Im: make([]float64, n), Weight: make([]float64, n)}
	for k := range n {
		p, q := s1*rnd.NormFloat64(), s2*rnd.NormFloat64()
		d.U[k] = p*math.Sin(pa) + q*math.Cos(pa)
		d.V[k] = p*math.Cos(pa) - q*math.Sin(pa)
		d.Weight[k] = 1
	}
	di, err := MakeDirty(d, g, ImagingOptions{})
	if err != nil {
		t.Fatal(err)
	}
	fw := func(s float64) float64 { return math.Sqrt(2*math.Ln2) / (math.Pi * s) * ArcsecPerRadian }
	cb := di.Clean
	if math.Abs(cb.BMaj/fw(s1)-1) > 0.03 || math.Abs(cb.BMin/fw(s2)-1) > 0.03 || math.Abs(cb.BPA-35) > 3 {
		t.Errorf("clean beam %+v, want BMaj %.4f BMin %.4f BPA 35", cb, fw(s1), fw(s2))
	}
}

// The compressed D divided by Σ w is the natural-weighting dirty image, and
// B(0, Δ)/Σ w the dirty beam (two independent code paths, to 1e-8).
func TestDirtyMatchesCompressed(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 5))
	g := Grid{N: 32, Pixel: 0.3, X0: -0.6, Y0: 0.9}
	d := simDataset(rnd, 700, g, 300e9)
	for k := range d.U {
		d.U[k] *= 0.2
		d.V[k] *= 0.2
	}
	di, err := MakeDirty(d, g, ImagingOptions{})
	if err != nil {
		t.Fatal(err)
	}
	cs, err := Compress(d, g, CompressOptions{MaxFracBandwidth: -1})
	if err != nil {
		t.Fatal(err)
	}
	c := cs[0]
	sw := c.SumWeights()
	for j := range g.N {
		for i := range g.N {
			if v := c.DirtyAt(i, j) / sw; math.Abs(v-di.Image[j*g.N+i]) > 1e-8 {
				t.Fatalf("D(%d,%d)/Σw = %v, dirty image %v", i, j, v, di.Image[j*g.N+i])
			}
			if v := c.BeamAt(i-g.N/2, j-g.N/2) / sw; math.Abs(v-di.Beam[j*g.N+i]) > 1e-8 {
				t.Fatalf("B(%d,%d)/Σw = %v, dirty beam %v", i-g.N/2, j-g.N/2, v, di.Beam[j*g.N+i])
			}
		}
	}
}
