package main

// The model file read here is the subset of the fit model file (see the fit
// issue's format) that predict needs: [cosmology] and [[lens]] tables with
// plain-number parameters. The fit package will own the model file; predict
// will then switch to its reader and this file will go.

import (
	"errors"
	"fmt"
	"math"
	"os"
	"sort"
	"strconv"
	"strings"

	"github.com/pelletier/go-toml/v2"

	"deflect/lensmodel"
)

// predictLensSpec is one [[lens]] table or --lens flag: a kind and its numbers.
type predictLensSpec struct {
	Kind   string             `json:"kind"`
	Name   string             `json:"name,omitempty"`
	Params map[string]float64 `json:"params"`
	where  string             // "file:line" or "--lens" for messages
	ties   map[string]predictTie
}

// predictCosmo is the [cosmology] table.
type predictCosmo struct {
	c      lensmodel.Cosmology
	zl, zs float64
}

// predictModel is a parsed model.
type predictModel struct {
	specs []predictLensSpec
	lens  lensmodel.Lens
	cosmo *predictCosmo // nil when the file has no [cosmology]
}

// predictLensKinds lists, per kind, the parameters it takes and their defaults;
// NaN marks a required parameter.
var predictLensKinds = map[string]map[string]float64{
	"point":    {"x": 0, "y": 0, "theta_e": math.NaN()},
	"sie":      {"x": 0, "y": 0, "theta_e": math.NaN(), "q": 1, "pa": 0, "core": 0},
	"powerlaw": {"x": 0, "y": 0, "theta_e": math.NaN(), "q": 1, "pa": 0, "slope": 2},
	// kappa_s and r_s, or m200 (M_sun) and c with the cosmology; see build.
	"nfw":     {"x": 0, "y": 0, "kappa_s": math.NaN(), "r_s": math.NaN(), "m200": math.NaN(), "c": math.NaN(), "q": 1, "pa": 0},
	"gnfw":    {"x": 0, "y": 0, "kappa_s": math.NaN(), "r_s": math.NaN(), "gamma": 1, "q": 1, "pa": 0},
	"burkert": {"x": 0, "y": 0, "kappa_s": math.NaN(), "r_s": math.NaN(), "q": 1, "pa": 0},
	"shear":   {"gamma": math.NaN(), "angle": 0, "x": 0, "y": 0},
	"sheet":   {"kappa": math.NaN()},
}

var predictCosmologyKeys = []string{"z_lens", "z_source", "H0", "Om", "Ode"}

// predictFitSections are the model-file sections of the fit command, which
// predict reads past.
var predictFitSections = map[string]bool{"sky": true, "data": true, "source": true, "fit": true}

// readPredictModel reads and checks a model file.
func readPredictModel(path string) (*predictModel, error) {
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	return parsePredictModel(path, data)
}

func parsePredictModel(name string, data []byte) (*predictModel, error) {
	var doc map[string]any
	if err := toml.Unmarshal(data, &doc); err != nil {
		var de *toml.DecodeError
		if errors.As(err, &de) {
			row, col := de.Position()
			return nil, fmt.Errorf("%s:%d:%d: %v", name, row, col, de)
		}
		return nil, fmt.Errorf("%s: %v", name, err)
	}
	lines := predictKeyLines(data)
	at := func(path string) string {
		if l, ok := lines[path]; ok {
			return fmt.Sprintf("%s:%d", name, l)
		}
		return name
	}
	top := predictSortedKeys(doc)
	pm := &predictModel{}
	for _, k := range top {
		switch {
		case k == "cosmology", k == "lens", predictFitSections[k]:
		default:
			return nil, fmt.Errorf("%s: unknown section or key %q%s (want [cosmology] and [[lens]] tables)", at(k), k, predictSuggest(k, []string{"cosmology", "lens"}))
		}
	}
	if v, ok := doc["cosmology"]; ok {
		t, ok := v.(map[string]any)
		if !ok {
			return nil, fmt.Errorf("%s: cosmology: want a [cosmology] table", at("cosmology"))
		}
		c, err := predictParseCosmology(t, func(k string) string { return at("cosmology." + k) }, at("cosmology"))
		if err != nil {
			return nil, err
		}
		pm.cosmo = c
	}
	raw, ok := doc["lens"]
	if !ok {
		return nil, fmt.Errorf("%s: no [[lens]] tables", name)
	}
	tables, ok := raw.([]any)
	if !ok {
		return nil, fmt.Errorf("%s: lens: want [[lens]] tables", at("lens"))
	}
	for i, v := range tables {
		t, ok := v.(map[string]any)
		if !ok {
			return nil, fmt.Errorf("%s: lens %d: want a table", at("lens"), i+1)
		}
		prefix := fmt.Sprintf("lens.%d", i)
		spec, err := predictParseLensTable(t, i+1, func(k string) string {
			if k == "" {
				return at(prefix)
			}
			return at(prefix + "." + k)
		})
		if err != nil {
			return nil, err
		}
		pm.specs = append(pm.specs, spec)
	}
	if err := predictResolveTies(pm.specs); err != nil {
		return nil, err
	}
	if err := pm.build(); err != nil {
		return nil, err
	}
	return pm, nil
}

