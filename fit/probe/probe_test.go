package probe

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"deflect/fit"
	"deflect/source"
	"deflect/uv"
)

// testArray returns a fictional array of n antennas scattered within
// extent metres, drawn with rnd.
func testArray(name string, n int, extent float64, rnd *rand.Rand) *uv.Array {
	a := &uv.Array{Name: name, Latitude: -25}
	for range n {
		a.East = append(a.East, (rnd.Float64()-0.5)*extent)
		a.North = append(a.North, (rnd.Float64()-0.5)*extent)
		a.Up = append(a.Up, 0)
	}
	return a
}

// scenario writes two datasets and a model file (point source behind an
// isothermal ellipsoid of core radius core, ±freeFlux) in a temporary
// directory and returns the model's path.
func scenario(t *testing.T, dir, name string, core float64, free bool) string {
	t.Helper()
	flux, thetaE, sx, sy := "10.0", "1.0", "0.05", "0.03"
	if free {
		flux = "{start = 10.0, min = 1.0, max = 30.0}"
		thetaE = "{start = 1.0, min = 0.8, max = 1.2}"
		sx = "{start = 0.05, min = -0.2, max = 0.2}"
		sy = "{start = 0.03, min = -0.2, max = 0.2}"
	}
	doc := fmt.Sprintf(`[sky]
pixel = 0.04
size = 128

[[data]]
file = "a.csv"
label = "array-A"

[[data]]
file = "b.csv"
label = "array-B"

[[lens]]
kind = "sie"
name = "g1"
theta_e = %s
q = 0.8
pa = 20.0
core = %g

[[source]]
kind = "point"
name = "s"
x = %s
y = %s
flux = %s
`, thetaE, core, sx, sy, flux)
	path := filepath.Join(dir, name)
	if err := os.WriteFile(path, []byte(doc), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// makeData synthesises the two datasets, sets their visibilities from the
// model at path plus noise of per-row weight w (natural noise), and writes
// them beside it. It returns the datasets.
func makeData(t *testing.T, dir, truth string, coverage func(i int) (*uv.Array, uv.Observation), w float64, seed uint64) []*uv.Dataset {
	t.Helper()
	var ds []*uv.Dataset
	for i, f := range []string{"a.csv", "b.csv"} {
		a, obs := coverage(i)
		d, err := uv.Synthesize(a, obs)
		if err != nil {
			t.Fatal(err)
		}
		for k := range d.Weight {
			d.Weight[k] = w
		}
		if err := uv.WriteTableFile(filepath.Join(dir, f), true, d); err != nil {
			t.Fatal(err)
		}
		ds = append(ds, d)
	}
	m, err := fit.ReadModel(truth)
	if err != nil {
		t.Fatal(err)
	}
	g, _ := ModelGrid(m, ds, 128)
	sky := NewSky(m, g, ds)
	rnd := rand.New(rand.NewPCG(seed, 1))
	for i, d := range ds {
		if err := Simulate(sky, m.Start(), i, d, Disc{}, rnd); err != nil {
			t.Fatal(err)
		}
		if err := uv.WriteTableFile(filepath.Join(dir, []string{"a.csv", "b.csv"}[i]), true, d); err != nil {
			t.Fatal(err)
		}
	}
	return ds
}

func denseCoverage(i int) (*uv.Array, uv.Observation) {
	rnd := rand.New(rand.NewPCG(uint64(i)+5, 2))
	a := testArray([]string{"array-A", "array-B"}[i], 10, 1500, rnd)
	return a, uv.Observation{Dec: -30, HAStart: -2, HAEnd: 2, Integration: 600,
		Freqs: []float64{[]float64{230e9, 345e9}[i]}, ChanWidth: 1e9}
}

// TestFluxAtBruteForce checks the direct test's linear flux and its exact
// error against a brute-force weighted least-squares solution of the real
// system [Re t; Im t] F = [Re r; Im r] (gonum mat.QR), and its error against
// the scatter of the fitted flux over noise realisations.
func TestFluxAtBruteForce(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	n := 60
	r := &Rows{}
	d := &uv.Dataset{Meta: uv.Meta{Label: "x", Dish: 12, Freq: 230e9}}
	for k := 0; k < n; k++ {
		d.U = append(d.U, (rnd.Float64()-0.5)*4e5)
		d.V = append(d.V, (rnd.Float64()-0.5)*4e5)
		d.Re = append(d.Re, rnd.NormFloat64())
		d.Im = append(d.Im, rnd.NormFloat64())
		d.Weight = append(d.Weight, 0.5+rnd.Float64())
	}
	r.Add(d, nil, 0.9)
	x0, y0 := 0.3, -0.2
	got := r.FluxAt(x0, y0)

	a := mat.NewDense(2*n, 1, nil)
	b := mat.NewDense(2*n, 1, nil)
	A := uv.NewPrimaryBeam(12, 230e9).At(x0, y0) * 0.9
	for k := 0; k < n; k++ {
		ph := -2 * math.Pi * (d.U[k]*x0 + d.V[k]*y0) / uv.ArcsecPerRadian
		sw := math.Sqrt(d.Weight[k])
		a.Set(2*k, 0, sw*A*math.Cos(ph))
		a.Set(2*k+1, 0, sw*A*math.Sin(ph))
		b.Set(2*k, 0, sw*d.Re[k])
		b.Set(2*k+1, 0, sw*d.Im[k])
	}
	var qr mat.QR
	qr.Factorize(a)
	var f mat.Dense
	if err := qr.SolveTo(&f, false, b); err != nil {
		t.Fatal(err)
	}
	var ata mat.Dense
	ata.Mul(a.T(), a)
	want := Flux{Value: f.At(0, 0), Err: 1 / math.Sqrt(ata.At(0, 0))}
	if math.Abs(got.Value-want.Value) > 1e-12*math.Abs(want.Value)+1e-14 || math.Abs(got.Err/want.Err-1) > 1e-12 {
		t.Errorf("FluxAt = %+v, brute-force least squares %+v", got, want)
	}
	// Monte Carlo: the fitted flux scatters by σ_F over pure-noise data
	// (2000 draws: the sample σ is within ~3.2% of the true one at 2σ).
	var s2 float64
	const draws = 2000
	for range draws {
		for k := range d.Re {
			sg := 1 / math.Sqrt(d.Weight[k])
			r.Data[k] = complex(sg*rnd.NormFloat64(), sg*rnd.NormFloat64())
		}
		fv := r.FluxAt(x0, y0).Value
		s2 += fv * fv
	}
	if sd := math.Sqrt(s2 / draws); math.Abs(sd/got.Err-1) > 0.05 {
		t.Errorf("flux scatter %.4g over noise draws, σ_F = %.4g", sd, got.Err)
	}
}

// centralFlux returns the flux of the central image (within 0.2") of the
// point source of the model at path.
func centralFlux(t *testing.T, path string) float64 {
	m, err := fit.ReadModel(path)
	if err != nil {
		t.Fatal(err)
	}
	lens, _ := m.Lens(m.Start())
	src, _ := m.Source(m.Start(), 0)
	ims, err := source.LensedPoints(lens, src, source.PointOptions{})
	if err != nil {
		t.Fatal(err)
	}
	for _, im := range ims {
		if math.Hypot(im.X, im.Y) < 0.2 {
			return im.Flux
		}
	}
	t.Fatal("the cored model makes no central image")
	return 0
}

// TestProbeRealCentralImage is acceptance test (i): a simulation with a real
// central image at about 6σ is called real by the direct, model and null
// tests and in every split.
func TestProbeRealCentralImage(t *testing.T) {
	if testing.Short() {
		t.Skip("simulation and two model fits")
	}
	dir := t.TempDir()
	truth := scenario(t, dir, "truth.toml", 0.15, false)
	// Placeholder data so that the model files validate.
	for _, f := range []string{"a.csv", "b.csv"} {
		os.WriteFile(filepath.Join(dir, f), []byte("u,v,re,im,weight\n1,1,0,0,1\n"), 0o644)
	}
	fc := centralFlux(t, truth)
	// Rows of both datasets: 45 baselines × 24 integrations each; the
	// natural flux error (Σ w)^−½ = fc/6 makes the central image 6σ.
	nrows := 2 * 45 * 24
	w := 36 / (fc * fc * float64(nrows))
	data := makeData(t, dir, truth, denseCoverage, w, 3)
	mA, err := fit.ReadModel(scenario(t, dir, "singular.toml", 0, true))
	if err != nil {
		t.Fatal(err)
	}
	mB, err := fit.ReadModel(scenario(t, dir, "cored.toml", 0.15, true))
	if err != nil {
		t.Fatal(err)
	}
	fa, err := FitModel(context.Background(), "singular", mA, 200, 1)
	if err != nil {
		t.Fatal(err)
	}
	fb, err := FitModel(context.Background(), "cored", mB, 200, 1)
	if err != nil {
		t.Fatal(err)
	}
	res, err := Run(mB, fb.Theta, data, Options{Radius: 0.2, Null: 100, Seed: 9, Models: CompareModels(fa, fb)})
	if err != nil {
		t.Fatal(err)
	}
	t.Log(res.Report())
	if res.Verdict != "real" {
		t.Errorf("verdict %q, want real: %s", res.Verdict, res.Summary)
	}
	if s := res.Direct.SNR; s < 4.5 || s > 8 {
		t.Errorf("direct-test S/N %.2f, want ≈ 6", s)
	}
	if res.Null.Exceed != 0 {
		t.Errorf("%d null peaks exceed the observed one", res.Null.Exceed)
	}
	if res.Models.DeltaChi2 < 16 || res.Models.LnBayes < 3 {
		t.Errorf("model test Δχ² %.1f, ln B %.1f: want the cored model clearly preferred", res.Models.DeltaChi2, res.Models.LnBayes)
	}
	for _, f := range res.Splits {
		for _, s := range f.Splits {
			if s.Flux.Value <= 0 {
				t.Errorf("split %s/%s flux %.3g", f.Name, s.Name, s.Flux.Value)
			}
		}
		if f.P < 0.01 {
			t.Errorf("split %s inconsistent, p = %.3g", f.Name, f.P)
		}
	}
	if len(res.Predictions) != 2 || res.Predictions[0].Present || !res.Predictions[1].Present {
		t.Fatalf("predictions %+v", res.Predictions)
	}
	if p := res.Predictions[1]; math.Abs(p.PointFlux-res.Direct.Flux.Value) > 3*res.Direct.Flux.Err || math.Abs(p.Flux/p.PointFlux-1) > 0.05 { // a point image: equal but for the offset of the measured position
		t.Errorf("predicted central flux %.3g Jy (point fit %.3g; equal for a point source), measured %.3g ± %.2g", p.Flux, p.PointFlux, res.Direct.Flux.Value, res.Direct.Flux.Err)
	}
}

func sparseCoverage(i int) (*uv.Array, uv.Observation) {
	rnd := rand.New(rand.NewPCG(uint64(i)+40, 3))
	a := testArray([]string{"array-A", "array-B"}[i], 4, 700, rnd)
	return a, uv.Observation{Dec: -30, HAStart: -0.5, HAEnd: 0.5, Integration: 600,
		Freqs: []float64{230e9}, ChanWidth: 1e9}
}

// TestProbeSidelobe is acceptance test (ii): without a central image but
// with sparse coverage whose dirty image shows a spot at the centre from the
// other images' sidelobes, the probe finds no significant point source and
// attributes the spot to the sidelobes.
func TestProbeSidelobe(t *testing.T) {
	dir := t.TempDir()
	truth := scenario(t, dir, "truth.toml", 0, false)
	for _, f := range []string{"a.csv", "b.csv"} {
		os.WriteFile(filepath.Join(dir, f), []byte("u,v,re,im,weight\n1,1,0,0,1\n"), 0o644)
	}
	data := makeData(t, dir, truth, sparseCoverage, 1e4, 5) // σ = 10 mJy per visibility
	m, err := fit.ReadModel(truth)
	if err != nil {
		t.Fatal(err)
	}
	res, err := Run(m, m.Start(), data, Options{Radius: 0.2, Null: 100, Seed: 2})
	if err != nil {
		t.Fatal(err)
	}
	t.Log(res.Report())
	if res.Null.ImagePeak < 3*res.ImageNoise {
		t.Fatalf("the scenario shows no spot at the centre: peak %.2fσ", res.Null.ImagePeak/res.ImageNoise)
	}
	if res.Verdict != "not significant" {
		t.Errorf("verdict %q, want not significant", res.Verdict)
	}
	if math.Abs(res.Direct.FixedSNR) > 3 {
		t.Errorf("direct test finds %.1fσ at the centre", res.Direct.FixedSNR)
	}
	if !strings.Contains(res.Summary, "sidelobe") {
		t.Errorf("the summary does not attribute the spot to sidelobes: %s", res.Summary)
	}
	if res.Null.BaseAt < 0.5*res.Null.ImagePeak {
		t.Errorf("sidelobe %.3g Jy/beam does not explain the spot %.3g", res.Null.BaseAt, res.Null.ImagePeak)
	}
}

// TestVariants checks the automatic model-test pair: the singular variant
// of a cored model makes no central image (lensmodel.FindImages reports a
// singular centre), the cored one does, and a singular model gains a free
// core; the original model is left untouched.
func TestVariants(t *testing.T) {
	dir := t.TempDir()
	os.WriteFile(filepath.Join(dir, "a.csv"), []byte("u,v,re,im,weight\n1,1,0,0,1\n"), 0o644)
	os.WriteFile(filepath.Join(dir, "b.csv"), []byte("u,v,re,im,weight\n1,1,0,0,1\n"), 0o644)
	cored, err := fit.ReadModel(scenario(t, dir, "cored.toml", 0.15, true))
	if err != nil {
		t.Fatal(err)
	}
	a, b, err := Variants(cored, cored.Start(), 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name string
		m    *fit.Model
		want bool
	}{{"singular", a, false}, {"cored", b, true}} {
		_, ok, _, err := centralImage(tc.m, tc.m.Start(), 0, 0, 0.2)
		if err != nil || ok != tc.want {
			t.Errorf("%s: central image %v (err %v), want %v", tc.name, ok, err, tc.want)
		}
	}
	if v := ParamValue(cored, cored.Start(), cored.Lenses[0].Params["core"]); v != 0.15 {
		t.Errorf("the original model's core changed to %g", v)
	}
	sing, err := fit.ReadModel(scenario(t, dir, "sing.toml", 0, true))
	if err != nil {
		t.Fatal(err)
	}
	_, b2, err := Variants(sing, sing.Start(), 0, 0)
	if err != nil {
		t.Fatal(err)
	}
	if len(b2.Free) != len(sing.Free)+1 || !b2.Lenses[0].Params["core"].Free {
		t.Errorf("cored variant of a singular model: %d free parameters, want %d with a free core", len(b2.Free), len(sing.Free)+1)
	}
}

// TestNullDeterministic checks that the null simulations give the same peaks
// bit for bit whatever the number of cores.
func TestNullDeterministic(t *testing.T) {
	rnd := rand.New(rand.NewPCG(2, 2))
	d := &uv.Dataset{Meta: uv.Meta{Label: "x"}}
	for range 300 {
		d.U, d.V = append(d.U, (rnd.Float64()-0.5)*4e5), append(d.V, (rnd.Float64()-0.5)*4e5)
		d.Re, d.Im = append(d.Re, rnd.NormFloat64()), append(d.Im, rnd.NormFloat64())
		d.Weight = append(d.Weight, 1)
	}
	var r Rows
	r.Add(d, nil, 1)
	g := uv.Grid{N: 64, Pixel: 0.05}
	var peaks [2][]float64
	for i, procs := range []int{1, 2} {
		old := runtime.GOMAXPROCS(procs)
		im, err := NewImager(&r, g, uv.Natural, 0, 0, 0, 0.2)
		if err != nil {
			t.Fatal(err)
		}
		n, err := NullTest(&r, im, 16, 5)
		runtime.GOMAXPROCS(old)
		if err != nil {
			t.Fatal(err)
		}
		peaks[i] = n.Peaks
	}
	for k := range peaks[0] {
		if peaks[0][k] != peaks[1][k] {
			t.Fatalf("simulation %d: peak %v with 1 core, %v with 2", k, peaks[0][k], peaks[1][k])
		}
	}
}
