package fit

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"deflect/lensmodel"
)

// writeModel writes a model file and an (empty) data file beside it.
func writeModel(t *testing.T, doc string) string {
	t.Helper()
	dir := t.TempDir()
	for _, f := range []string{"band7.csv", "band3.csv"} {
		if err := os.WriteFile(filepath.Join(dir, f), []byte("u,v,re,im,weight\n"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	path := filepath.Join(dir, "model.toml")
	if err := os.WriteFile(path, []byte(doc), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

const exampleModel = `[sky]
pixel = 0.03
size = 256

[[data]]
file = "band7.csv"
label = "band7"
dish = 12.0

[[data]]
file = "band3.csv"
flux_scale = "free"
offset = "free"

[cosmology]
z_lens = 0.55
z_source = 3.0
H0 = 70.0
Om = 0.3

[[lens]]
kind = "sie"
name = "g1"
x = {min = -0.5, max = 0.5}
y = {min = -0.5, max = 0.5}
theta_e = {start = 1.1, min = 0.3, max = 3.0}
q = {start = 0.8, min = 0.2, max = 1.0}
pa = {start = 30.0, min = -90.0, max = 90.0}
core = 0.0

[[lens]]
kind = "shear"
gamma = {min = 0.0, max = 0.3}
angle = {min = -90.0, max = 90.0}

[[source]]
kind = "sersic"
x = {same_as = "g1.x"}
y = {prior = "normal", mean = 0.1, sd = 0.05}
flux = {start = 5.0, min = 0.01, max = 100.0, prior = "log-uniform"}
r_eff = {min = 0.01, max = 1.0}
n = {start = 1.0, min = 0.3, max = 6.0}

[fit]
method = "nested"
seed = 7
`

func TestParseExampleModel(t *testing.T) {
	m, err := ReadModel(writeModel(t, exampleModel))
	if err != nil {
		t.Fatal(err)
	}
	if m.Sky.Pixel != 0.03 || m.Sky.Size != 256 {
		t.Errorf("sky = %+v", m.Sky)
	}
	if len(m.Data) != 2 || m.Data[0].Label != "band7" || m.Data[1].Label != "band3" || m.Data[0].Dish != 12 {
		t.Fatalf("data = %+v", m.Data)
	}
	if !m.Data[1].FluxScale.Free || m.Data[0].FluxScale.Free || m.Data[0].FluxScale.Value != 1 {
		t.Errorf("flux scales: %+v %+v", m.Data[0].FluxScale, m.Data[1].FluxScale)
	}
	if c := m.Cosmology; c == nil || c.ZLens != 0.55 || c.Ode != 0.7 {
		t.Errorf("cosmology = %+v", c)
	}
	if m.Fit.Method != "nested" || m.Fit.Seed != 7 {
		t.Errorf("fit = %+v", m.Fit)
	}
	g1 := m.Lenses[0]
	if g1.Name != "g1" || g1.Params["theta_e"].Value != 1.1 || !g1.Params["theta_e"].Free || g1.Params["core"].Free {
		t.Errorf("g1 = %+v", g1.Params["theta_e"])
	}
	if m.Lenses[1].Name != "shear1" || m.Lenses[1].Params["gamma"].Value != 0.15 {
		t.Errorf("default name/start: %q, gamma start %v (midpoint of [0, 0.3] expected)", m.Lenses[1].Name, m.Lenses[1].Params["gamma"].Value)
	}
	src := m.Sources[0]
	if src.Params["x"].Tied != g1.Params["x"] {
		t.Error("same_as did not tie sersic1.x to g1.x")
	}
	if p := src.Params["y"]; p.Prior != PriorNormal || p.Mean != 0.1 || p.Value != 0.1 {
		t.Errorf("normal prior: %+v", p)
	}
	if p := src.Params["q"]; p.Free || p.Value != 1 {
		t.Errorf("omitted q should be fixed at 1: %+v", p)
	}
	// Free: g1 x y theta_e q pa, shear gamma angle, sersic y flux r_eff n,
	// band3 flux_scale dx dy = 14 (sersic1.x is tied).
	if len(m.Free) != 15-1 {
		var names []string
		for _, q := range m.Free {
			names = append(names, q.Name)
		}
		t.Errorf("%d free parameters %v, want 14", len(m.Free), names)
	}
}

func TestModelErrors(t *testing.T) {
	base := strings.Replace(exampleModel, "[fit]\nmethod = \"nested\"\nseed = 7\n", "", 1)
	tests := []struct {
		name   string
		edit   func(string) string
		want   []string // substrings of the error
		isKey  bool
		onLine int
	}{
		{"unknown key with suggestion", func(s string) string {
			return strings.Replace(s, "theta_e = {start", "thetae = {start", 1)
		}, []string{`lens "g1" thetae`, `did you mean "theta_e"?`}, true, 26},
		{"missing required parameter", func(s string) string {
			return strings.Replace(s, "r_eff = {min = 0.01, max = 1.0}\n", "", 1)
		}, []string{`source "sersic1"`, "missing required parameter r_eff"}, false, 0},
		{"min not below max", func(s string) string {
			return strings.Replace(s, "gamma = {min = 0.0, max = 0.3}", "gamma = {min = 0.3, max = 0.3}", 1)
		}, []string{"min (0.3) must be less than max (0.3)"}, false, 0},
		{"start outside prior", func(s string) string {
			return strings.Replace(s, "start = 1.1,", "start = 4.1,", 1)
		}, []string{"start 4.1 lies outside the prior [0.3, 3]"}, false, 26},
		{"unknown kind", func(s string) string { return strings.Replace(s, `kind = "shear"`, `kind = "shaer"`, 1) },
			[]string{`unknown lens kind "shaer"`, `did you mean "shear"?`}, false, 32},
		{"missing data file", func(s string) string { return strings.Replace(s, `"band3.csv"`, `"band6.csv"`, 1) },
			[]string{"band6.csv", "no such file"}, false, 11},
		{"every flux scale free", func(s string) string {
			return strings.Replace(s, "dish = 12.0\n", "dish = 12.0\nflux_scale = \"free\"\n", 1)
		}, []string{"incompatible options", "flux_scale"}, false, 0},
		{"unknown prior", func(s string) string { return strings.Replace(s, `"log-uniform"`, `"loguniform"`, 1) },
			[]string{`did you mean "log-uniform"?`}, false, 0},
		{"unphysical axis ratio", func(s string) string { return strings.Replace(s, "max = 1.0}\npa", "max = 1.5}\npa", 1) },
			[]string{"1.5 is outside the allowed range (0, 1]"}, false, 0},
		{"tie to unknown parameter", func(s string) string { return strings.Replace(s, `"g1.x"`, `"g2.x"`, 1) },
			[]string{`same_as names unknown parameter "g2.x"`}, false, 0},
		{"syntax error", func(s string) string { return strings.Replace(s, "size = 256", "size = 25 6", 1) },
			[]string{"model.toml:3"}, false, 3},
		{"nfw without parameters", func(s string) string {
			return strings.Replace(s, `kind = "shear"`, "kind = \"nfw\"\n[[lens]]\nkind = \"shear\"", 1)
		}, []string{"give kappa_s and r_s, or m200 and c"}, false, 0},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, err := ReadModel(writeModel(t, tc.edit(base)))
			if err == nil {
				t.Fatal("no error")
			}
			for _, w := range tc.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("error %q lacks %q", err, w)
				}
			}
			if tc.isKey && !errors.Is(err, ErrUnknownKey) {
				t.Errorf("error %q does not wrap ErrUnknownKey", err)
			}
			var me *ModelError
			if !errors.As(err, &me) {
				t.Fatalf("error %T is not a *ModelError", err)
			}
			if tc.onLine > 0 && !strings.Contains(err.Error(), "model.toml:"+itoa(tc.onLine)+":") {
				t.Errorf("error %q does not name line %d", err, tc.onLine)
			}
		})
	}
}

func itoa(n int) string { return strconv.Itoa(n) }
func FuzzParseModel(f *testing.F) {
	f.Add([]byte(exampleModel))
	f.Add([]byte("[[lens]]\nkind = \"sie\"\ntheta_e = {min = 1, max = 0}\n"))
	f.Fuzz(func(t *testing.T, doc []byte) {
		m, err := ParseModel("fuzz.toml", doc)
		if err == nil && (len(m.Lenses) == 0 || len(m.Sources) == 0) {
			t.Fatal("accepted a model without lens or source")
		}
	})
}

func TestKindsHelpListsEveryParameter(t *testing.T) {
	h := KindsHelp()
	for _, kinds := range [][]kindDef{lensKinds, sourceKinds} {
		for _, k := range kinds {
			if !strings.Contains(h, `kind = "`+k.name+`"`) {
				t.Errorf("kinds help lacks kind %q", k.name)
			}
			for _, p := range k.params {
				if !strings.Contains(h, "    "+p.key+" ") {
					t.Errorf("kinds help lacks %s.%s", k.name, p.key)
				}
			}
		}
	}
}

// TestDataOffsetAxes checks the per-axis dx and dy keys bestfit.toml writes,
// and that they exclude offset.
func TestDataOffsetAxes(t *testing.T) {
	doc := strings.Replace(exampleModel, `offset = "free"`, `dx = {start = 0.01, min = -0.1, max = 0.1}
dy = -0.02`, 1)
	m, err := ParseModel(writeModel(t, doc), []byte(doc))
	if err != nil {
		t.Fatal(err)
	}
	d := m.Data[1]
	if !d.DX.Free || d.DX.Value != 0.01 || d.DY.Free || d.DY.Value != -0.02 || d.DX.Name != "band3.dx" {
		t.Errorf("dx %+v, dy %+v", *d.DX, *d.DY)
	}
	bad := strings.Replace(exampleModel, `offset = "free"`, `offset = "free"
dx = 0.1`, 1)
	if _, err := ParseModel(writeModel(t, bad), []byte(bad)); err == nil || !strings.Contains(err.Error(), "not both") {
		t.Errorf("offset with dx: err = %v", err)
	}
}

// TestLensOnlyModel: ReadLensModel needs only [[lens]] tables; [[data]] and
// [[source]] may be missing, a data file that does not exist is accepted,
// but every table present is still checked for unknown keys; free
// parameters start at their start or the prior's centre (midpoint,
// normal mean, geometric mean), and an NFW halo given by m200 and c gets
// lensmodel's κ_s and r_s for the cosmology.
func TestLensOnlyModel(t *testing.T) {
	const doc = `[cosmology]
z_lens = 0.3
z_source = 1.5

[[data]]
file = "not-there.csv"

[[lens]]
kind = "nfw"
name = "halo"
x = {min = -1, max = 0.5}
y = {prior = "normal", mean = 0.2, sd = 0.1}
m200 = {prior = "log-uniform", min = 1e13, max = 1e15}
c = 5

[[lens]]
kind = "shear"
gamma = 0.05
x = {same_as = "halo.x"}
`
	path := writeModel(t, doc)
	if _, err := ReadModel(path); err == nil || !strings.Contains(err.Error(), "not-there.csv") || !strings.Contains(err.Error(), "no source") {
		t.Errorf("ReadModel: %v; want the missing data file and source reported", err)
	}
	m, err := ReadLensModel(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(m.Lenses) != 2 || len(m.Sources) != 0 || len(m.Data) != 1 || m.Cosmology == nil {
		t.Fatalf("lenses %d, sources %d, data %d, cosmology %v", len(m.Lenses), len(m.Sources), len(m.Data), m.Cosmology)
	}
	theta := m.Start()
	want := []float64{-0.25, 0.2, 1e14} // midpoint, mean, √(1e13 × 1e15)
	if len(theta) != len(want) {
		t.Fatalf("start %v, want %v", theta, want)
	}
	for i := range want {
		if math.Abs(theta[i]-want[i]) > 1e-12*math.Abs(want[i]) {
			t.Errorf("start[%d] (%s) = %g, want %g", i, m.Free[i].Name, theta[i], want[i])
		}
	}
	l, err := m.Lens(theta)
	if err != nil {
		t.Fatal(err)
	}
	ks, rs := lensmodel.FlatLambdaCDM(70, 0.3).NFWFromM200(1e14, 5, 0.3, 1.5)
	if n, ok := l[0].(lensmodel.NFW); !ok || n.KappaS != ks || n.Rs != rs || n.X != -0.25 || n.Y != 0.2 || n.Q != 1 {
		t.Errorf("halo = %#v, want NFW with κ_s = %g, r_s = %g at (-0.25, 0.2)", l[0], ks, rs)
	}
	if s, ok := l[1].(lensmodel.Shear); !ok || s.X != -0.25 || s.Gamma != 0.05 {
		t.Errorf("shear = %#v, want its centre tied to the halo's x", l[1])
	}

	for _, tc := range []struct{ name, doc, want string }{
		{"no lens", "[cosmology]\nz_lens = 0.3\nz_source = 1\n", "no lens"},
		{"data key", "[[data]]\nfile = \"x.csv\"\nlabl = \"a\"\n[[lens]]\nkind = \"point\"\ntheta_e = 1\n", `:3: [[data]] #1 labl: unknown key (did you mean "label"?)`},
		{"source key", "[[source]]\nkind = \"point\"\nflux = 1\nxx = 0\n[[lens]]\nkind = \"point\"\ntheta_e = 1\n", `:4: source "point2" xx: unknown key`},
		{"m200 without cosmology", "[[lens]]\nkind = \"nfw\"\nm200 = 1e14\nc = 4\n", "need a [cosmology]"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			_, err := ParseModelOptions{LensOnly: true}.Parse("lens.toml", []byte(tc.doc))
			if err == nil || !strings.Contains(err.Error(), tc.want) {
				t.Errorf("error %v, want %q", err, tc.want)
			}
		})
	}
}

func TestNoDataModel(t *testing.T) {
	doc := `[[lens]]
kind = "sie"
theta_e = 1.0
[[source]]
kind = "sersic"
flux = 1.0
r_eff = 0.1
`
	if _, err := ParseModel("sim.toml", []byte(doc)); err == nil {
		t.Error("ParseModel accepted a model without [[data]]")
	}
	m, err := ParseModelOptions{NoData: true}.Parse("sim.toml", []byte(doc))
	if err != nil {
		t.Fatal(err)
	}
	if len(m.Data) != 0 || len(m.Sources) != 1 {
		t.Errorf("got %d datasets, %d sources", len(m.Data), len(m.Sources))
	}
	if _, err := (ParseModelOptions{NoData: true}).Parse("sim.toml", []byte("[[lens]]\nkind = \"sie\"\ntheta_e = 1.0\n")); err == nil {
		t.Error("NoData accepted a model without a source")
	}
}
