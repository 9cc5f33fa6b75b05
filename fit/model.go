package fit

import (
	"errors"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strings"
)

// Model is a validated model file: the sky grid, the datasets, the
// cosmology, the lens and source components and the fit settings. Every
// number is in the units of ../shared/conventions.md as written in the file
// (fluxes in mJy, angles in degrees, lengths in arcsec).
type Model struct {
	// Path is the model file; data files are relative to its directory.
	Path      string
	Sky       Sky
	Data      []Data
	Cosmology *Cosmology
	Lenses    []Component
	Sources   []Component
	Fit       Settings

	// Params lists every parameter of the model in file order; Free the
	// free ones, which make up the parameter vector of a fit.
	Params []*Param
	Free   []*Param
}

// Sky is the [sky] table: the grid shared by all datasets. Zero values mean
// "use inspect's suggestion".
type Sky struct {
	Pixel  float64 // arcsec
	Size   int     // pixels on a side, even
	X0, Y0 float64 // grid centre, arcsec east and north of the phase centre
	// RefFreq is the frequency in Hz at which source fluxes are quoted and
	// spectral indices pivot; 0 means the first dataset's frequency.
	RefFreq float64
}

// Data is one [[data]] table.
type Data struct {
	File  string // resolved path
	Label string
	Dish  float64 // metres; 0 = take the table's metadata
	Freq  float64 // Hz; 0 = take the table's metadata
	// FluxScale multiplies this dataset's model (relative flux calibration).
	FluxScale *Param
	// DX, DY shift this dataset's model by an astrometric offset (arcsec).
	DX, DY *Param
	// NoiseScale multiplies the stated σ of every visibility; EstimateNoise
	// asks for inspect's weight-scale estimate instead.
	NoiseScale    *Param
	EstimateNoise bool
	// FreqGroups is the number of frequency groups (0 = automatic).
	FreqGroups int
	Line       int
}

// Cosmology is the [cosmology] table.
type Cosmology struct {
	ZLens, ZSource float64
	H0             float64 // km/s/Mpc
	Om, Ode        float64
}

// Component is one [[lens]] or [[source]] table.
type Component struct {
	Kind string
	Name string
	// Params maps a parameter key ("theta_e") to its parameter; omitted
	// optional parameters are present, fixed at their defaults, except
	// those of an unused alternative group.
	Params map[string]*Param
	// Settings holds the non-parameter keys of kinds that have them.
	Settings map[string]any
	Line     int
}

// Settings is the [fit] table.
type Settings struct {
	Method     string // "optimize", "mcmc" or "nested"
	Seed       uint64
	LivePoints int     // nested: live points (0 = default)
	Walkers    int     // mcmc: walkers (0 = default)
	MaxSteps   int     // mcmc: cap on steps (0 = default)
	Starts     int     // optimize: starts (0 = default)
	DLogZ      float64 // nested: stop when the live points could add less (0 = default)
}

// PriorKind names a prior distribution.
type PriorKind string

// The priors a free parameter may carry.
const (
	PriorUniform    PriorKind = "uniform"
	PriorNormal     PriorKind = "normal"
	PriorLogUniform PriorKind = "log-uniform"
)

// Param is one model parameter.
type Param struct {
	// Name is "component.key", e.g. "g1.theta_e", or "label.flux_scale".
	Name string
	// Value is the fixed value, or the starting value of a free parameter.
	Value float64
	Free  bool
	Prior PriorKind
	// Min and Max bound the prior (±Inf where a normal prior is not
	// truncated); Mean and SD parameterise a normal prior.
	Min, Max, Mean, SD float64
	// SameAs names the parameter this one is tied to; Tied points to it.
	SameAs string
	Tied   *Param
	Line   int
}

// ModelError is a problem with a model file, at a line and key.
type ModelError struct {
	File string
	Line int
	Key  string // the key or table at fault, e.g. `lens "g1": theta_e`
	Err  error
}

func (e *ModelError) Error() string {
	var b strings.Builder
	b.WriteString(e.File)
	if e.Line > 0 {
		fmt.Fprintf(&b, ":%d", e.Line)
	}
	if e.Key != "" {
		fmt.Fprintf(&b, ": %s", e.Key)
	}
	fmt.Fprintf(&b, ": %v", e.Err)
	return b.String()
}

