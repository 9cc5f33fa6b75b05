package main

import (
	"flag"
	"fmt"
	"math"
	"path/filepath"
	"strings"

	"deflect/internal/atomicfile"
	"deflect/uv"
)

func init() {
	var (
		pixel     float64
		size      int
		weighting string
		robust    float64
		outDir    string
		force     bool
		format    string
		skipBad   bool
		freq      float64
	)
	register(&command{
		name:    "image",
		summary: "make the dirty image and dirty beam of visibility tables (FITS and a figure)",
		usage:   "FILE... -o DIR [--pixel ARCSEC] [--size N] [--weighting natural|uniform|briggs] [--robust R] [--force] [--format png|pdf|svg]",
		help: `Reads each visibility table (one dataset per file) and writes to DIR, per
dataset LABEL:

  LABEL.dirty.fits   dirty image in Jy/beam, RA---SIN/DEC--SIN WCS about the
                     phase centre, clean beam in BMAJ/BMIN/BPA
  LABEL.beam.fits    dirty beam (peak 1), same grid centred on zero offset
  LABEL.dirty.png    the dirty image, east left, north up, offsets in arcsec,
                     clean-beam ellipse, colour bar in mJy/beam
  LABEL.beam.png     the dirty beam

The images are not corrected for the primary beam. Natural weighting
(the default) gives the lowest noise, σ = (Σ w)^−½ Jy/beam; uniform the
sharpest beam; briggs trades between them with the robustness R (Briggs
1995; R = 2 is close to natural, R = −2 to uniform).

Without --pixel and --size the grid is the one "deflect inspect" suggests:
pixels of at most a fifth of the resolution λ/B_max, and a grid covering the
primary-beam FWHM (1.13 λ/D); tables without a dish diameter get a grid of
64 resolution elements.`,
		setFlags: func(fs *flag.FlagSet) {
			fs.Float64Var(&pixel, "pixel", 0, "pixel size in `ARCSEC` (default: inspect's suggestion)")
			fs.IntVar(&size, "size", 0, "grid size `N` pixels on a side, even (default: inspect's suggestion)")
			fs.StringVar(&weighting, "weighting", "natural", "visibility weighting: natural, uniform or briggs")
			fs.Float64Var(&robust, "robust", 0, "Briggs robustness `R` (with --weighting briggs)")
			fs.StringVar(&outDir, "o", "", "output `DIR`ectory (required; refused when not empty without --force)")
			fs.BoolVar(&force, "force", false, "write into a non-empty output directory, replacing files")
			fs.StringVar(&format, "format", "png", "figure format: png, pdf or svg")
			fs.BoolVar(&skipBad, "skip-bad", false, "skip bad rows, counting them, instead of failing")
			fs.Float64Var(&freq, "freq", 0, "frequency in `HZ` for tables without one (overrides # freq:)")
		},
		run: func(env *runEnv, args []string) error {
			if len(args) == 0 {
				return usagef("no table given")
			}
			if outDir == "" {
				return usagef("-o DIR is required")
			}
			scheme, err := uv.ParseWeighting(weighting)
			if err != nil {
				return usagef("--weighting: %v", err)
			}
			if isSet(env.flags, "robust") && scheme != uv.Briggs {
				return usagef("--robust needs --weighting briggs")
			}
			if pixel < 0 || math.IsNaN(pixel) || math.IsInf(pixel, 0) {
				return usagef("--pixel must be a positive number of arcsec, got %v", pixel)
			}
			if size < 0 || size%2 != 0 || (size > 0 && size < 8) {
				return usagef("--size must be an even number ≥ 8, got %d", size)
			}
			if math.IsNaN(robust) || math.IsInf(robust, 0) {
				return usagef("--robust must be a finite number")
			}
			switch format {
			case "png", "pdf", "svg":
			default:
				return usagef("--format %q: want png, pdf or svg", format)
			}
			if err := atomicfile.PrepareDir(outDir, force); err != nil {
				return err
			}
			ropt := uv.ReadOptions{SkipBad: skipBad, Meta: uv.Meta{Freq: freq}}
			used := map[string]bool{}
			for _, path := range args {
				d, rep, err := uv.ReadFile(path, ropt)
				if err != nil {
					return err
				}
				s := uv.Summarize(d, rep)
				g, note := imageGrid(s, pixel, size)
				if note != "" {
					fmt.Fprintf(env.stderr, "deflect image: %s: %s\n", path, note)
				}
				di, err := uv.MakeDirty(d, g, uv.ImagingOptions{Weighting: scheme, Robust: robust})
				if err != nil {
					return fmt.Errorf("%s: %w", path, err)
				}
				label := fileLabel(d.Meta.Label, path, used)
				meta := uv.ImageMeta{RA: d.Meta.RA, Dec: d.Meta.Dec, HasPhaseCentre: d.Meta.HasPhaseCentre,
					Freq: d.Meta.Freq, Object: d.Meta.Label, BUnit: "JY/BEAM", Beam: &di.Clean}
				if meta.Freq == 0 && s.FreqMax > 0 {
					meta.Freq = 0.5 * (s.FreqMin + s.FreqMax)
				}
				bmeta := meta
				bmeta.BUnit = ""
				beamGrid := uv.Grid{N: g.N, Pixel: g.Pixel}
				base := filepath.Join(outDir, label)
				files := []string{base + ".dirty.fits", base + ".beam.fits", base + ".dirty." + format, base + ".beam." + format}
				if err := uv.WriteFITSImage(files[0], force, &uv.SkyImage{Grid: g, Meta: meta, Data: di.Image}); err != nil {
					return err
				}
				if err := uv.WriteFITSImage(files[1], force, &uv.SkyImage{Grid: beamGrid, Meta: bmeta, Data: di.Beam}); err != nil {
					return err
				}
				title := fmt.Sprintf("%s dirty image (%s)", d.Meta.Label, weightingName(scheme, robust))
				if err := writeImageFigure(files[2], force, format, g, di.Image, 1000, "mJy/beam", title, &di.Clean); err != nil {
					return err
				}
				if err := writeImageFigure(files[3], force, format, beamGrid, di.Beam, 1, "beam (peak 1)",
					fmt.Sprintf("%s dirty beam (%s)", d.Meta.Label, weightingName(scheme, robust)), &di.Clean); err != nil {
					return err
				}
				lo, hi := minMax(di.Image)
				fmt.Fprintf(env.stdout, "[%s] %s: %d visibilities, %d×%d grid of %.4g″ pixels, %s weighting\n",
					d.Meta.Label, path, di.Count, g.N, g.N, g.Pixel, weightingName(scheme, robust))
				fmt.Fprintf(env.stdout, "  clean beam %.4g″ × %.4g″ at PA %.1f°; noise %.4g mJy/beam (natural %.4g); image %.4g to %.4g mJy/beam\n",
					di.Clean.BMaj, di.Clean.BMin, di.Clean.BPA, 1000*di.Noise, 1000*di.NaturalNoise, 1000*lo, 1000*hi)
				fmt.Fprintf(env.stdout, "  wrote %s\n", strings.Join(files, ", "))
			}
			return nil
		},
	})
}

