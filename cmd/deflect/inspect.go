package main

import (
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"strings"

	"deflect/uv"
)

func init() {
	var (
		asJSON  bool
		skipBad bool
		field   float64
		freq    float64
		dish    float64
		// --plots DIR: figures (inspect_plot.go).
		plotDir    string
		plotFormat string
		plotForce  bool
	)
	register(&command{
		name:    "inspect",
		summary: "summarise visibility tables: coverage, scales, weights, a suggested grid",
		usage:   "FILE... [--json] [--skip-bad] [--field ARCSEC] [--freq HZ] [--dish M] [--plots DIR [--format png|pdf|svg] [--force]]",
		help: `Reads each visibility table (text, .gz or FITS; one dataset per file) and
reports the rows read, used, flagged and excluded (and why), the frequency
range, the uv-distance range in kλ, the shortest and longest baselines, the
angular scales the data constrain, the primary beam, the weights and an
estimate of their true scale, and a suggested pixel and grid size.

The angular resolution ≈ λ/B_max and the largest recoverable scale
≈ 0.6 λ/B_min are common practice, rough guides rather than properties of
any one image. The primary-beam FWHM is 1.13 λ/D at the lowest frequency
(common practice for tapered dishes). The suggested pixel is at most a
fifth of the resolution, and the grid covers the primary-beam FWHM or the
--field. With a w column, the w-term field radius is where the neglected
phase π|w|θ² reaches 0.1 rad: θ = √(0.1/(π |w|max)).

The weight check compares the stated weights with the scatter of the data:
successive differences on each baseline and channel in time order where the
table has ant1 and ant2, otherwise the imaginary parts on the longest
baselines. "factor" is the ratio of true to stated weights.

With --plots DIR, also writes figures to DIR (refused when not empty
without --force), as PNG or, with --format, PDF or SVG:

  uv-coverage.png          (u, v) and (−u, −v) of every dataset in kλ, one
                           colour per dataset, +u (east) to the left
  LABEL.vis-reim.png       per dataset: real and imaginary parts against uv
                           distance, weighted means in 16 bins with 1σ errors
  LABEL.vis-ampphase.png   the same bins as amplitude and phase

Flagged rows are left out; the coverage figure keeps at most 200 000
evenly spaced rows per dataset.`,
		setFlags: func(fs *flag.FlagSet) {
			fs.BoolVar(&asJSON, "json", false, "print JSON (one object per file, in an array) for scripts")
			fs.BoolVar(&skipBad, "skip-bad", false, "skip bad rows, counting them, instead of failing")
			fs.Float64Var(&field, "field", 0, "field `ARCSEC` (full width) the suggested grid covers (default: the primary-beam FWHM)")
			fs.Float64Var(&freq, "freq", 0, "frequency in `HZ` for tables without one (overrides # freq:)")
			fs.Float64Var(&dish, "dish", 0, "antenna diameter in `M`etres (overrides # dish:)")
			fs.StringVar(&plotDir, "plots", "", "write the uv-coverage and visibility figures to `DIR`")
			fs.StringVar(&plotFormat, "format", "png", "figure format with --plots: png, pdf or svg")
			fs.BoolVar(&plotForce, "force", false, "with --plots, write into a non-empty DIR, replacing files")
		},
		run: func(env *runEnv, args []string) error {
			if len(args) == 0 {
				return usagef("no table given")
			}
			for _, f := range []struct {
				name string
				v    float64
			}{{"--field", field}, {"--freq", freq}, {"--dish", dish}} {
				if f.v < 0 || math.IsNaN(f.v) || math.IsInf(f.v, 0) {
					return usagef("%s must be a positive number, got %v", f.name, f.v)
				}
			}
			var figs *inspectPlots
			if plotDir != "" {
				switch plotFormat {
				case "png", "pdf", "svg":
				default:
					return usagef("--format %q: want png, pdf or svg", plotFormat)
				}
				var err error
				if figs, err = newInspectPlots(plotDir, plotFormat, plotForce); err != nil {
					return err
				}
			} else if isSet(env.flags, "format") || plotForce {
				return usagef("--format and --force go with --plots DIR")
			}
			opt := uv.ReadOptions{SkipBad: skipBad, Meta: uv.Meta{Freq: freq, Dish: dish}}
			var sums []uv.Summary
			failed := 0
			for _, path := range args {
				d, rep, err := uv.ReadFile(path, opt)
				if err != nil {
					fmt.Fprintf(env.stderr, "deflect inspect: %v\n", err)
					failed++
					continue
				}
				s := uv.Summarize(d, rep)
				if field > 0 {
					s.SetField(field)
				}
				sums = append(sums, s)
				if figs != nil {
					if err := figs.add(env.stderr, d, path); err != nil {
						return err
					}
				}
			}
			if asJSON {
				if sums == nil {
					sums = []uv.Summary{}
				}
				enc := json.NewEncoder(env.stdout)
				enc.SetIndent("", "  ")
				if err := enc.Encode(sums); err != nil {
					return err
				}
			} else {
				for i, s := range sums {
					if i > 0 {
						fmt.Fprintln(env.stdout)
					}
					writeSummary(env.stdout, &s, field > 0)
				}
			}
			if figs != nil {
				out := env.stdout
				if asJSON {
					out = env.stderr // keep stdout pure JSON
				}
				if err := figs.finish(out); err != nil {
					return err
				}
			}
			if failed > 0 {
				return errors.New(plural(failed, "table") + " could not be read")
			}
			return nil
		},
	})
}