// predictNumber converts a TOML value to float64. A table (a free parameter of
// the fit format) gives its start value.
func predictNumber(v any) (float64, error) {
	switch x := v.(type) {
	case int64:
		return float64(x), nil
	case float64:
		return x, nil
	case map[string]any:
		if s, ok := x["start"]; ok {
			return predictNumber(s)
		}
		return 0, errors.New("is a free parameter without a start value; predict needs a number")
	}
	return 0, fmt.Errorf("is %v, want a number", v)
}

func predictParseCosmology(t map[string]any, at func(string) string, where string) (*predictCosmo, error) {
	vals := map[string]float64{}
	for _, k := range predictSortedKeys(t) {
		if !predictContains(predictCosmologyKeys, k) {
			return nil, fmt.Errorf("%s: cosmology: unknown key %q%s (want %s)", at(k), k, predictSuggest(k, predictCosmologyKeys), strings.Join(predictCosmologyKeys, ", "))
		}
		x, err := predictNumber(t[k])
		if err != nil {
			return nil, fmt.Errorf("%s: cosmology: %s %v", at(k), k, err)
		}
		vals[k] = x
	}
	for _, k := range []string{"z_lens", "z_source", "H0", "Om"} {
		if _, ok := vals[k]; !ok {
			return nil, fmt.Errorf("%s: cosmology: missing %s", where, k)
		}
	}
	c := &predictCosmo{zl: vals["z_lens"], zs: vals["z_source"], c: lensmodel.FlatLambdaCDM(vals["H0"], vals["Om"])}
	if ode, ok := vals["Ode"]; ok {
		c.c.Ode = ode
	}
	if err := c.check(); err != nil {
		return nil, fmt.Errorf("%s: %v", where, err)
	}
	return c, nil
}

func (c *predictCosmo) check() error {
	if err := c.c.Validate(); err != nil {
		return err
	}
	if !(c.zl > 0) || !(c.zs > c.zl) || math.IsInf(c.zs, 0) {
		return fmt.Errorf("cosmology: z_lens = %v, z_source = %v, want 0 < z_lens < z_source", c.zl, c.zs)
	}
	return nil
}

func predictParseLensTable(t map[string]any, index int, at func(string) string) (predictLensSpec, error) {
	spec := predictLensSpec{Params: map[string]float64{}, where: at("")}
	kv, ok := t["kind"]
	if !ok {
		return spec, fmt.Errorf("%s: lens %d: missing kind (want one of %s)", at(""), index, predictKindList())
	}
	kind, ok := kv.(string)
	if !ok {
		return spec, fmt.Errorf("%s: lens %d: kind must be a string", at("kind"), index)
	}
	allowed, ok := predictLensKinds[kind]
	if !ok {
		return spec, fmt.Errorf("%s: lens %d: unknown kind %q%s (want one of %s)", at("kind"), index, kind, predictSuggest(kind, predictSortedKeys(predictLensKinds)), predictKindList())
	}
	spec.Kind = kind
	for _, k := range predictSortedKeys(t) {
		switch k {
		case "kind":
			continue
		case "name":
			s, ok := t[k].(string)
			if !ok {
				return spec, fmt.Errorf("%s: lens %d: name must be a string", at(k), index)
			}
			spec.Name = s
			continue
		}
		if _, ok := allowed[k]; !ok {
			return spec, fmt.Errorf("%s: lens %d (%s): unknown key %q%s (want %s)", at(k), index, kind, k, predictSuggest(k, predictSortedKeys(allowed)), strings.Join(predictSortedKeys(allowed), ", "))
		}
		if tab, ok := t[k].(map[string]any); ok {
			if to, ok := tab["same_as"]; ok {
				ref, ok := to.(string)
				if !ok {
					return spec, fmt.Errorf("%s: lens %d (%s): %s: same_as must be a string like \"g1.x\"", at(k), index, kind, k)
				}
				if spec.ties == nil {
					spec.ties = map[string]predictTie{}
				}
				spec.ties[k] = predictTie{ref: ref, where: at(k)}
				continue
			}
		}
		x, err := predictNumber(t[k])
		if err != nil {
			return spec, fmt.Errorf("%s: lens %d (%s): %s %v", at(k), index, kind, k, err)
		}
		spec.Params[k] = x
	}
	return spec, nil
}