func (e *ModelError) Unwrap() error { return e.Err }

// ErrUnknownKey is wrapped by errors about keys the model file does not
// define.
var ErrUnknownKey = errors.New("unknown key")

// ReadModel reads and validates the model file at path. Data files are
// checked to exist but not read.
func ReadModel(path string) (*Model, error) {
	doc, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	return ParseModel(path, doc)
}

// ParseModel validates the model file contents doc, named path (data files
// are relative to its directory). All problems found are returned together,
// joined, each a *ModelError.
func ParseModel(path string, doc []byte) (*Model, error) {
	return ParseModelOptions{}.Parse(path, doc)
}

// ReadLensModel reads the model file at path for a command that needs only
// the lens and the cosmology (deflect predict): see
// ParseModelOptions.LensOnly.
func ReadLensModel(path string) (*Model, error) {
	doc, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	return ParseModelOptions{LensOnly: true}.Parse(path, doc)
}

// ParseModelOptions selects how much of a model file ParseModelOptions.Parse
// requires.
type ParseModelOptions struct {
	// LensOnly reads a model file for the lens and the cosmology alone: at
	// least one [[lens]] table is required, [cosmology] stays optional
	// (needed only by NFW halos given by m200 and c), and [[data]] and
	// [[source]] tables are not required. When present, every table is
	// still validated for syntax, keys, values and ties as by ParseModel,
	// except that data files need not exist (they are not read, and a model
	// file may be used for predictions before its data arrive).
	LensOnly bool
	// NoData accepts a model file without [[data]] tables (a model to
	// simulate before anything is observed); lenses and sources are
	// required as by ParseModel.
	NoData bool
}

// Parse validates the model file contents doc, named path, as ParseModel
// does, with the requirements of o.
func (o ParseModelOptions) Parse(path string, doc []byte) (*Model, error) {
	root, err := parseTOML(doc)
	if err != nil {
		var te *tomlError
		if errors.As(err, &te) {
			return nil, &ModelError{File: path, Line: te.line, Err: errors.New(te.msg)}
		}
		return nil, &ModelError{File: path, Err: err}
	}
	p := &modelParser{file: path, dir: filepath.Dir(path), m: &Model{Path: path}, lensOnly: o.LensOnly, noData: o.NoData}
	p.parse(root)
	if len(p.errs) > 0 {
		return nil, errors.Join(p.errs...)
	}
	return p.m, nil
}

type modelParser struct {
	file string
	dir  string
	m    *Model
	errs []error
	// lensOnly: see ParseModelOptions.LensOnly.
	lensOnly bool
	// noData: see ParseModelOptions.NoData.
	noData bool
}

func (p *modelParser) errorf(line int, key, format string, a ...any) {
	p.errs = append(p.errs, &ModelError{File: p.file, Line: line, Key: key, Err: fmt.Errorf(format, a...)})
}

func (p *modelParser) unknown(line int, where, key string, known []string) {
	msg := ErrUnknownKey.Error()
	if s := suggest(key, known); s != "" {
		msg += fmt.Sprintf(" (did you mean %q?)", s)
	} else {
		msg += fmt.Sprintf(" (known: %s)", strings.Join(known, ", "))
	}
	p.errs = append(p.errs, &ModelError{File: p.file, Line: line, Key: strings.TrimSpace(where + " " + key),
		Err: fmt.Errorf("%w%s", ErrUnknownKey, strings.TrimPrefix(msg, ErrUnknownKey.Error()))})
}