// writeSummary prints a summary as aligned "label  value" lines.
func writeSummary(w io.Writer, s *uv.Summary, userField bool) {
	fmt.Fprintf(w, "%s  [%s]\n", s.File, s.Label)
	line := func(label, format string, a ...any) {
		fmt.Fprintf(w, "  %-15s %s\n", label, fmt.Sprintf(format, a...))
	}
	line("rows", "%d read: %d used, %d flagged, %d excluded", s.Rows, s.Used, s.Flagged, s.Autocorrelations+s.Skipped)
	for _, e := range s.Excluded {
		line("", "%s", e)
	}
	if s.Used == 0 {
		for _, n := range s.Notes {
			line("note", "%s", n)
		}
		return
	}
	if pc := s.PhaseCentre; pc != nil {
		line("phase centre", "RA %.6f°, Dec %+.6f°", pc[0], pc[1])
	}
	if s.FreqMax > 0 {
		if s.FreqMin == s.FreqMax {
			line("frequency", "%s", hz(s.FreqMin))
		} else {
			line("frequency", "%s to %s (%s)", hz(s.FreqMin), hz(s.FreqMax), plural(s.NumFreqs, "frequency"))
		}
	} else {
		line("frequency", "unknown (give --freq for baselines in metres and the primary beam)")
	}
	line("uv distance", "%.4g to %.4g kλ", s.UVMin, s.UVMax)
	if s.BaselineMax > 0 {
		line("baselines", "%s shortest, %s longest (projected)", metres(s.BaselineMin), metres(s.BaselineMax))
	}
	line("resolution", "≈ %s  (λ/B_max, common practice)", arcsec(s.Resolution))
	line("largest scale", "≈ %s  (0.6 λ/B_min, common practice)", arcsec(s.LargestScale))
	if s.PrimaryBeam > 0 {
		line("primary beam", "%s FWHM  (1.13 λ/D, D = %g m, at %s)", arcsec(s.PrimaryBeam), s.Dish, hz(s.FreqMin))
	} else {
		line("primary beam", "unknown (give --dish or a # dish: line)")
	}
	line("weights", "%.4g min, %.4g median, %.4g max Jy⁻²; sum %.4g", s.WeightMin, s.WeightMedian, s.WeightMax, s.WeightSum)
	if ws := s.WeightScale; ws != nil {
		line("weight check", "factor %.3g ± %.1f%% (true/stated weights; σ × %.3g), %s, %d samples",
			ws.Factor, 100*ws.RelError, ws.SigmaScale, ws.Method, ws.Samples)
		line("image noise", "%s/beam with stated weights, %s/beam corrected (natural weighting)", jy(s.Noise), jy(s.NoiseCorrected))
	} else {
		line("weight check", "none: %s", strings.TrimPrefix(s.WeightScaleError, "uv: "))
		line("image noise", "%s/beam with stated weights (natural weighting)", jy(s.Noise))
	}
	if s.WMax > 0 {
		line("w-term", "|w| ≤ %.4g λ; phase π|w|θ² reaches 0.1 rad at θ = %s", s.WMax, arcsec(s.WTermRadius))
	}
	switch {
	case s.GridN > 0:
		what := "the primary-beam FWHM"
		if userField {
			what = "the --field"
		}
		line("suggested grid", "%d × %d pixels of %s = %s, covering %s (%s)", s.GridN, s.GridN,
			arcsec(s.Pixel), arcsec(float64(s.GridN)*s.Pixel), arcsec(s.Field), what)
	default:
		line("suggested grid", "pixel %s; give --dish or --field for a grid size", arcsec(s.Pixel))
	}
	for _, n := range s.Notes {
		line("note", "%s", n)
	}
}

func plural(n int, what string) string {
	if n == 1 {
		return "1 " + what
	}
	if strings.HasSuffix(what, "y") {
		return fmt.Sprintf("%d %sies", n, strings.TrimSuffix(what, "y"))
	}
	return fmt.Sprintf("%d %ss", n, what)
}

func hz(f float64) string {
	switch {
	case f >= 1e9:
		return fmt.Sprintf("%.6g GHz", f/1e9)
	case f >= 1e6:
		return fmt.Sprintf("%.6g MHz", f/1e6)
	}
	return fmt.Sprintf("%.6g Hz", f)
}

func metres(m float64) string {
	if m >= 1e4 {
		return fmt.Sprintf("%.4g km", m/1e3)
	}
	return fmt.Sprintf("%.4g m", m)
}

func arcsec(a float64) string {
	switch {
	case a >= 60:
		return fmt.Sprintf("%.4g′ (%.4g″)", a/60, a)
	case a < 1e-3:
		return fmt.Sprintf("%.4g mas", a*1e3)
	}
	return fmt.Sprintf("%.4g″", a)
}

func jy(x float64) string {
	switch {
	case x >= 1:
		return fmt.Sprintf("%.3g Jy", x)
	case x >= 1e-3:
		return fmt.Sprintf("%.3g mJy", x*1e3)
	}
	return fmt.Sprintf("%.3g µJy", x*1e6)
}
