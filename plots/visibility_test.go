package plots

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// TestBinVisibilitiesShift pins the phase-shift sign: under the
// convention V = Σ I exp(−2πi (u l + v m)) (Thompson, Moran & Swenson 2017,
// eq. 3.7), a point source of flux S at (l0, m0) has
// V = S exp(−2πi (u l0 + v m0)); shifting the phase centre to it must give
// Re V = S and Im V = 0 in every bin (to rounding, 1e-12 Jy).
func TestBinVisibilitiesShift(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	const s = 3e-3
	x0, y0 := 0.7, -0.4 // arcsec
	l0, m0 := x0/arcsecPerRadian, y0/arcsecPerRadian
	var in Visibilities
	for range 2000 {
		u, v := (2*rng.Float64()-1)*5e5, (2*rng.Float64()-1)*5e5
		ph := -2 * math.Pi * (u*l0 + v*m0)
		in.U, in.V = append(in.U, u), append(in.V, v)
		in.Re, in.Im = append(in.Re, s*math.Cos(ph)), append(in.Im, s*math.Sin(ph))
		in.ModelRe, in.ModelIm = append(in.ModelRe, s*math.Cos(ph)), append(in.ModelIm, s*math.Sin(ph))
		in.Weight = append(in.Weight, 1+rng.Float64())
	}
	in.Shift = &Point{x0, y0}
	bins, err := BinVisibilities(in)
	if err != nil {
		t.Fatal(err)
	}
	if len(bins) != 16 {
		t.Errorf("%d bins, want the default 16", len(bins))
	}
	for k, b := range bins {
		if math.Abs(b.Re-s) > 1e-12 || math.Abs(b.Im) > 1e-12 || math.Abs(b.ModelRe-s) > 1e-12 || math.Abs(b.ModelIm) > 1e-12 {
			t.Errorf("bin %d: data %g%+gi, model %g%+gi Jy; want %g+0i", k, b.Re, b.Im, b.ModelRe, b.ModelIm, s)
		}
	}
	// The opposite shift must not flatten the source (guards the sign).
	in.Shift = &Point{-x0, -y0}
	bins, _ = BinVisibilities(in)
	flat := true
	for _, b := range bins[1:] {
		if math.Abs(b.Re-s) > 1e-4 {
			flat = false
		}
	}
	if flat {
		t.Error("shifting to the mirrored position also flattened the source: sign not pinned")
	}
}

// TestBinVisibilitiesMeans checks the inverse-variance weighted mean and
// its error, V̄ = Σ w V / Σ w, σ = 1/√Σw (Bevington & Robinson 2003,
// eqs. 4.17 and 4.19), on three visibilities in one bin worked by hand.
func TestBinVisibilitiesMeans(t *testing.T) {
	in := Visibilities{
		U: []float64{100, 0, 60}, V: []float64{0, 100, 80},
		Re: []float64{1, 2, 4}, Im: []float64{0, -1, 1},
		Weight: []float64{1, 2, 1}, Bins: 1,
	}
	bins, err := BinVisibilities(in)
	if err != nil {
		t.Fatal(err)
	}
	b := bins[0]
	// Σw = 4; Re = (1 + 4 + 4)/4 = 2.25; Im = (0 − 2 + 1)/4 = −0.25;
	// σ = 1/√4 = 0.5; all at uv distance 100.
	for _, c := range []struct {
		name      string
		got, want float64
	}{{"Re", b.Re, 2.25}, {"Im", b.Im, -0.25}, {"Err", b.Err, 0.5}, {"UV", b.UV, 100}, {"N", float64(b.N), 3}} {
		if math.Abs(c.got-c.want) > 1e-12 {
			t.Errorf("%s = %g, want %g", c.name, c.got, c.want)
		}
	}
	if b.HasModel {
		t.Error("HasModel true without a model")
	}
}

func TestBinVisibilitiesErrors(t *testing.T) {
	ok := Visibilities{U: []float64{1}, V: []float64{1}, Re: []float64{1}, Im: []float64{0}, Weight: []float64{1}}
	for _, tc := range []struct {
		name string
		edit func(v *Visibilities)
	}{
		{"short v", func(v *Visibilities) { v.V = nil }},
		{"negative weight", func(v *Visibilities) { v.Weight = []float64{-1} }},
		{"NaN re", func(v *Visibilities) { v.Re = []float64{math.NaN()} }},
		{"half a model", func(v *Visibilities) { v.ModelRe = []float64{1} }},
		{"negative bins", func(v *Visibilities) { v.Bins = -2 }},
	} {
		t.Run(tc.name, func(t *testing.T) {
			v := ok
			tc.edit(&v)
			if _, err := BinVisibilities(v); err == nil {
				t.Error("no error")
			}
		})
	}
	z := ok
	z.Weight = []float64{0}
	if _, err := VisibilityFigure(z); err == nil {
		t.Error("all-zero weights: no error from VisibilityFigure")
	}
}

