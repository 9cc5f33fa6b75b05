package main

import (
	"bytes"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/pelletier/go-toml/v2"

	"deflect/lensmodel"
	"deflect/plots"
)

func runPredict(t *testing.T, args ...string) (stdout, stderr string, code int) {
	t.Helper()
	var out, errb bytes.Buffer
	code = runMain(append([]string{"predict"}, args...), &out, &errb)
	return out.String(), errb.String(), code
}

// TestPredictSIS: for a singular isothermal sphere the images of a source
// at β < θ_E lie at β ± θ_E with μ = 1 ± θ_E/β, the arrival-time
// difference is (D_Δt/c) 2βθ_E, and the mass inside θ_E is π θ_E² Σ_cr
// (Schneider, Ehlers & Falco 1992, sect. 8.1.4); fluxes are |μ| × flux.
func TestPredictSIS(t *testing.T) {
	dir := t.TempDir()
	model := filepath.Join(dir, "sis.toml")
	const text = `# a singular isothermal sphere
[cosmology]
z_lens = 0.5
z_source = 2.0
H0 = 70.0
Om = 0.3

[[lens]]
kind = "sie"
name = "g1"
theta_e = {start = 1.5, min = 0.5, max = 3.0}   # free in a fit: predict uses the start
q = 1.0
`
	if err := os.WriteFile(model, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out")
	stdout, stderr, code := runPredict(t, model, "--source", "0.3,0", "--flux", "2", "-o", out)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	if !strings.Contains(stdout, "2 images") || !strings.Contains(stdout, "infinitely demagnified") {
		t.Errorf("output lacks the image count or the central-image note:\n%s", stdout)
	}
	var res predictResult
	b, err := os.ReadFile(filepath.Join(out, "predict.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &res); err != nil {
		t.Fatal(err)
	}
	const thetaE, beta = 1.5, 0.3
	if len(res.Images) != 2 {
		t.Fatalf("%d images, want 2", len(res.Images))
	}
	want := []struct{ x, mu float64 }{{beta + thetaE, 1 + thetaE/beta}, {beta - thetaE, 1 - thetaE/beta}}
	for k, im := range res.Images {
		if math.Abs(im.X-want[k].x) > 1e-9 || math.Abs(im.Mu-want[k].mu) > 1e-9 {
			t.Errorf("image %d: x = %g, μ = %g; want %g, %g", k, im.X, im.Mu, want[k].x, want[k].mu)
		}
		if math.Abs(im.Flux-2*math.Abs(im.Mu)) > 1e-12 {
			t.Errorf("image %d: flux %g, want 2|μ|", k, im.Flux)
		}
	}
	c := lensmodel.FlatLambdaCDM(70, 0.3)
	if d := *res.Images[1].Delay; math.Abs(d-c.DelayScale(0.5, 2)*2*beta*thetaE) > 1e-9*d {
		t.Errorf("delay %g days, want %g", d, c.DelayScale(0.5, 2)*2*beta*thetaE)
	}
	if res.ThetaE == nil || math.Abs(*res.ThetaE-thetaE) > 1e-9 {
		t.Errorf("Einstein radius %v, want %g", res.ThetaE, thetaE)
	}
	if m := math.Pi * thetaE * thetaE * c.SigmaCrit(0.5, 2); res.MassInside == nil || math.Abs(*res.MassInside-m) > 1e-9*m {
		t.Errorf("mass inside θ_E %v, want %g", res.MassInside, m)
	}
	// The figures themselves are checked in predict_plot_test.go.
	checkPNG(t, filepath.Join(out, "predict.png"), 7*plots.DPI, int(math.Ceil(3.2*plots.DPI)))
	// A second run into the same directory is refused without --force.
	if _, stderr, code := runPredict(t, model, "--source", "0.3,0", "-o", out); code != 1 || !strings.Contains(stderr, "not empty") {
		t.Errorf("rerun into a non-empty directory: exit %d, %s", code, stderr)
	}
	if _, stderr, code := runPredict(t, model, "--source", "0.3,0", "-o", out, "--force"); code != 0 {
		t.Errorf("rerun with --force: exit %d, %s", code, stderr)
	}
}

// TestPredictLensFlags: the quad of a cored SIE has five images, the
// same as lensmodel.FindImages returns, and shows them without delays when
// no redshifts are given.
func TestPredictLensFlags(t *testing.T) {
	stdout, stderr, code := runPredict(t, "--lens", "sie:x=0,y=0,theta_e=1,q=0.7,pa=10,core=0.05", "--source", "0.03,-0.02")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	res, err := lensmodel.FindImages(lensmodel.Lens{lensmodel.SIE{ThetaE: 1, Q: 0.7, PA: 10, Core: 0.05}}, 0.03, -0.02, lensmodel.ImageOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Images) != 5 || !strings.Contains(stdout, "5 images") || !strings.Contains(stdout, "maximum") {
		t.Errorf("want 5 images with a central maximum:\n%s", stdout)
	}
	if !strings.Contains(stdout, "no cosmology") || strings.Contains(stdout, "demagnified") {
		t.Errorf("want the no-cosmology line and no singular-centre note:\n%s", stdout)
	}
}

// TestPredictTies: same_as copies a parameter from a named component, as
// in the fit model file.
func TestPredictTies(t *testing.T) {
	const text = `[[lens]]
kind = "sie"
name = "g1"
x = 0.4
y = {start = -0.2, min = -1, max = 1}
theta_e = 1
[[lens]]
kind = "nfw"
x = {same_as = "g1.x"}
y = {same_as = "g1.y"}
kappa_s = 0.1
r_s = 5
`
	pm, err := parsePredictModel("ties.toml", []byte(text))
	if err != nil {
		t.Fatal(err)
	}
	n := pm.lens[1].(lensmodel.NFW)
	if n.X != 0.4 || n.Y != -0.2 {
		t.Errorf("tied centre (%g, %g), want (0.4, -0.2)", n.X, n.Y)
	}
}

// TestPredictNFWMass: an NFW halo given by M200 and c gets the κ_s and r_s
// of Cosmology.NFWFromM200.
func TestPredictNFWMass(t *testing.T) {
	cosmo := &predictCosmo{c: lensmodel.FlatLambdaCDM(70, 0.3), zl: 0.3, zs: 1.5}
	pm, err := predictFlagModel([]string{"nfw:m200=1e14,c=5", "sie:theta_e=1"}, cosmo)
	if err != nil {
		t.Fatal(err)
	}
	ks, rs := cosmo.c.NFWFromM200(1e14, 5, 0.3, 1.5)
	n, ok := pm.lens[0].(lensmodel.NFW)
	if !ok || n.KappaS != ks || n.Rs != rs || n.Q != 1 {
		t.Errorf("component %+v, want NFW with κ_s = %g, r_s = %g", pm.lens[0], ks, rs)
	}
	if pm.cosmo == nil || *pm.cosmo != *cosmo {
		t.Errorf("cosmology %+v, want %+v", pm.cosmo, cosmo)
	}
}

// TestPredictDefaultStart: a free parameter without start is taken at the
// centre of its prior (fit's default start): θ_E uniform on [1, 2] gives
// an SIS of θ_E = 1.5, whose Einstein radius is θ_E itself; a model file
// whose data file does not exist yet and that has no source is accepted.
func TestPredictDefaultStart(t *testing.T) {
	dir := t.TempDir()
	model := filepath.Join(dir, "m.toml")
	const text = "[[data]]\nfile = \"later.csv\"\n[[lens]]\nkind = \"sie\"\ntheta_e = {min = 1, max = 2}\n"
	if err := os.WriteFile(model, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out")
	if _, stderr, code := runPredict(t, model, "--source", "0.2,0", "-o", out); code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	var res predictResult
	b, err := os.ReadFile(filepath.Join(out, "predict.json"))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &res); err != nil {
		t.Fatal(err)
	}
	if res.ThetaE == nil || math.Abs(*res.ThetaE-1.5) > 1e-9 || res.Lens[0].Params["theta_e"] != 1.5 {
		t.Errorf("Einstein radius %v, theta_e %v; want 1.5 (midpoint of the prior)", res.ThetaE, res.Lens[0].Params["theta_e"])
	}
}

func TestPredictErrors(t *testing.T) {
	dir := t.TempDir()
	write := func(name, text string) string {
		p := filepath.Join(dir, name)
		if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
			t.Fatal(err)
		}
		return p
	}
	good := "[cosmology]\nz_lens = 0.5\nz_source = 2\nH0 = 70\nOm = 0.3\n"
	tests := []struct {
		name string
		args []string
		code int
		want string
	}{
		{"no source", []string{"--lens", "sie:theta_e=1"}, 2, "--source"},
		{"bad source", []string{"--lens", "sie:theta_e=1", "--source", "1;2"}, 2, "X,Y"},
		{"no lens", []string{"--source", "0,0"}, 2, "no MODEL"},
		{"unknown kind", []string{"--lens", "sis:theta_e=1", "--source", "0,0"}, 2, `--lens "sis:theta_e=1": [[lens]] kind: unknown lens kind "sis" (did you mean "sie"?)`},
		{"unknown flag key", []string{"--lens", "sie:thetae=1", "--source", "0,0"}, 2, `--lens "sie:thetae=1": lens "sie1" thetae: unknown key (did you mean "theta_e"?)`},
		{"flag value", []string{"--lens", "sie:theta_e=inf", "--source", "0,0"}, 2, "not a finite number"},
		{"flag redshifts", []string{"--lens", "sie:theta_e=1", "--zl", "2", "--zs", "1", "--source", "0,0"}, 2, "--zl, --zs, --H0, --Om, --Ode: [cosmology]: expected 0 < z_lens < z_source"},
		{"missing parameter", []string{"--lens", "sie:q=0.5", "--source", "0,0"}, 2, `--lens "sie:q=0.5": lens "sie1": missing required parameter theta_e`},
		{"bad q", []string{"--lens", "sie:theta_e=1,q=1.5", "--source", "0,0"}, 2, `lens "sie1" q: 1.5 is outside the allowed range (0, 1]`},
		{"unknown key in file", []string{write("a.toml", good+"\n[[lens]]\nkind = \"sie\"\nthetae = 1.0\n"), "--source", "0,0"}, 1, `a.toml:9: lens "sie1" thetae: unknown key (did you mean "theta_e"?)`},
		{"unknown section", []string{write("b.toml", good+"[lense]\nkind = 1\n"), "--source", "0,0"}, 1, `b.toml:6: lense: unknown key (did you mean "lens"?)`},
		{"cosmology key", []string{write("c.toml", "[cosmology]\nz_lens = 0.5\nzsource = 2\n"), "--source", "0,0"}, 1, `c.toml:3: [cosmology] zsource: unknown key (did you mean "z_source"?)`},
		{"start outside prior", []string{write("d.toml", good+"[[lens]]\nkind = \"sie\"\ntheta_e = {start = 3, min = 1, max = 2}\n"), "--source", "0,0"}, 1, `d.toml:8: lens "sie1" theta_e start: start 3 lies outside the prior [1, 2]`},
		{"no lens in file", []string{write("i.toml", good), "--source", "0,0"}, 1, "i.toml: [[lens]]: no lens"},
		{"toml syntax", []string{write("e.toml", "[cosmology\n"), "--source", "0,0"}, 1, "e.toml:1"},
		{"redshift order", []string{write("f.toml", "[cosmology]\nz_lens = 2\nz_source = 1\nH0 = 70\nOm = 0.3\n[[lens]]\nkind = \"point\"\ntheta_e = 1\n"), "--source", "0,0"}, 1, "z_lens < z_source"},
		{"tie to nothing", []string{write("h.toml", good+"[[lens]]\nkind = \"sie\"\ntheta_e = 1\nx = {same_as = \"g9.x\"}\n"), "--source", "0,0"}, 1, `h.toml:9: sie1.x: same_as names unknown parameter "g9.x"`},
		{"nfw needs cosmology", []string{"--lens", "nfw:m200=1e13,c=4", "--source", "0,0"}, 2, "need a [cosmology] table with z_lens and z_source (with --lens: give --zl and --zs)"},
		{"file and flags", []string{write("g.toml", good), "--lens", "sie:theta_e=1", "--source", "0,0"}, 2, "not both"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, stderr, code := runPredict(t, tc.args...)
			if code != tc.code || !strings.Contains(stderr, tc.want) {
				t.Errorf("exit %d, stderr %q; want exit %d and %q", code, stderr, tc.code, tc.want)
			}
		})
	}
}