// predictTie is a parameter tied to another component's, same_as = "NAME.KEY".
type predictTie struct {
	ref   string
	where string
}

// predictResolveTies copies tied parameters from the components they name,
// following chains of ties.
func predictResolveTies(specs []predictLensSpec) error {
	byName := map[string]int{}
	for i, s := range specs {
		if s.Name != "" {
			byName[s.Name] = i
		}
	}
	for i := range specs {
		for k, tie := range specs[i].ties {
			ref := tie.ref
			for hops := 0; ; hops++ {
				name, key, ok := strings.Cut(ref, ".")
				j, found := byName[name]
				if !ok || !found {
					return fmt.Errorf("%s: %s: same_as = %q names no lens component (want NAME.KEY with a named [[lens]])", tie.where, k, tie.ref)
				}
				if v, ok := specs[j].Params[key]; ok {
					specs[i].Params[k] = v
					break
				}
				next, ok := specs[j].ties[key]
				if !ok || hops > len(specs) {
					return fmt.Errorf("%s: %s: same_as = %q: %s has no number for %s", tie.where, k, tie.ref, name, key)
				}
				ref = next.ref
			}
		}
	}
	return nil
}

// predictParseLensFlag parses --lens 'kind:key=value,key=value'.
func predictParseLensFlag(s string) (predictLensSpec, error) {
	kind, rest, _ := strings.Cut(s, ":")
	kind = strings.TrimSpace(kind)
	spec := predictLensSpec{Kind: kind, Params: map[string]float64{}, where: "--lens " + s}
	allowed, ok := predictLensKinds[kind]
	if !ok {
		return spec, fmt.Errorf("--lens %q: unknown kind %q%s (want one of %s)", s, kind, predictSuggest(kind, predictSortedKeys(predictLensKinds)), predictKindList())
	}
	for _, f := range strings.Split(rest, ",") {
		f = strings.TrimSpace(f)
		if f == "" {
			continue
		}
		k, v, ok := strings.Cut(f, "=")
		k = strings.TrimSpace(k)
		if !ok {
			return spec, fmt.Errorf("--lens %q: %q is not key=value", s, f)
		}
		if _, ok := allowed[k]; !ok {
			return spec, fmt.Errorf("--lens %q: unknown key %q%s for %s (want %s)", s, k, predictSuggest(k, predictSortedKeys(allowed)), kind, strings.Join(predictSortedKeys(allowed), ", "))
		}
		x, err := strconv.ParseFloat(strings.TrimSpace(v), 64)
		if err != nil {
			return spec, fmt.Errorf("--lens %q: %s = %q is not a number", s, k, v)
		}
		spec.Params[k] = x
	}
	return spec, nil
}

// build turns the specs into the lens, with the cosmology for NFW halos
// given by mass and concentration.
func (pm *predictModel) build() error {
	pm.lens = pm.lens[:0]
	for i, s := range pm.specs {
		m, err := s.component(pm.cosmo)
		if err != nil {
			return fmt.Errorf("%s: lens %d (%s): %w", s.where, i+1, s.Kind, err)
		}
		if v, ok := m.(lensmodel.Validator); ok {
			if err := v.Validate(); err != nil {
				return fmt.Errorf("%s: lens %d: %w", s.where, i+1, err)
			}
		}
		pm.lens = append(pm.lens, m)
	}
	return nil
}