// ExampleBinVisibilities shifts the phase centre onto a 2 mJy point source
// 0.5″ east of it, so every bin reads its flux.
func ExampleBinVisibilities() {
	l0 := 0.5 / arcsecPerRadian
	var in Visibilities
	for k := range 6 {
		u := float64(k+1) * 1e5 // wavelengths
		ph := -2 * math.Pi * u * l0
		in.U, in.V = append(in.U, u), append(in.V, 0)
		in.Re, in.Im = append(in.Re, 2e-3*math.Cos(ph)), append(in.Im, 2e-3*math.Sin(ph))
		in.Weight = append(in.Weight, 1e6)
	}
	in.Shift, in.Bins = &Point{X: 0.5}, 3
	bins, _ := BinVisibilities(in)
	for _, b := range bins {
		fmt.Printf("%3.0f kλ: %.3f %+.3f i mJy ± %.3f\n", b.UV/1e3, b.Re*1e3, b.Im*1e3+0, b.Err*1e3)
	}
	// Output:
	// 150 kλ: 2.000 +0.000 i mJy ± 0.707
	// 350 kλ: 2.000 +0.000 i mJy ± 0.707
	// 550 kλ: 2.000 +0.000 i mJy ± 0.707
}

func TestAmpPhaseParts(t *testing.T) {
	// A bin holding 3 − 4i mJy with σ = 0.5 mJy: amplitude 5 mJy, phase
	// atan2(−4, 3) = −53.13°, phase error 0.5/5 rad = 5.73°.
	b := VisBin{Re: 3e-3, Im: -4e-3, Err: 0.5e-3, ModelRe: 3e-3, ModelIm: 4e-3}
	amp, ph := ampPhaseParts[0], ampPhaseParts[1]
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"amplitude", amp.val(b), 5},
		{"amplitude error", amp.err(b), 0.5},
		{"phase", ph.val(b), -53.130102354},
		{"phase error", ph.err(b), 0.1 * 180 / math.Pi},
		{"phase residual", ph.diff(ph.val(b), ph.mod(b)), -106.260204708},
		{"wrapped residual", ph.diff(170, -170), -20},
	} {
		if math.Abs(c.got-c.want) > 1e-6 {
			t.Errorf("%s = %.9g, want %.9g", c.name, c.got, c.want)
		}
	}
	v := visFixture(16)
	v.AmpPhase = true
	if _, err := VisibilityFigure(v); err != nil {
		t.Fatal(err)
	}
}

// TestPhaseAxisClamped draws the amplitude–phase figure of a faint source
// of phase 180° (−1 mJy, noise 3 mJy per visibility, few per bin): bin
// phases scatter about ±180° with error bars capped at 180°, which reach
// ±360°. The phase axes of the data and residual panels must still show
// no more than [−180°, 180°], labelled every 90°.
func TestPhaseAxisClamped(t *testing.T) {
	in := faintVisFixture(160)
	bins, err := BinVisibilities(in)
	if err != nil {
		t.Fatal(err)
	}
	reach := 0.0
	ph := ampPhaseParts[1]
	for _, b := range bins {
		reach = math.Max(reach, math.Abs(ph.val(b))+ph.err(b))
	}
	if reach <= 200 {
		t.Fatalf("fixture's phase error bars reach only %.0f°; the test needs some beyond 180°", reach)
	}
	f, err := VisibilityFigure(in)
	if err != nil {
		t.Fatal(err)
	}
	g := f.panels[0].d.(plotGrid)
	for r, name := range []string{"phase", "phase residual"} {
		p := g.plots[r][1]
		if p.Y.Min < -180 || p.Y.Max > 180 {
			t.Errorf("%s axis %.1f…%.1f°, want within ±180°", name, p.Y.Min, p.Y.Max)
		}
		var labels []string
		for _, tk := range p.Y.Tick.Marker.Ticks(p.Y.Min, p.Y.Max) {
			if tk.Label != "" {
				labels = append(labels, tk.Label)
			}
		}
		if p.Y.Max-p.Y.Min >= 180 && !slices.Contains(labels, "90") {
			t.Errorf("%s axis labels %q: want multiples of 90°", name, labels)
		}
	}
	img, _ := renderPNG(t, f)
	if b := img.Bounds(); b.Dx() != pixelsFor(f.Width) {
		t.Errorf("PNG width %d", b.Dx())
	}
}