// FuzzPredictModel: the model parser never panics, every model it accepts
// builds a lens that passes Validate, and writing it back as TOML and
// reading it again gives the same model.
func FuzzPredictModel(f *testing.F) {
	f.Add([]byte("[cosmology]\nz_lens = 0.5\nz_source = 2\nH0 = 70\nOm = 0.3\n[[lens]]\nkind = \"sie\"\ntheta_e = 1.2\nq = 0.8\n"))
	f.Add([]byte("[[lens]]\nkind = \"shear\"\ngamma = 0.1\n"))
	f.Add([]byte("[[lens]]\nkind = \"nfw\"\nkappa_s = 0.2\nr_s = 5\n"))
	f.Add([]byte("[[lens]]\nkind = \"gnfw\"\nkappa_s = 0.2\nr_s = 5\ngamma = 0.5\n[[lens]]\nkind = \"burkert\"\nkappa_s = 0.1\nr_s = 2\nq = 0.9\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		pm, err := parsePredictModel("fuzz.toml", data)
		if err != nil {
			return
		}
		if err := pm.lens.Validate(); err != nil {
			t.Fatalf("accepted model fails Validate: %v", err)
		}
		// Round trip: write the parsed model back as TOML and read it again.
		doc := map[string]any{}
		if c := pm.cosmo; c != nil {
			doc["cosmology"] = map[string]float64{"z_lens": c.zl, "z_source": c.zs, "H0": c.c.H0, "Om": c.c.Om, "Ode": c.c.Ode}
		}
		var lenses []map[string]any
		for _, s := range pm.specs {
			t := map[string]any{"kind": s.Kind}
			if s.Name != "" {
				t["name"] = s.Name
			}
			for k, v := range s.Params {
				t[k] = v
			}
			lenses = append(lenses, t)
		}
		doc["lens"] = lenses
		text, err := toml.Marshal(doc)
		if err != nil {
			t.Fatal(err)
		}
		pm2, err := parsePredictModel("again.toml", text)
		if err != nil {
			t.Fatalf("written model does not parse: %v\n%s", err, text)
		}
		if len(pm2.specs) != len(pm.specs) || (pm.cosmo == nil) != (pm2.cosmo == nil) || (pm.cosmo != nil && *pm.cosmo != *pm2.cosmo) {
			t.Fatalf("round trip changed the model:\n%s", text)
		}
		for i, s := range pm.specs {
			s2 := pm2.specs[i]
			if s.Kind != s2.Kind || s.Name != s2.Name || len(s.Params) != len(s2.Params) {
				t.Fatalf("component %d changed: %+v → %+v", i, s, s2)
			}
			for k, v := range s.Params {
				if s2.Params[k] != v {
					t.Fatalf("component %d %s: %v → %v", i, k, v, s2.Params[k])
				}
			}
		}
	})
}

