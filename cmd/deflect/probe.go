package main

import (
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"deflect/fit"
	"deflect/fit/probe"
	"deflect/internal/atomicfile"
	"deflect/plots"
	"deflect/uv"
)

// probeOptions are the flags of "deflect probe".
type probeOptions struct {
	at, models, weighting, out, format string
	radius, robust                     float64
	null, evals                        int
	seed                               uint64
	force, noModelTest                 bool
}

func init() {
	var o probeOptions
	register(&command{
		name:    "probe",
		summary: "test whether a faint feature (e.g. a central image) is real, in the visibilities",
		usage:   "MODEL_OR_FITDIR [--at X,Y] [--radius R] [--null N] [--weighting natural|uniform|briggs] [--models A.toml,B.toml] [-o DIR] [--format png|pdf|svg] [--seed N] [--force]",
		help: `Probes the sky position --at (default: the lens centre, the centre of its
first halo component — nfw, gnfw or burkert — or else of its first
component) within --radius arcsec, on top of the model: MODEL, a model file
at its start values, or FITDIR/bestfit.toml. The model's emission inside the
radius is removed first, so the tests ask whether the data need flux there.

  direct test   a point source fitted to the visibilities, free within the
                radius; at a fixed position the flux is linear and its error
                exact: σ_F = (Σ_k w_k |A_k|²)^−½ (both parts counted)
  null test     --null datasets of the model without the feature (same (u,v),
                weights, noise), imaged with --weighting; the brightest
                residual peak within the radius in each gives the false-alarm
                probability (binomial error; < 3/N, the 95% bound, when none
                is as bright); the dirty image without the model subtracted
                is compared too, with the sidelobe level of the other images
  split tests   the direct test on each dataset alone, the first and second
                half in time and the short and long baselines (split at the
                median uv distance), fluxes compared at the reference
                frequency with the source's spectral index
  model test    without --models: the model with every isothermal core fixed
                at 0 ("singular") against the model with its cores, or with a
                free core on the ellipsoid nearest the position ("cored");
                with --models A,B (A cannot make a central image, B can):
                fit directories of "deflect fit" are read (their evidence when
                fitted with method = "nested", their posterior.csv); model
                files are fitted here (maximum a posteriori with the compressed
                likelihood, Laplace evidence). Δχ², ΔBIC, ln Bayes factor,
                and the central image each predicts (FindImages on its best
                fit, spread over posterior draws)

The verdict is "real" when the direct test gives ≥ 5σ, the false-alarm
probability is ≤ 1%, every split's flux is positive and each family of
splits is consistent (p ≥ 0.01), and the model test prefers the model that
makes a central image (ΔBIC > 0); "not significant" below 3σ or above a 5%
false-alarm probability (with the spot attributed to the other images'
sidelobes when they make at least half of it); "inconclusive" otherwise.
It is always given with its numbers.

Writes DIR/probe.json (every number), DIR/probe.png (or .pdf, .svg with
--format; the panel: residual cut-out, direct and split fluxes, null
distribution) and prints the report. A non-empty DIR, and any file in it, is
overwritten only with --force.`,
		setFlags: func(fs *flag.FlagSet) {
			fs.StringVar(&o.at, "at", "", "probed position `X,Y` in arcsec east and north of the phase centre")
			fs.Float64Var(&o.radius, "radius", 0, "search radius in `ARCSEC` (default: 3 sky pixels)")
			fs.IntVar(&o.null, "null", 200, "number of null simulations")
			fs.StringVar(&o.weighting, "weighting", "natural", "imaging weighting of the image being judged: natural, uniform or briggs")
			fs.Float64Var(&o.robust, "robust", 0, "Briggs robustness `R`")
			fs.StringVar(&o.models, "models", "", "model files or fit directories `A,B` without and with a central image, for the model test")
			fs.IntVar(&o.evals, "evals", 400, "likelihood calls per optimiser phase in the model test")
			fs.StringVar(&o.out, "o", "probe", "output `DIR`ectory")
			fs.StringVar(&o.format, "format", "png", "figure format: png, pdf or svg")
			fs.Uint64Var(&o.seed, "seed", 1, "random seed of the null simulations")
			fs.BoolVar(&o.force, "force", false, "write into a non-empty output directory")
			fs.BoolVar(&o.noModelTest, "no-model-test", false, "skip the model test (two fits) when --models is not given")
		},
		run: func(env *runEnv, args []string) error {
			if len(args) != 1 {
				return usagef("want one MODEL file or fit directory, got %d arguments", len(args))
			}
			m, theta, err := probeBase(args[0], o.seed)
			if err != nil {
				return err
			}
			switch o.format {
			case "png", "pdf", "svg":
			default:
				return usagef("--format %q: want png, pdf or svg", o.format)
			}
			w, err := uv.ParseWeighting(o.weighting)
			if err != nil {
				return usagef("--weighting: %v", err)
			}
			if err := atomicfile.PrepareDir(o.out, o.force); err != nil {
				return err
			}
			data, err := probe.LoadData(m)
			if err != nil {
				return err
			}
			g, err := probe.ModelGrid(m, data, 256)
			if err != nil {
				return err
			}
			opt := probe.Options{Radius: o.radius, Null: o.null, Seed: o.seed, Weighting: w, Robust: o.robust, Grid: g}
			if opt.Radius == 0 {
				opt.Radius = 3 * g.Pixel
			}
			if o.at != "" {
				if opt.X, opt.Y, err = parsePair(o.at); err != nil {
					return usagef("--at: %v", err)
				}
			} else {
				opt.X, opt.Y = lensCentre(m)
			}
			if o.models != "" {
				a, b, ok := strings.Cut(o.models, ",")
				if !ok {
					return usagef("--models %q: want A.toml,B.toml", o.models)
				}
				mt, err := probeModelTest(a, b, o.evals, o.seed)
				if err != nil {
					return err
				}
				opt.Models = mt
			} else if o.noModelTest {
				opt.ModelNote = "model test skipped (--no-model-test)"
			} else {
				a, b, err := probe.Variants(m, theta, opt.X, opt.Y)
				if err != nil {
					opt.ModelNote = "model test not run: " + err.Error()
				} else {
					fa, err := probe.FitModel(context.Background(), "singular", a, o.evals, o.seed)
					if err != nil {
						return err
					}
					fb, err := probe.FitModel(context.Background(), "cored", b, o.evals, o.seed)
					if err != nil {
						return err
					}
					opt.Models = probe.CompareModels(fa, fb)
				}
			}
			res, err := probe.Run(m, theta, data, opt)
			if err != nil {
				return err
			}
			fig := filepath.Join(o.out, "probe."+o.format)
			if err := writeProbe(o.out, fig, o.format, o.force, res); err != nil {
				return err
			}
			fmt.Fprint(env.stdout, res.Report())
			fmt.Fprintf(env.stdout, "wrote %s and %s\n", filepath.Join(o.out, "probe.json"), fig)
			return nil
		},
	})
}

