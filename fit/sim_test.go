package fit

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"testing"

	"deflect/source"
	"deflect/uv"
)

// simCoverage returns (u, v) in wavelengths of an earth-rotation-like
// coverage: nAnt antennas scattered in a disk, their baselines rotated over
// nTimes hour angles spanning 6 h and foreshortened in v by sin δ = 0.6,
// scaled so the longest baseline reaches uvMax.
func simCoverage(rnd *rand.Rand, nAnt, nTimes int, uvMax float64) (u, v []float64) {
	ex, ny := make([]float64, nAnt), make([]float64, nAnt)
	for a := range nAnt {
		r := math.Sqrt(rnd.Float64())
		phi := 2 * math.Pi * rnd.Float64()
		ex[a], ny[a] = r*math.Cos(phi), r*math.Sin(phi)
	}
	scale := uvMax / 2
	for t := range nTimes {
		h := (float64(t)/float64(max(nTimes-1, 1)) - 0.5) * math.Pi / 2
		sh, ch := math.Sincos(h)
		for a := range nAnt {
			for b := a + 1; b < nAnt; b++ {
				bx, by := ex[b]-ex[a], ny[b]-ny[a]
				u = append(u, scale*(bx*ch-by*sh))
				v = append(v, scale*0.6*(bx*sh+by*ch))
			}
		}
	}
	return u, v
}

// simSpec describes a simulated dataset.
type simSpec struct {
	nAnt, nTimes int
	uvMax        float64 // wavelengths
	sigma        float64 // Jy per real and imaginary part
	freq, dish   float64
	seed         uint64
}

// simulate writes a visibility table of the model m at theta (the model's
// own grid rendering, plus the exact visibilities of its point images) with
// Gaussian noise; it returns the noiseless model visibilities.
func simulate(t testing.TB, path string, m *Model, theta []float64, g uv.Grid, sp simSpec) []complex128 {
	t.Helper()
	rnd := rand.New(rand.NewPCG(sp.seed, 7))
	u, v := simCoverage(rnd, sp.nAnt, sp.nTimes, sp.uvMax)
	src, err := m.Source(theta, sp.freq)
	if err != nil {
		t.Fatal(err)
	}
	lens, err := m.Lens(theta)
	if err != nil {
		t.Fatal(err)
	}
	pb := uv.NewPrimaryBeam(sp.dish, sp.freq)
	img, _ := source.Render(nil, g, lens.Prepare(), src, source.RenderOptions{})
	pred, err := uv.NewPredictor(g, pb, u, v, 1e-12)
	if err != nil {
		t.Fatal(err)
	}
	model := pred.Predict(nil, img)
	pts, err := source.LensedPoints(lens, src, source.PointOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(pts) > 0 {
		x, y, f := make([]float64, len(pts)), make([]float64, len(pts)), make([]float64, len(pts))
		for i, p := range pts {
			x[i], y[i], f[i] = p.X, p.Y, p.Flux
		}
		pv := uv.PredictPoints(nil, u, v, pb, x, y, f)
		for k := range model {
			model[k] += pv[k]
		}
	}
	d := &uv.Dataset{Meta: uv.Meta{Label: "sim", Freq: sp.freq, Dish: sp.dish}}
	d.U, d.V = u, v
	d.Re, d.Im, d.Weight = make([]float64, len(u)), make([]float64, len(u)), make([]float64, len(u))
	for k := range u {
		d.Re[k] = real(model[k]) + sp.sigma*rnd.NormFloat64()
		d.Im[k] = imag(model[k]) + sp.sigma*rnd.NormFloat64()
		d.Weight[k] = 1 / (sp.sigma * sp.sigma)
	}
	if err := uv.WriteTableFile(path, true, d); err != nil {
		t.Fatal(err)
	}
	return model
}

// truthModel is an SIE + shear + Sérsic model with every free parameter
// written as a prior table and the truth as its start.
const truthModel = `[sky]
pixel = %[1]g
size = %[2]d

[[data]]
file = "sim.csv"
label = "sim"

[[lens]]
kind = "sie"
name = "g1"
x = {start = 0.02, min = -0.3, max = 0.3}
y = {start = -0.03, min = -0.3, max = 0.3}
theta_e = {start = 0.8, min = 0.4, max = 1.2}
q = {start = 0.75, min = 0.4, max = 1.0}
pa = {start = 35.0, min = 0.0, max = 90.0}

[[lens]]
kind = "shear"
name = "ext"
gamma = {start = 0.05, min = 0.0, max = 0.15}
angle = {start = 110.0, min = 60.0, max = 150.0}

[[source]]
kind = "sersic"
name = "s1"
x = {start = 0.05, min = -0.3, max = 0.3}
y = {start = 0.04, min = -0.3, max = 0.3}
flux = {start = 4.0, min = 0.5, max = 10.0}
r_eff = {start = 0.12, min = 0.03, max = 0.4}
n = 1.0
q = {start = 0.7, min = 0.3, max = 1.0}
pa = {start = -20.0, min = -90.0, max = 30.0}

[fit]
method = "nested"
seed = 3
%[3]s
`

// writeSimModel writes a model file and a simulated table in dir; the
// truth is the model's start vector.
func writeSimModel(t testing.TB, dir string, pixel float64, n int, fitExtra string, sp simSpec) (*Model, []float64) {
	t.Helper()
	return writeSimDoc(t, dir, fmt.Sprintf(truthModel, pixel, n, fitExtra), uv.Grid{N: n, Pixel: pixel}, sp)
}

// writeSimDoc writes the model file doc (whose dataset is "sim.csv") and a
// table simulated from its start vector on g.
func writeSimDoc(t testing.TB, dir, doc string, g uv.Grid, sp simSpec) (*Model, []float64) {
	t.Helper()
	path := filepath.Join(dir, "model.toml")
	if err := os.WriteFile(path, []byte(doc), 0o644); err != nil {
		t.Fatal(err)
	}
	// The data file must exist before the model is read.
	if err := os.WriteFile(filepath.Join(dir, "sim.csv"), []byte("u,v,re,im,weight\n"), 0o644); err != nil {
		t.Fatal(err)
	}
	m, err := ReadModel(path)
	if err != nil {
		t.Fatal(err)
	}
	truth := m.Start()
	simulate(t, filepath.Join(dir, "sim.csv"), m, truth, g, sp)
	return m, truth
}

var smallSim = simSpec{nAnt: 12, nTimes: 12, uvMax: 206265 / 0.25, sigma: 2e-3, freq: 250e9, dish: 12, seed: 1}

func gridOf(n int, pixel float64) uv.Grid { return uv.Grid{N: n, Pixel: pixel} }

func writeFile(t testing.TB, path, doc string) {
	t.Helper()
	if err := os.WriteFile(path, []byte(doc), 0o644); err != nil {
		t.Fatal(err)
	}
}