// TestPredictHaloKinds: gnfw and burkert halos from --lens flags and from a
// model file build the lensmodel components with the parameters given
// (the fit model file's names; gamma defaults to 1), and a GNFW with
// γ = 1 predicts the images of the NFW halo with the same κ_s and r_s
// (lensmodel's NFW is checked against Wright & Brainerd 2000), to 1e-6″
// in position and 1e-5 relative in μ (GNFW's tabulation is ~1e-7).
func TestPredictHaloKinds(t *testing.T) {
	const text = `[[lens]]
kind = "gnfw"
x = 0.1
y = -0.05
kappa_s = 0.9
r_s = 2.0
gamma = 1.5
q = 0.9
pa = 20
[[lens]]
kind = "burkert"
x = 0.3
kappa_s = 0.2
r_s = 1.5
[[lens]]
kind = "shear"
gamma = 0.05
angle = 30
x = 0.2
`
	pm, err := parsePredictModel("halos.toml", []byte(text))
	if err != nil {
		t.Fatal(err)
	}
	if g, ok := pm.lens[0].(lensmodel.GNFW); !ok || g != (lensmodel.GNFW{X: 0.1, Y: -0.05, KappaS: 0.9, Rs: 2, Gamma: 1.5, Q: 0.9, PA: 20}) {
		t.Errorf("component 1 = %#v, want the GNFW of the file", pm.lens[0])
	}
	if b, ok := pm.lens[1].(lensmodel.Burkert); !ok || b != (lensmodel.Burkert{X: 0.3, KappaS: 0.2, Rs: 1.5, Q: 1}) {
		t.Errorf("component 2 = %#v, want the Burkert halo of the file", pm.lens[1])
	}
	if s, ok := pm.lens[2].(lensmodel.Shear); !ok || s != (lensmodel.Shear{Gamma: 0.05, Angle: 30, X: 0.2}) {
		t.Errorf("component 3 = %#v, want the shear of the file", pm.lens[2])
	}

	var gn, nf predictResult
	for _, c := range []struct {
		lens string
		res  *predictResult
	}{
		{"gnfw:kappa_s=1.2,r_s=2,q=0.9,pa=20", &gn},
		{"nfw:kappa_s=1.2,r_s=2,q=0.9,pa=20", &nf},
	} {
		out := filepath.Join(t.TempDir(), "out")
		if _, stderr, code := runPredict(t, "--lens", c.lens, "--source", "0.05,0.02", "-o", out); code != 0 {
			t.Fatalf("--lens %s: exit %d: %s", c.lens, code, stderr)
		}
		b, err := os.ReadFile(filepath.Join(out, "predict.json"))
		if err != nil {
			t.Fatal(err)
		}
		if err := json.Unmarshal(b, c.res); err != nil {
			t.Fatal(err)
		}
	}
	if len(gn.Images) != len(nf.Images) || len(nf.Images) < 3 {
		t.Fatalf("GNFW γ = 1: %d images, NFW: %d; want the same, at least 3", len(gn.Images), len(nf.Images))
	}
	for k := range nf.Images {
		g, n := gn.Images[k], nf.Images[k]
		if math.Hypot(g.X-n.X, g.Y-n.Y) > 1e-6 || math.Abs(g.Mu-n.Mu) > 1e-5*math.Abs(n.Mu) || g.Kind != n.Kind {
			t.Errorf("image %d: GNFW γ = 1 (%g, %g) μ = %g %s; NFW (%g, %g) μ = %g %s", k+1, g.X, g.Y, g.Mu, g.Kind, n.X, n.Y, n.Mu, n.Kind)
		}
	}

	// A cored Burkert halo dense enough to be supercritical has a central
	// image (a maximum) and no singular centre.
	stdout, stderr, code := runPredict(t, "--lens", "burkert:kappa_s=1.5,r_s=1", "--source", "0.1,0")
	if code != 0 {
		t.Fatalf("burkert: exit %d: %s", code, stderr)
	}
	if !strings.Contains(stdout, "3 images") || !strings.Contains(stdout, "maximum") || strings.Contains(stdout, "demagnified") {
		t.Errorf("burkert: want 3 images with a central maximum and no singular-centre note:\n%s", stdout)
	}

	for _, tc := range []struct{ lens, want string }{
		{"gnfw:kappa_s=0.5,r_s=1,gamma=2", "gamma"},
		{"gnfw:kappa_s=0.5", "missing required parameter r_s"},
		{"burkert:kappa_s=0.5,r_s=1,q=0.7", "q: 0.7 is outside the allowed range [0.8165, 1]"},
		{"burkert:kappa_s=0.5,r_s=1,gamma=1", `lens "burkert1" gamma: unknown key`},
	} {
		if _, stderr, code := runPredict(t, "--lens", tc.lens, "--source", "0,0"); code != 2 || !strings.Contains(stderr, tc.want) {
			t.Errorf("--lens %s: exit %d, stderr %q; want exit 2 and %q", tc.lens, code, stderr, tc.want)
		}
	}
}