func parsePair(s string) (x, y float64, err error) {
	a, b, ok := strings.Cut(s, ",")
	if !ok {
		return 0, 0, fmt.Errorf("%q: want X,Y", s)
	}
	if x, err = strconv.ParseFloat(strings.TrimSpace(a), 64); err != nil {
		return 0, 0, fmt.Errorf("%q: want two numbers X,Y", s)
	}
	if y, err = strconv.ParseFloat(strings.TrimSpace(b), 64); err != nil {
		return 0, 0, fmt.Errorf("%q: want two numbers X,Y", s)
	}
	return x, y, nil
}

// lensCentre returns the centre of the model's first halo component, or of
// its first component with a centre, at the start values.
func lensCentre(m *fit.Model) (x, y float64) {
	th := m.Start()
	pick := func(halo bool) (float64, float64, bool) {
		for _, c := range m.Lenses {
			if c.Kind == "shear" || c.Kind == "sheet" {
				continue
			}
			isHalo := c.Kind == "nfw" || c.Kind == "gnfw" || c.Kind == "burkert"
			if halo && !isHalo {
				continue
			}
			return probe.ParamValue(m, th, c.Params["x"]), probe.ParamValue(m, th, c.Params["y"]), true
		}
		return 0, 0, false
	}
	if x, y, ok := pick(true); ok {
		return x, y
	}
	x, y, _ = pick(false)
	return x, y
}