// checkKeys reports every key of t not in known.
func (p *modelParser) checkKeys(t *table, where string, known []string) {
	for _, k := range t.keys {
		if !contains(known, k) {
			p.unknown(t.vals[k].line, where, k, known)
		}
	}
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

func (p *modelParser) parse(root *table) {
	p.checkKeys(root, "", []string{"sky", "data", "cosmology", "lens", "source", "fit"})
	if v, ok := root.get("sky"); ok {
		if t := p.asTable(v, "[sky]"); t != nil {
			p.parseSky(t)
		}
	}
	for i, t := range p.tableArray(root, "data") {
		p.parseData(t, i)
	}
	if len(p.m.Data) == 0 && !p.lensOnly && !p.noData {
		p.errorf(0, "[[data]]", "no dataset: add at least one [[data]] table with a file")
	}
	if v, ok := root.get("cosmology"); ok {
		if t := p.asTable(v, "[cosmology]"); t != nil {
			p.parseCosmology(t)
		}
	}
	for _, t := range p.tableArray(root, "lens") {
		if c, ok := p.parseComponent(t, "lens", lensKinds); ok {
			p.m.Lenses = append(p.m.Lenses, c)
		}
	}
	for _, t := range p.tableArray(root, "source") {
		if c, ok := p.parseComponent(t, "source", sourceKinds); ok {
			p.m.Sources = append(p.m.Sources, c)
		}
	}
	if len(p.m.Lenses) == 0 {
		p.errorf(0, "[[lens]]", "no lens: add at least one [[lens]] table")
	}
	if len(p.m.Sources) == 0 && !p.lensOnly {
		p.errorf(0, "[[source]]", "no source: add at least one [[source]] table")
	}
	p.m.Fit = Settings{Method: "nested", Seed: 1}
	if v, ok := root.get("fit"); ok {
		if t := p.asTable(v, "[fit]"); t != nil {
			p.parseFit(t)
		}
	}
	p.crossChecks()
	p.resolveTies()
}

func (p *modelParser) asTable(v *value, where string) *table {
	if v.kind != kindTable {
		p.errorf(v.line, where, "expected a table, found %v", v.kind)
		return nil
	}
	return v.table
}

func (p *modelParser) tableArray(root *table, key string) []*table {
	v, ok := root.get(key)
	if !ok {
		return nil
	}
	if v.kind != kindArray || len(v.arr) == 0 || v.arr[0].kind != kindTable {
		p.errorf(v.line, key, "expected [[%s]] tables", key)
		return nil
	}
	ts := make([]*table, len(v.arr))
	for i, e := range v.arr {
		ts[i] = e.table
	}
	return ts
}

func (p *modelParser) number(t *table, key, where string) (float64, int, bool) {
	v, ok := t.get(key)
	if !ok {
		return 0, 0, false
	}
	if v.kind != kindNumber {
		p.errorf(v.line, where+" "+key, "expected a number, found %v", v.kind)
		return 0, v.line, false
	}
	if math.IsNaN(v.num) || math.IsInf(v.num, 0) {
		p.errorf(v.line, where+" "+key, "expected a finite number, found %v", v.num)
		return 0, v.line, false
	}
	return v.num, v.line, true
}

func (p *modelParser) integer(t *table, key, where string, min int) (int, bool) {
	x, line, ok := p.number(t, key, where)
	if !ok {
		return 0, false
	}
	if x != math.Trunc(x) || x < float64(min) || x > 1<<31 {
		p.errorf(line, where+" "+key, "expected a whole number ≥ %d, found %v", min, x)
		return 0, false
	}
	return int(x), true
}

func (p *modelParser) str(t *table, key, where string) (string, int, bool) {
	v, ok := t.get(key)
	if !ok {
		return "", 0, false
	}
	if v.kind != kindString {
		p.errorf(v.line, where+" "+key, "expected a string, found %v", v.kind)
		return "", v.line, false
	}
	return v.str, v.line, true
}

func (p *modelParser) parseSky(t *table) {
	p.checkKeys(t, "[sky]", []string{"pixel", "size", "x0", "y0", "ref_freq"})
	if x, line, ok := p.number(t, "ref_freq", "[sky]"); ok {
		if x <= 0 {
			p.errorf(line, "[sky] ref_freq", "expected a frequency > 0 Hz, found %v", x)
		}
		p.m.Sky.RefFreq = x
	}
	if x, line, ok := p.number(t, "pixel", "[sky]"); ok {
		if x <= 0 {
			p.errorf(line, "[sky] pixel", "expected a pixel size > 0 arcsec, found %v", x)
		}
		p.m.Sky.Pixel = x
	}
	if n, ok := p.integer(t, "size", "[sky]", 8); ok {
		if n%2 != 0 {
			p.errorf(t.vals["size"].line, "[sky] size", "expected an even number of pixels, found %d", n)
		}
		p.m.Sky.Size = n
	}
	p.m.Sky.X0, _, _ = p.number(t, "x0", "[sky]")
	p.m.Sky.Y0, _, _ = p.number(t, "y0", "[sky]")
}

func (p *modelParser) parseData(t *table, i int) {
	where := fmt.Sprintf("[[data]] #%d", i+1)
	p.checkKeys(t, where, []string{"file", "label", "dish", "freq", "flux_scale", "offset", "dx", "dy", "noise_scale", "freq_groups"})
	d := Data{Line: t.line}
	file, line, ok := p.str(t, "file", where)
	switch {
	case !ok && line == 0:
		p.errorf(t.line, where, "missing required key file")
	case ok:
		if !filepath.IsAbs(file) {
			file = filepath.Join(p.dir, file)
		}
		if _, err := os.Stat(file); err != nil && !p.lensOnly {
			p.errorf(line, where+" file", "data file %s: %v", file, errors.Unwrap(err))
		}
		d.File = file
	}
	d.Label, _, _ = p.str(t, "label", where)
	if d.Label == "" {
		d.Label = strings.TrimSuffix(filepath.Base(file), filepath.Ext(file))
		if d.Label == "" || d.Label == "." {
			d.Label = fmt.Sprintf("data%d", i+1)
		}
	}
	where = fmt.Sprintf("dataset %q", d.Label)
	if x, line, ok := p.number(t, "dish", where); ok {
		if x <= 0 {
			p.errorf(line, where+" dish", "expected a dish diameter > 0 m, found %v", x)
		}
		d.Dish = x
	}
	if x, line, ok := p.number(t, "freq", where); ok {
		if x <= 0 {
			p.errorf(line, where+" freq", "expected a frequency > 0 Hz, found %v", x)
		}
		d.Freq = x
	}
	d.FreqGroups, _ = p.integer(t, "freq_groups", where, 1)
	d.FluxScale = p.dataParam(t, "flux_scale", d.Label, 1, 0.5, 2, 0, inf)
	d.DX = p.dataParam(t, "offset", d.Label+".dx", 0, -0.1, 0.1, -inf, inf)
	d.DY = p.dataParam(t, "offset", d.Label+".dy", 0, -0.1, 0.1, -inf, inf)
	d.DX.Name, d.DY.Name = d.Label+".dx", d.Label+".dy"
	// dx and dy set the two axes of the offset separately (bestfit.toml
	// writes them so, each with its own best value).
	for _, ax := range []struct {
		key string
		p   **Param
	}{{"dx", &d.DX}, {"dy", &d.DY}} {
		v, ok := t.get(ax.key)
		if !ok {
			continue
		}
		if _, both := t.get("offset"); both {
			p.errorf(v.line, fmt.Sprintf("dataset %q %s", d.Label, ax.key), "incompatible options: give offset or dx and dy, not both")
		}
		*ax.p = p.dataParam(t, ax.key, d.Label, 0, -0.1, 0.1, -inf, inf)
	}
	if v, ok := t.get("noise_scale"); ok && v.kind == kindString && v.str == "estimate" {
		d.EstimateNoise = true
		d.NoiseScale = &Param{Name: d.Label + ".noise_scale", Value: 1, Line: v.line}
	} else {
		d.NoiseScale = p.dataParam(t, "noise_scale", d.Label, 1, 0.5, 2, 0, inf)
	}
	p.m.Data = append(p.m.Data, d)
	for _, q := range []*Param{d.FluxScale, d.DX, d.DY, d.NoiseScale} {
		p.add(q)
	}
}

// dataParam parses a per-dataset nuisance parameter: omitted (fixed at def),
// a number (fixed), "free" (uniform on [lo, hi]) or a parameter table.
func (p *modelParser) dataParam(t *table, key, label string, def, lo, hi, physLo, physHi float64) *Param {
	name := label + "." + key
	v, ok := t.get(key)
	if !ok {
		return &Param{Name: name, Value: def, Line: t.line}
	}
	if v.kind == kindString {
		if v.str != "free" {
			p.errorf(v.line, fmt.Sprintf("dataset %q %s", label, key), `expected a number, "free" or a parameter table, found %q`, v.str)
		}
		return &Param{Name: name, Value: def, Free: true, Prior: PriorUniform, Min: lo, Max: hi, Line: v.line}
	}
	pd := paramDef{key: key, def: def, lo: physLo, hi: physHi}
	return p.param(v, name, fmt.Sprintf("dataset %q %s", label, key), pd)
}

func (p *modelParser) parseCosmology(t *table) {
	p.checkKeys(t, "[cosmology]", []string{"z_lens", "z_source", "H0", "Om", "Ode"})
	c := &Cosmology{H0: 70, Om: 0.3}
	var ok bool
	var line int
	if c.ZLens, line, ok = p.number(t, "z_lens", "[cosmology]"); !ok && line == 0 {
		p.errorf(t.line, "[cosmology]", "missing required key z_lens")
	}
	if c.ZSource, line, ok = p.number(t, "z_source", "[cosmology]"); !ok && line == 0 {
		p.errorf(t.line, "[cosmology]", "missing required key z_source")
	}
	if c.ZLens <= 0 || c.ZSource <= c.ZLens {
		p.errorf(t.line, "[cosmology]", "expected 0 < z_lens < z_source, found z_lens = %v, z_source = %v", c.ZLens, c.ZSource)
	}
	if x, line, ok := p.number(t, "H0", "[cosmology]"); ok {
		if x <= 0 {
			p.errorf(line, "[cosmology] H0", "expected H0 > 0 km/s/Mpc, found %v", x)
		}
		c.H0 = x
	}
	if x, line, ok := p.number(t, "Om", "[cosmology]"); ok {
		if x < 0 {
			p.errorf(line, "[cosmology] Om", "expected Om ≥ 0, found %v", x)
		}
		c.Om = x
	}
	c.Ode = 1 - c.Om
	if x, _, ok := p.number(t, "Ode", "[cosmology]"); ok {
		c.Ode = x
	}
	p.m.Cosmology = c
}

func (p *modelParser) parseFit(t *table) {
	p.checkKeys(t, "[fit]", []string{"method", "seed", "live_points", "walkers", "max_steps", "starts", "dlogz"})
	if s, line, ok := p.str(t, "method", "[fit]"); ok {
		methods := []string{"optimize", "mcmc", "nested"}
		if !contains(methods, s) {
			p.errorf(line, "[fit] method", "expected one of %s, found %q%s", strings.Join(methods, ", "), s, didYouMean(s, methods))
		}
		p.m.Fit.Method = s
	}
	if n, ok := p.integer(t, "seed", "[fit]", 0); ok {
		p.m.Fit.Seed = uint64(n)
	}
	p.m.Fit.LivePoints, _ = p.integer(t, "live_points", "[fit]", 10)
	p.m.Fit.Walkers, _ = p.integer(t, "walkers", "[fit]", 4)
	p.m.Fit.MaxSteps, _ = p.integer(t, "max_steps", "[fit]", 1)
	p.m.Fit.Starts, _ = p.integer(t, "starts", "[fit]", 1)
	if x, line, ok := p.number(t, "dlogz", "[fit]"); ok {
		if x <= 0 {
			p.errorf(line, "[fit] dlogz", "expected dlogz > 0, found %v", x)
		}
		p.m.Fit.DLogZ = x
	}
}

func (p *modelParser) parseComponent(t *table, what string, kinds []kindDef) (Component, bool) {
	kind, line, ok := p.str(t, "kind", "[["+what+"]]")
	if !ok {
		if line == 0 {
			p.errorf(t.line, "[["+what+"]]", "missing required key kind (one of %s)", strings.Join(kindNames(kinds), ", "))
		}
		return Component{}, false
	}
	kd := findKind(kinds, kind)
	if kd == nil {
		p.errorf(line, "[["+what+"]] kind", "unknown %s kind %q%s (known: %s)", what, kind, didYouMean(kind, kindNames(kinds)), strings.Join(kindNames(kinds), ", "))
		return Component{}, false
	}
	c := Component{Kind: kind, Params: map[string]*Param{}, Line: t.line}
	c.Name, _, _ = p.str(t, "name", "[["+what+"]]")
	if c.Name == "" {
		c.Name = fmt.Sprintf("%s%d", kind, p.countKind(kind)+1)
	}
	if strings.ContainsAny(c.Name, ". \t") {
		p.errorf(t.vals["name"].line, what+" name", "expected a name without dots or spaces, found %q", c.Name)
	}
	where := fmt.Sprintf("%s %q", what, c.Name)
	known := []string{"kind", "name"}
	for _, pd := range kd.params {
		known = append(known, pd.key)
	}
	for _, s := range kd.settings {
		known = append(known, s.key)
	}
	p.checkKeys(t, where, known)
	skip := p.alternatives(t, kd, where)
	for _, pd := range kd.params {
		if skip[pd.key] {
			continue
		}
		name := c.Name + "." + pd.key
		v, ok := t.get(pd.key)
		switch {
		case !ok && pd.required:
			p.errorf(t.line, where, "missing required parameter %s (%s%s)", pd.key, pd.doc, unitSuffix(pd.unit))
		case !ok:
			c.Params[pd.key] = &Param{Name: name, Value: pd.def, Line: t.line}
		default:
			c.Params[pd.key] = p.param(v, name, where+" "+pd.key, pd)
		}
		if q := c.Params[pd.key]; q != nil {
			p.add(q)
		}
	}
	if len(kd.settings) > 0 {
		c.Settings = map[string]any{}
		for _, s := range kd.settings {
			if v, ok := t.get(s.key); ok {
				c.Settings[s.key] = p.setting(v, where+" "+s.key)
			}
		}
	}
	return c, true
}

func (p *modelParser) countKind(kind string) int {
	n := 0
	for _, c := range append(append([]Component(nil), p.m.Lenses...), p.m.Sources...) {
		if c.Kind == kind {
			n++
		}
	}
	return n
}

// alternatives checks that exactly one group of kd's alternative
// parameters is given, and returns the keys of the groups not used.
func (p *modelParser) alternatives(t *table, kd *kindDef, where string) map[string]bool {
	skip := map[string]bool{}
	if len(kd.alternatives) == 0 {
		return skip
	}
	var given []int
	for gi, g := range kd.alternatives {
		n := 0
		for _, k := range g {
			if _, ok := t.vals[k]; ok {
				n++
			}
		}
		if n > 0 {
			given = append(given, gi)
			if n < len(g) {
				p.errorf(t.line, where, "parameters %s go together: give all of them", strings.Join(g, " and "))
			}
		}
	}
	groups := make([]string, len(kd.alternatives))
	for gi, g := range kd.alternatives {
		groups[gi] = strings.Join(g, " and ")
	}
	switch len(given) {
	case 0:
		p.errorf(t.line, where, "missing parameters: give %s", strings.Join(groups, ", or "))
	case 1:
	default:
		p.errorf(t.line, where, "incompatible parameters: give %s, not both", strings.Join(groups, ", or "))
	}
	for gi, g := range kd.alternatives {
		if len(given) == 0 || gi != given[0] {
			for _, k := range g {
				skip[k] = true
			}
		}
	}
	return skip
}

func (p *modelParser) setting(v *value, where string) any {
	switch v.kind {
	case kindString:
		return v.str
	case kindBool:
		return v.b
	case kindNumber:
		return v.num
	}
	p.errorf(v.line, where, "expected a string, number or true/false, found %v", v.kind)
	return nil
}

func unitSuffix(unit string) string {
	if unit == "" {
		return ""
	}
	return ", " + unit
}

// param parses a parameter value: a number fixes it; a table frees it.
func (p *modelParser) param(v *value, name, where string, pd paramDef) *Param {
	q := &Param{Name: name, Line: v.line}
	switch v.kind {
	case kindNumber:
		q.Value = v.num
		p.checkPhysical(q.Value, v.line, where, pd)
		return q
	case kindTable:
	default:
		p.errorf(v.line, where, "expected a number (fixed) or a table such as {min = 0, max = 1} (free), found %v", v.kind)
		return q
	}
	t := v.table
	p.checkKeys(t, where, []string{"start", "min", "max", "prior", "mean", "sd", "same_as"})
	if s, line, ok := p.str(t, "same_as", where); ok {
		if len(t.keys) > 1 {
			p.errorf(line, where, "same_as ties %s to %s: it takes no other keys", name, s)
		}
		q.SameAs = s
		return q
	}
	q.Free = true
	q.Prior = PriorUniform
	if s, line, ok := p.str(t, "prior", where); ok {
		kinds := []string{string(PriorUniform), string(PriorNormal), string(PriorLogUniform)}
		if !contains(kinds, s) {
			p.errorf(line, where+" prior", "expected one of %s, found %q%s", strings.Join(kinds, ", "), s, didYouMean(s, kinds))
			return q
		}
		q.Prior = PriorKind(s)
	}
	min, _, hasMin := p.number(t, "min", where)
	max, _, hasMax := p.number(t, "max", where)
	mean, _, hasMean := p.number(t, "mean", where)
	sd, sdLine, hasSD := p.number(t, "sd", where)
	start, startLine, hasStart := p.number(t, "start", where)
	q.Min, q.Max = math.Inf(-1), math.Inf(1)
	if hasMin {
		q.Min = min
	}
	if hasMax {
		q.Max = max
	}
	switch q.Prior {
	case PriorUniform, PriorLogUniform:
		if !hasMin || !hasMax {
			p.errorf(v.line, where, "a %s prior needs both min and max", q.Prior)
			return q
		}
		if hasMean || hasSD {
			p.errorf(v.line, where, "mean and sd belong to a normal prior (add prior = \"normal\")")
		}
		if q.Prior == PriorLogUniform && q.Min <= 0 {
			p.errorf(v.line, where, "a log-uniform prior needs min > 0, found %v", q.Min)
			return q
		}
	case PriorNormal:
		if !hasMean || !hasSD {
			p.errorf(v.line, where, "a normal prior needs mean and sd")
			return q
		}
		if sd <= 0 {
			p.errorf(sdLine, where+" sd", "expected sd > 0, found %v", sd)
		}
		q.Mean, q.SD = mean, sd
	}
	if q.Min >= q.Max {
		p.errorf(v.line, where, "min (%v) must be less than max (%v)", q.Min, q.Max)
		return q
	}
	p.checkPhysical(q.Min, v.line, where+" min", pd)
	p.checkPhysical(q.Max, v.line, where+" max", pd)
	switch {
	case hasStart:
		q.Value = start
		if start < q.Min || start > q.Max {
			p.errorf(startLine, where+" start", "start %v lies outside the prior [%v, %v]", start, q.Min, q.Max)
		}
	case q.Prior == PriorNormal:
		q.Value = math.Max(q.Min, math.Min(q.Max, q.Mean))
	case q.Prior == PriorLogUniform:
		q.Value = math.Sqrt(q.Min * q.Max)
	default:
		q.Value = (q.Min + q.Max) / 2
	}
	return q
}

func (p *modelParser) checkPhysical(x float64, line int, where string, pd paramDef) {
	if math.IsInf(x, 0) {
		return
	}
	bad := x < pd.lo || x > pd.hi || (pd.openLo && x == pd.lo)
	if !bad {
		return
	}
	lo := "["
	if pd.openLo {
		lo = "("
	}
	hi := fmt.Sprint(pd.hi)
	if pd.hi >= inf {
		hi = "∞"
	}
	p.errorf(line, where, "%v is outside the allowed range %s%v, %s]%s", x, lo, pd.lo, hi, unitSuffix(pd.unit))
}

func (p *modelParser) add(q *Param) { p.m.Params = append(p.m.Params, q) }

// crossChecks validates what no single table can: unique names, the flux
// and astrometric references, and what needs a cosmology.
func (p *modelParser) crossChecks() {
	seen := map[string]int{}
	for _, c := range append(append([]Component(nil), p.m.Lenses...), p.m.Sources...) {
		if line, dup := seen[c.Name]; dup {
			p.errorf(c.Line, fmt.Sprintf("component %q", c.Name), "name already used at line %d", line)
		}
		seen[c.Name] = c.Line
	}
	labels := map[string]int{}
	for _, d := range p.m.Data {
		if line, dup := labels[d.Label]; dup {
			p.errorf(d.Line, fmt.Sprintf("dataset %q", d.Label), "label already used at line %d (set label = \"...\")", line)
		}
		labels[d.Label] = d.Line
	}
	if n := len(p.m.Data); n > 0 {
		allFlux, allOffset := true, true
		for _, d := range p.m.Data {
			allFlux = allFlux && d.FluxScale.Free
			allOffset = allOffset && (d.DX.Free || d.DY.Free)
		}
		if allFlux {
			p.errorf(p.m.Data[0].Line, "flux_scale", "incompatible options: every dataset has a free flux_scale; fix one (the flux reference) at 1")
		}
		if allOffset {
			p.errorf(p.m.Data[0].Line, "offset", "incompatible options: every dataset has a free offset; leave one (the astrometric reference) without")
		}
	}
	for _, c := range p.m.Lenses {
		if _, ok := c.Params["m200"]; ok && p.m.Cosmology == nil {
			p.errorf(c.Line, fmt.Sprintf("lens %q", c.Name), "m200 and c need a [cosmology] table with z_lens and z_source")
		}
	}
	pixels := 0
	for _, c := range p.m.Sources {
		if c.Kind == "pixels" {
			pixels++
		}
	}
	if pixels > 1 {
		p.errorf(0, "[[source]]", "incompatible options: at most one pixelated source")
	}
}

// resolveTies links same_as parameters to their targets and collects the
// free parameters.
func (p *modelParser) resolveTies() {
	byName := map[string]*Param{}
	for _, q := range p.m.Params {
		byName[q.Name] = q
	}
	names := make([]string, 0, len(byName))
	for n := range byName {
		names = append(names, n)
	}
	sort.Strings(names)
	for _, q := range p.m.Params {
		if q.SameAs == "" {
			continue
		}
		t, ok := byName[q.SameAs]
		if !ok {
			p.errorf(q.Line, q.Name, "same_as names unknown parameter %q%s", q.SameAs, didYouMean(q.SameAs, names))
			continue
		}
		if t.SameAs != "" {
			p.errorf(q.Line, q.Name, "same_as target %q is itself tied (to %q): tie to the original", q.SameAs, t.SameAs)
			continue
		}
		if t == q {
			p.errorf(q.Line, q.Name, "same_as names the parameter itself")
			continue
		}
		q.Tied = t
		q.Value = t.Value
	}
	for _, q := range p.m.Params {
		if q.Free && q.Tied == nil {
			p.m.Free = append(p.m.Free, q)
		}
	}
}

func didYouMean(s string, known []string) string {
	if m := suggest(s, known); m != "" {
		return fmt.Sprintf(" (did you mean %q?)", m)
	}
	return ""
}

// suggest returns the known word closest to s by edit distance (with
// transpositions counted as one edit), if it is
// close enough to be a plausible typo.
func suggest(s string, known []string) string {
	best, bestD := "", 1<<30
	for _, k := range known {
		if d := editDistance(strings.ToLower(s), strings.ToLower(k)); d < bestD {
			best, bestD = k, d
		}
	}
	if bestD <= max(1, len(s)/3) {
		return best
	}
	return ""
}

func editDistance(a, b string) int {
	ra, rb := []rune(a), []rune(b)
	prev2 := make([]int, len(rb)+1)
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
			if i > 1 && j > 1 && ra[i-1] == rb[j-2] && ra[i-2] == rb[j-1] {
				cur[j] = min(cur[j], prev2[j-2]+1)
			}
		}
		prev2, prev, cur = prev, cur, prev2
	}
	return prev[len(rb)]
}