func (s predictLensSpec) component(cosmo *predictCosmo) (lensmodel.Mass, error) {
	p := map[string]float64{}
	var missing []string
	for k, d := range predictLensKinds[s.Kind] {
		v, ok := s.Params[k]
		if !ok {
			v = d
		}
		p[k] = v
		if math.IsNaN(v) && !(s.Kind == "nfw" && (k == "kappa_s" || k == "r_s" || k == "m200" || k == "c")) {
			missing = append(missing, k)
		}
	}
	if len(missing) > 0 {
		sort.Strings(missing)
		return nil, fmt.Errorf("missing %s", strings.Join(missing, ", "))
	}
	switch s.Kind {
	case "point":
		return lensmodel.PointMass{X: p["x"], Y: p["y"], ThetaE: p["theta_e"]}, nil
	case "sie":
		return lensmodel.SIE{X: p["x"], Y: p["y"], ThetaE: p["theta_e"], Q: p["q"], PA: p["pa"], Core: p["core"]}, nil
	case "powerlaw":
		return lensmodel.PowerLaw{X: p["x"], Y: p["y"], ThetaE: p["theta_e"], Q: p["q"], PA: p["pa"], Slope: p["slope"]}, nil
	case "nfw":
		_, hasK := s.Params["kappa_s"]
		_, hasR := s.Params["r_s"]
		_, hasM := s.Params["m200"]
		_, hasC := s.Params["c"]
		switch {
		case hasK && hasR && !hasM && !hasC:
		case hasM && hasC && !hasK && !hasR:
			if cosmo == nil {
				return nil, errors.New("m200 and c need a [cosmology] table (or --zl and --zs)")
			}
			if !(p["m200"] > 0) || !(p["c"] > 0) {
				return nil, fmt.Errorf("m200 = %v, c = %v, want both > 0", p["m200"], p["c"])
			}
			p["kappa_s"], p["r_s"] = cosmo.c.NFWFromM200(p["m200"], p["c"], cosmo.zl, cosmo.zs)
		default:
			return nil, errors.New("give either kappa_s and r_s, or m200 and c")
		}
		return lensmodel.NFW{X: p["x"], Y: p["y"], KappaS: p["kappa_s"], Rs: p["r_s"], Q: p["q"], PA: p["pa"]}, nil
	case "gnfw":
		return lensmodel.GNFW{X: p["x"], Y: p["y"], KappaS: p["kappa_s"], Rs: p["r_s"], Gamma: p["gamma"], Q: p["q"], PA: p["pa"]}, nil
	case "burkert":
		return lensmodel.Burkert{X: p["x"], Y: p["y"], KappaS: p["kappa_s"], Rs: p["r_s"], Q: p["q"], PA: p["pa"]}, nil
	case "shear":
		return lensmodel.Shear{Gamma: p["gamma"], Angle: p["angle"], X: p["x"], Y: p["y"]}, nil
	case "sheet":
		return lensmodel.Sheet{KappaExt: p["kappa"]}, nil
	}
	panic("deflect: unhandled lens kind " + s.Kind)
}

// predictKeyLines maps "section.key", "array.N.key", "section" and "array.N" to
// their 1-based line in a TOML document of the simple form model files
// take (one key per line; multi-line values are not indexed beyond their
// first line).
func predictKeyLines(data []byte) map[string]int {
	out := map[string]int{}
	counts := map[string]int{}
	sec := ""
	for i, line := range strings.Split(string(data), "\n") {
		t := strings.TrimSpace(predictStripComment(line))
		switch {
		case strings.HasPrefix(t, "[["):
			name := strings.TrimSpace(strings.TrimSuffix(strings.TrimPrefix(t, "[["), "]]"))
			sec = fmt.Sprintf("%s.%d", name, counts[name])
			counts[name]++
			out[sec] = i + 1
			if _, ok := out[name]; !ok {
				out[name] = i + 1
			}
		case strings.HasPrefix(t, "["):
			sec = strings.TrimSpace(strings.TrimSuffix(strings.TrimPrefix(t, "["), "]"))
			out[sec] = i + 1
		default:
			k, _, ok := strings.Cut(t, "=")
			if !ok {
				continue
			}
			k = strings.Trim(strings.TrimSpace(k), `"'`)
			path := k
			if sec != "" {
				path = sec + "." + k
			}
			if _, ok := out[path]; !ok {
				out[path] = i + 1
			}
		}
	}
	return out
}

// predictStripComment removes a # comment outside quoted strings.
func predictStripComment(s string) string {
	var quote rune
	for i, r := range s {
		switch {
		case quote != 0 && r == quote:
			quote = 0
		case quote == 0 && (r == '"' || r == '\''):
			quote = r
		case quote == 0 && r == '#':
			return s[:i]
		}
	}
	return s
}

func predictSortedKeys[V any](m map[string]V) []string {
	ks := make([]string, 0, len(m))
	for k := range m {
		ks = append(ks, k)
	}
	sort.Strings(ks)
	return ks
}

func predictContains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

func predictKindList() string { return strings.Join(predictSortedKeys(predictLensKinds), ", ") }

// predictSuggest returns `; did you mean "x"?` for the closest candidate within
// edit distance 2, or "".
func predictSuggest(s string, candidates []string) string {
	best, bd := "", 3
	for _, c := range candidates {
		if d := predictEditDistance(strings.ToLower(s), strings.ToLower(c)); d < bd {
			best, bd = c, d
		}
	}
	if best == "" {
		return ""
	}
	return fmt.Sprintf("; did you mean %q?", best)
}

// predictEditDistance is the Levenshtein distance between a and b.
func predictEditDistance(a, b string) int {
	ra, rb := []rune(a), []rune(b)
	prev := make([]int, len(rb)+1)
	cur := make([]int, len(rb)+1)
	for j := range prev {
		prev[j] = j
	}
	for i := 1; i <= len(ra); i++ {
		cur[0] = i
		for j := 1; j <= len(rb); j++ {
			c := 1
			if ra[i-1] == rb[j-1] {
				c = 0
			}
			cur[j] = min(prev[j]+1, cur[j-1]+1, prev[j-1]+c)
		}
		prev, cur = cur, prev
	}
	return prev[len(rb)]
}