// probeBase returns the model and free-parameter vector probed: the best
// fit of a fit directory, or a model file at its start values.
func probeBase(path string, seed uint64) (*fit.Model, []float64, error) {
	if st, err := os.Stat(path); err == nil && st.IsDir() {
		mf, err := probe.FromFitDir(path, filepath.Base(path), seed)
		if err != nil {
			return nil, nil, err
		}
		return mf.Model, mf.Theta, nil
	}
	m, err := fit.ReadModel(path)
	if err != nil {
		return nil, nil, err
	}
	return m, m.Start(), nil
}

// probeModelTest compares a (no central image) and b (one): fit
// directories are read as they are, model files fitted here.
func probeModelTest(a, b string, evals int, seed uint64) (*probe.ModelTest, error) {
	var fits [2]*probe.ModelFit
	for i, p := range []string{strings.TrimSpace(a), strings.TrimSpace(b)} {
		name := strings.TrimSuffix(filepath.Base(p), filepath.Ext(p))
		var f *probe.ModelFit
		if st, err := os.Stat(p); err == nil && st.IsDir() {
			f, err = probe.FromFitDir(p, name, seed)
			if err != nil {
				return nil, err
			}
		} else {
			m, err := fit.ReadModel(p)
			if err != nil {
				return nil, err
			}
			if f, err = probe.FitModel(context.Background(), name, m, evals, seed); err != nil {
				return nil, err
			}
		}
		fits[i] = f
	}
	return probe.CompareModels(fits[0], fits[1]), nil
}

// writeProbe writes dir/probe.json and the panel fig in format ("png",
// "pdf" or "svg"), replacing existing files only when force is true.
func writeProbe(dir, fig, format string, force bool, res *probe.Result) error {
	b, err := json.MarshalIndent(res, "", "  ")
	if err != nil {
		return err
	}
	if err := atomicfile.WriteBytes(filepath.Join(dir, "probe.json"), force, append(b, '\n')); err != nil {
		return err
	}
	pr := plots.Probe{
		Image:    plots.SkyImage{N: res.Cut.N, Pixel: res.Cut.Pixel, X0: res.Cut.X0, Y0: res.Cut.Y0, Values: res.Image},
		At:       plots.Point{X: res.Direct.X, Y: res.Direct.Y},
		Direct:   plots.Flux{Value: res.Direct.Flux.Value * 1e3, Err: res.Direct.Flux.Err * 1e3},
		Observed: res.Null.Observed * 1e3,
		NullUnit: "mJy/beam",
		// The report's numbers: the estimate k/N, or its 95% bound 3/N
		// when no null draw is as bright.
		FalseAlarm:      res.Null.FalseAlarm,
		FalseAlarmUpper: res.Null.Exceed == 0,
	}
	if res.Null.Exceed == 0 {
		pr.FalseAlarm = res.Null.UpperLimit95
	}
	for _, f := range res.Splits {
		for _, s := range f.Splits {
			if s.Rows == 0 {
				continue
			}
			pr.Splits = append(pr.Splits, plots.Flux{Value: s.Flux.Value * 1e3, Err: s.Flux.Err * 1e3})
			pr.SplitLabels = append(pr.SplitLabels, shortSplit(s.Name))
		}
	}
	for _, p := range res.Null.Peaks {
		pr.Null = append(pr.Null, p*1e3)
	}
	f, err := plots.ProbeFigure(pr)
	if err != nil {
		return fmt.Errorf("probe figure: %w", err)
	}
	return plots.Save(f, 0, 0, fig, format, force)
}

// shortSplit abbreviates a split's name for the figure's axis.
func shortSplit(name string) string {
	switch name {
	case "first half":
		return "early"
	case "second half":
		return "late"
	case "short baselines":
		return "short"
	case "long baselines":
		return "long"
	}
	// A dataset label: its last "-"-separated part ("array-A" → "A"),
	// at most 6 characters, so that neighbouring labels do not overlap.
	if i := strings.LastIndex(name, "-"); i >= 0 && i < len(name)-1 {
		name = name[i+1:]
	}
	if r := []rune(name); len(r) > 6 {
		return string(r[len(r)-6:])
	}
	return name
}
