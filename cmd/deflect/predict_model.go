package main

// predict reads its lens through the fit package: a model file with
// fit.ReadLensModel, and --lens flags by writing them as [[lens]] tables of
// an in-memory model file, so that both go through the one kinds table,
// validation and builder (fit's kinds.go and build.go).

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"deflect/fit"
	"deflect/lensmodel"
)

// predictLensSpec is one lens component as predict reports it: its kind,
// name and the value of every parameter (free ones at their start).
type predictLensSpec struct {
	Kind   string             `json:"kind"`
	Name   string             `json:"name,omitempty"`
	Params map[string]float64 `json:"params"`
}

// predictCosmo is the cosmology of the model.
type predictCosmo struct {
	c      lensmodel.Cosmology
	zl, zs float64
}

// predictModel is the lens predict works with.
type predictModel struct {
	specs []predictLensSpec
	lens  lensmodel.Lens
	cosmo *predictCosmo // nil when the model has no cosmology
}

// readPredictModel reads the lens and cosmology of the model file at path.
func readPredictModel(path string) (*predictModel, error) {
	m, err := fit.ReadLensModel(path)
	if err != nil {
		return nil, err
	}
	return predictFromFit(m, path)
}

// parsePredictModel is readPredictModel for the file contents data, named
// name.
func parsePredictModel(name string, data []byte) (*predictModel, error) {
	m, err := fit.ParseModelOptions{LensOnly: true}.Parse(name, data)
	if err != nil {
		return nil, err
	}
	return predictFromFit(m, name)
}

// predictFromFit builds the lens of m with every free parameter at its
// starting value (its start, or the centre of its prior).
func predictFromFit(m *fit.Model, where string) (*predictModel, error) {
	pm := &predictModel{}
	if c := m.Cosmology; c != nil {
		pm.cosmo = &predictCosmo{c: lensmodel.Cosmology{H0: c.H0, Om: c.Om, Ode: c.Ode}, zl: c.ZLens, zs: c.ZSource}
		if err := pm.cosmo.c.Validate(); err != nil {
			return nil, fmt.Errorf("%s: [cosmology]: %w", where, err)
		}
	}
	l, err := m.Lens(m.Start())
	if err != nil {
		return nil, fmt.Errorf("%s: %w", where, err)
	}
	pm.lens = l
	for _, c := range m.Lenses {
		s := predictLensSpec{Kind: c.Kind, Name: c.Name, Params: map[string]float64{}}
		for k, q := range c.Params {
			// After fit's parse every parameter's Value is its fixed value,
			// its start, or (tied) its target's start.
			s.Params[k] = q.Value
		}
		pm.specs = append(pm.specs, s)
	}
	return pm, nil
}

// predictFlagModel builds the lens of --lens flags (each KIND:K=V,...), with
// the cosmology cosmo (nil for none). Errors name the flag at fault.
func predictFlagModel(flags []string, cosmo *predictCosmo) (*predictModel, error) {
	var b strings.Builder
	line := 1
	label := map[int]string{} // the flag behind each line, for messages
	emit := func(flag, format string, a ...any) {
		fmt.Fprintf(&b, format+"\n", a...)
		label[line] = flag
		line++
	}
	if cosmo != nil {
		const f = "--zl, --zs, --H0, --Om, --Ode"
		emit(f, "[cosmology]")
		emit(f, "z_lens = %s", predictTOMLFloat(cosmo.zl))
		emit(f, "z_source = %s", predictTOMLFloat(cosmo.zs))
		emit(f, "H0 = %s", predictTOMLFloat(cosmo.c.H0))
		emit(f, "Om = %s", predictTOMLFloat(cosmo.c.Om))
		emit(f, "Ode = %s", predictTOMLFloat(cosmo.c.Ode))
	}
	for _, s := range flags {
		kind, params, err := predictParseLensFlag(s)
		if err != nil {
			return nil, err
		}
		f := fmt.Sprintf("--lens %q", s)
		emit(f, "[[lens]]")
		emit(f, "kind = %q", kind)
		for _, k := range predictSortedKeys(params) {
			emit(f, "%s = %s", k, predictTOMLFloat(params[k]))
		}
	}
	m, err := fit.ParseModelOptions{LensOnly: true}.Parse("--lens", []byte(b.String()))
	if err != nil {
		return nil, predictFlagErrors(err, label)
	}
	return predictFromFit(m, "--lens")
}

// predictFlagErrors rewrites fit's errors about the in-memory model file of
// the --lens flags to name the flag instead of a line.
func predictFlagErrors(err error, label map[int]string) error {
	var list []error
	if j, ok := err.(interface{ Unwrap() []error }); ok {
		list = j.Unwrap()
	} else {
		list = []error{err}
	}
	out := make([]error, 0, len(list))
	for _, e := range list {
		var me *fit.ModelError
		if !errors.As(e, &me) {
			out = append(out, e)
			continue
		}
		where, ok := label[me.Line]
		if !ok {
			where = "--lens"
		}
		if me.Key != "" {
			where += ": " + me.Key
		}
		hint := ""
		if strings.Contains(me.Err.Error(), "need a [cosmology]") {
			hint = " (with --lens: give --zl and --zs)"
		}
		out = append(out, fmt.Errorf("%s: %w%s", where, me.Err, hint))
	}
	return errors.Join(out...)
}

// predictParseLensFlag parses --lens 'kind:key=value,key=value' into its
// kind and numbers; the keys and values are checked by fit.
func predictParseLensFlag(s string) (kind string, params map[string]float64, err error) {
	kind, rest, _ := strings.Cut(s, ":")
	kind = strings.TrimSpace(kind)
	if !predictBareKey(kind) {
		return "", nil, fmt.Errorf("--lens %q: want KIND:KEY=VALUE,... with a kind such as sie", s)
	}
	params = map[string]float64{}
	for _, f := range strings.Split(rest, ",") {
		f = strings.TrimSpace(f)
		if f == "" {
			continue
		}
		k, v, ok := strings.Cut(f, "=")
		k = strings.TrimSpace(k)
		if !ok || !predictBareKey(k) {
			return "", nil, fmt.Errorf("--lens %q: %q is not key=value", s, f)
		}
		if _, dup := params[k]; dup {
			return "", nil, fmt.Errorf("--lens %q: %s given twice", s, k)
		}
		x, err := strconv.ParseFloat(strings.TrimSpace(v), 64)
		if err != nil || math.IsNaN(x) || math.IsInf(x, 0) {
			return "", nil, fmt.Errorf("--lens %q: %s = %q is not a finite number", s, k, v)
		}
		params[k] = x
	}
	return kind, params, nil
}

// predictBareKey reports whether s is a non-empty TOML bare key.
func predictBareKey(s string) bool {
	if s == "" {
		return false
	}
	for _, r := range s {
		if !(r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || r == '_' || r == '-') {
			return false
		}
	}
	return true
}

// predictTOMLFloat formats a finite x as a TOML float that reads back
// exactly.
func predictTOMLFloat(x float64) string {
	s := strconv.FormatFloat(x, 'g', -1, 64)
	if !strings.ContainsAny(s, ".e") {
		s += ".0"
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
