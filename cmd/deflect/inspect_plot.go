package main

import (
	"fmt"
	"io"
	"path/filepath"

	"deflect/internal/atomicfile"
	"deflect/plots"
	"deflect/uv"
)

// maxCoveragePoints bounds the (u, v) samples of one dataset kept for the
// coverage figure: evenly spaced rows beyond it, which look the same at
// print resolution and keep memory bounded for tables of 10⁸ rows.
const maxCoveragePoints = 200000

// inspectPlots writes the figures of "deflect inspect --plots DIR": per
// dataset the binned visibilities against uv distance, and at the end the
// uv coverage of all datasets.
type inspectPlots struct {
	dir    string
	format string
	force  bool
	used   map[string]bool
	sets   []plots.UVSet
	wrote  []string
}

func newInspectPlots(dir, format string, force bool) (*inspectPlots, error) {
	if err := atomicfile.PrepareDir(dir, force); err != nil {
		return nil, err
	}
	return &inspectPlots{dir: dir, format: format, force: force, used: map[string]bool{}}, nil
}

// add writes the visibility figures of d (Re and Im; amplitude and phase)
// and keeps its coverage for finish. Datasets without unflagged rows get a
// note on w and no figure.
func (ip *inspectPlots) add(w io.Writer, d *uv.Dataset, path string) error {
	label := fileLabel(d.Meta.Label, path, ip.used)
	n := d.Len()
	weight := make([]float64, n)
	used := 0
	for k := range n {
		if !d.Flagged(k) {
			weight[k] = d.Weight[k]
			used++
		}
	}
	if used == 0 {
		fmt.Fprintf(w, "deflect inspect: %s: no unflagged rows, no figures\n", path)
		return nil
	}
	stride := max(1, (used+maxCoveragePoints-1)/maxCoveragePoints)
	set := plots.UVSet{Label: d.Meta.Label, U: make([]float64, 0, used/stride+1), V: make([]float64, 0, used/stride+1)}
	m := 0
	for k := range n {
		if d.Flagged(k) {
			continue
		}
		if m%stride == 0 {
			set.U = append(set.U, d.U[k])
			set.V = append(set.V, d.V[k])
		}
		m++
	}
	if set.Label == "" {
		set.Label = label
	}
	ip.sets = append(ip.sets, set)
	for _, v := range []struct {
		suffix   string
		ampPhase bool
	}{{"reim", false}, {"ampphase", true}} {
		fig, err := plots.VisibilityFigure(plots.Visibilities{U: d.U, V: d.V, Re: d.Re, Im: d.Im, Weight: weight, AmpPhase: v.ampPhase})
		if err != nil {
			return fmt.Errorf("%s: %w", path, err)
		}
		what := "real and imaginary parts"
		if v.ampPhase {
			what = "amplitude and phase"
		}
		titled := plots.Titled(fig, fmt.Sprintf("%s: %s of the binned visibilities (%d rows)", set.Label, what, used))
		name := filepath.Join(ip.dir, label+".vis-"+v.suffix+"."+ip.format)
		if err := plots.Save(titled, 0, 0, name, ip.format, ip.force); err != nil {
			return err
		}
		ip.wrote = append(ip.wrote, name)
	}
	return nil
}

// finish writes the uv-coverage figure of every dataset added and lists
// the files written on w.
func (ip *inspectPlots) finish(w io.Writer) error {
	if len(ip.sets) > 0 {
		fig, err := plots.UVCoverageFigure(ip.sets)
		if err != nil {
			return err
		}
		name := filepath.Join(ip.dir, "uv-coverage."+ip.format)
		if err := plots.Save(fig, 0, 0, name, ip.format, ip.force); err != nil {
			return err
		}
		ip.wrote = append(ip.wrote, name)
	}
	for _, f := range ip.wrote {
		fmt.Fprintf(w, "wrote %s\n", f)
	}
	return nil
}
