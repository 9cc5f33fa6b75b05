package fit

import (
	"fmt"
	"io"
	"math"
	"path/filepath"
	"sort"
	"strconv"
	"strings"

	"deflect/uv"
)

// BestFitFile is the name of the best-fit model file in an output
// directory.
const BestFitFile = "bestfit.toml"

// WriteModel writes m as a model file in which every free parameter starts
// at vals (the values of all of m.Params, as from the parameter map) and
// keeps its prior, fixed parameters keep their values and ties stay ties.
// The grid g is written out in full, so the file reproduces the fit's grid
// even where the original left it to the data. Data paths are written
// relative to dir (the directory the file goes into) where possible.
func WriteModel(w io.Writer, m *Model, vals map[*Param]float64, g uv.Grid, refFreq float64, dir string) error {
	var b strings.Builder
	num := func(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }
	param := func(q *Param) string {
		v := q.Value
		if x, ok := vals[q]; ok {
			v = x
		}
		switch {
		case q.SameAs != "":
			return fmt.Sprintf("{same_as = %q}", q.SameAs)
		case !q.Free:
			return num(v)
		}
		parts := []string{"start = " + num(v)}
		if q.Prior != PriorUniform {
			parts = append(parts, fmt.Sprintf("prior = %q", string(q.Prior)))
		}
		if q.Prior == PriorNormal {
			parts = append(parts, "mean = "+num(q.Mean), "sd = "+num(q.SD))
		}
		if !math.IsInf(q.Min, 0) {
			parts = append(parts, "min = "+num(q.Min))
		}
		if !math.IsInf(q.Max, 0) {
			parts = append(parts, "max = "+num(q.Max))
		}
		return "{" + strings.Join(parts, ", ") + "}"
	}
	fmt.Fprintf(&b, "# Model of %s with every free parameter starting at its best fit\n# (written by deflect fit; the priors are those of the original).\n\n", m.Path)
	fmt.Fprintf(&b, "[sky]\npixel = %s\nsize = %d\n", num(g.Pixel), g.N)
	if g.X0 != 0 || g.Y0 != 0 {
		fmt.Fprintf(&b, "x0 = %s\ny0 = %s\n", num(g.X0), num(g.Y0))
	}
	if refFreq > 0 {
		fmt.Fprintf(&b, "ref_freq = %s\n", num(refFreq))
	}
	for _, d := range m.Data {
		file := d.File
		if dir != "" {
			if ad, err := filepath.Abs(dir); err == nil {
				if af, err := filepath.Abs(d.File); err == nil {
					if rel, err := filepath.Rel(ad, af); err == nil {
						file = rel
					} else {
						file = af
					}
				}
			}
		}
		fmt.Fprintf(&b, "\n[[data]]\nfile = %q\nlabel = %q\n", filepath.ToSlash(file), d.Label)
		if d.Dish > 0 {
			fmt.Fprintf(&b, "dish = %s\n", num(d.Dish))
		}
		if d.Freq > 0 {
			fmt.Fprintf(&b, "freq = %s\n", num(d.Freq))
		}
		if d.FreqGroups > 0 {
			fmt.Fprintf(&b, "freq_groups = %d\n", d.FreqGroups)
		}
		fmt.Fprintf(&b, "flux_scale = %s\ndx = %s\ndy = %s\n", param(d.FluxScale), param(d.DX), param(d.DY))
		if d.EstimateNoise {
			b.WriteString("noise_scale = \"estimate\"\n")
		} else {
			fmt.Fprintf(&b, "noise_scale = %s\n", param(d.NoiseScale))
		}
	}
	if c := m.Cosmology; c != nil {
		fmt.Fprintf(&b, "\n[cosmology]\nz_lens = %s\nz_source = %s\nH0 = %s\nOm = %s\nOde = %s\n",
			num(c.ZLens), num(c.ZSource), num(c.H0), num(c.Om), num(c.Ode))
	}
	comps := func(table string, cs []Component, kinds []kindDef) {
		for _, c := range cs {
			fmt.Fprintf(&b, "\n[[%s]]\nkind = %q\nname = %q\n", table, c.Kind, c.Name)
			kd := findKind(kinds, c.Kind)
			for _, pd := range kd.params {
				if q, ok := c.Params[pd.key]; ok {
					fmt.Fprintf(&b, "%s = %s\n", pd.key, param(q))
				}
			}
			keys := make([]string, 0, len(c.Settings))
			for k := range c.Settings {
				keys = append(keys, k)
			}
			sort.Strings(keys)
			for _, k := range keys {
				switch v := c.Settings[k].(type) {
				case string:
					fmt.Fprintf(&b, "%s = %q\n", k, v)
				case bool:
					fmt.Fprintf(&b, "%s = %t\n", k, v)
				case float64:
					fmt.Fprintf(&b, "%s = %s\n", k, num(v))
				}
			}
		}
	}
	comps("lens", m.Lenses, lensKinds)
	comps("source", m.Sources, sourceKinds)
	f := m.Fit
	fmt.Fprintf(&b, "\n[fit]\nmethod = %q\nseed = %d\n", f.Method, f.Seed)
	for _, kv := range []struct {
		k string
		v int
	}{{"live_points", f.LivePoints}, {"walkers", f.Walkers}, {"max_steps", f.MaxSteps}, {"starts", f.Starts}} {
		if kv.v > 0 {
			fmt.Fprintf(&b, "%s = %d\n", kv.k, kv.v)
		}
	}
	if f.DLogZ > 0 {
		fmt.Fprintf(&b, "dlogz = %s\n", num(f.DLogZ))
	}
	_, err := io.WriteString(w, b.String())
	return err
}