// imageGrid returns the grid of a dirty image: the user's pixel and size
// where given, otherwise inspect's suggestions, and a note when it had to
// fall back to a default.
func imageGrid(s uv.Summary, pixel float64, size int) (uv.Grid, string) {
	var note string
	if pixel == 0 {
		pixel = s.Pixel
	}
	if pixel == 0 {
		return uv.Grid{}, "no pixel size: give --pixel"
	}
	if size == 0 {
		size = s.GridN
		if s.Pixel != pixel && s.Field > 0 {
			size = uv.FFTSize(int(math.Ceil(s.Field/pixel - 1e-9)))
		}
	}
	if size == 0 {
		size = uv.FFTSize(int(math.Ceil(64 * s.Resolution / pixel)))
		note = fmt.Sprintf("no dish diameter for the primary beam; grid of %d pixels (64 resolution elements)", size)
	}
	return uv.Grid{N: size, Pixel: pixel}, note
}

func weightingName(w uv.Weighting, robust float64) string {
	if w == uv.Briggs {
		return fmt.Sprintf("briggs R = %g", robust)
	}
	return w.String()
}

// fileLabel returns a file-name-safe, unique label for a dataset.
func fileLabel(label, path string, used map[string]bool) string {
	if label == "" {
		label = strings.TrimSuffix(filepath.Base(path), filepath.Ext(path))
	}
	b := []byte(label)
	for i, c := range b {
		if !(c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '-' || c == '_' || c == '.') {
			b[i] = '_'
		}
	}
	base := string(b)
	out := base
	for k := 2; used[out]; k++ {
		out = fmt.Sprintf("%s-%d", base, k)
	}
	used[out] = true
	return out
}

func isSet(fs *flag.FlagSet, name string) bool {
	set := false
	fs.Visit(func(f *flag.Flag) {
		if f.Name == name {
			set = true
		}
	})
	return set
}

func minMax(a []float64) (lo, hi float64) {
	lo, hi = math.Inf(1), math.Inf(-1)
	for _, v := range a {
		lo, hi = min(lo, v), max(hi, v)
	}
	return lo, hi
}
