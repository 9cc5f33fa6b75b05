package probe

import (
	"math"
	"math/rand/v2"
	"testing"

	"deflect/uv"
)

// TestSplitSpectralScaling checks that the dataset split compares fluxes at
// the reference frequency through the source's spectral index: a noiseless
// point source of S_ν = S₀ (ν/ν₀)^α observed at 150 and 300 GHz gives S₀ in
// both datasets and χ² ≈ 0 with α = 3, and the factor 2³ = 8 between them
// (a large χ²) when the scaling is left out (α = 0). The point source's
// visibility V = S e^{−2πi(ux + vy)} follows the conventions' Fourier sign.
func TestSplitSpectralScaling(t *testing.T) {
	const s0, alpha, x0, y0 = 0.01, 3.0, 0.02, -0.03
	rnd := rand.New(rand.NewPCG(1, 1))
	mk := func(label string, freq float64) *uv.Dataset {
		d := &uv.Dataset{Meta: uv.Meta{Label: label, Freq: freq}}
		s := s0 * math.Pow(freq/150e9, alpha)
		for range 200 {
			u, v := (rnd.Float64()-0.5)*6e5, (rnd.Float64()-0.5)*6e5
			ph := -2 * math.Pi * (u*x0 + v*y0) / uv.ArcsecPerRadian
			d.U, d.V = append(d.U, u), append(d.V, v)
			d.Re, d.Im = append(d.Re, s*math.Cos(ph)), append(d.Im, s*math.Sin(ph))
			d.Weight = append(d.Weight, 1e4)
		}
		return d
	}
	a, b := mk("low", 150e9), mk("high", 300e9)
	for _, tc := range []struct {
		name    string
		alpha   float64
		wantB   float64 // flux of the 300 GHz dataset at 150 GHz
		chi2Big bool
	}{
		{"with the spectral index", alpha, s0, false},
		{"without it", 0, 8 * s0, true},
	} {
		t.Run(tc.name, func(t *testing.T) {
			r := &Rows{RefFreq: 150e9, Alpha: tc.alpha}
			r.Add(a, nil, 1)
			r.Add(b, nil, 1)
			fams := SplitTests(r, x0, y0)
			if len(fams) == 0 || len(fams[0].Splits) != 2 {
				t.Fatalf("split families %+v, want the dataset split first", fams)
			}
			f := fams[0]
			if got := f.Splits[0].Flux.Value; math.Abs(got-s0) > 1e-9*s0 {
				t.Errorf("%s flux %.9g, want %.9g", f.Splits[0].Name, got, s0)
			}
			if got := f.Splits[1].Flux.Value; math.Abs(got-tc.wantB) > 1e-9*tc.wantB {
				t.Errorf("%s flux %.9g, want %.9g", f.Splits[1].Name, got, tc.wantB)
			}
			if tc.chi2Big != (f.Chi2 > 100) || (!tc.chi2Big && f.Chi2 > 1e-6) {
				t.Errorf("χ² = %g", f.Chi2)
			}
		})
	}
}
