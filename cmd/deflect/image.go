package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"strings"

	"deflect/internal/atomicfile"
	"deflect/plots"
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
  LABEL.dirty.png    figure: the dirty image in mJy/beam with the clean-beam
                     ellipse (lower left), and the central half of the dirty
                     beam with the clean beam's half-power ellipse; east
                     left, north up, offsets in arcsec (.pdf or .svg with
                     --format)

The images are not corrected for the primary beam. Natural weighting
(the default) gives the lowest noise, σ = (Σ w)^−½ Jy/beam; uniform the
sharpest beam; briggs trades between them with the robustness R (Briggs
1995; R = 2 is close to natural, R = −2 to uniform).

Without --pixel and --size the grid is the one "deflect inspect" suggests:
pixels of at most a fifth of the resolution λ/B_max, and a grid covering the
primary-beam FWHM (1.13 λ/D); tables without a dish diameter get a grid of
64 resolution elements.

Tables are streamed, never held whole: memory is that of the grid plus one
chunk of rows, so tables of 10⁸ rows work. The table is read once for the
grid suggestion (skipped when --pixel and --size are both given), then
once more for natural weighting or twice for uniform and briggs (gridded
weights, then the image).`,
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
				if err := imageTable(env, path, ropt, imageRequest{pixel: pixel, size: size, scheme: scheme,
					robust: robust, outDir: outDir, force: force, format: format}, used); err != nil {
					return err
				}
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

// imageRequest is what "deflect image" was asked for.
type imageRequest struct {
	pixel  float64 // arcsec; 0 = inspect's suggestion
	size   int     // pixels; 0 = inspect's suggestion
	scheme uv.Weighting
	robust float64
	outDir string
	force  bool
	format string
}

// imageTable images one table, streaming it: a first pass for inspect's
// grid suggestion unless --pixel and --size are both given, then one pass
// (natural weighting) or two (uniform and Briggs: gridded weights, then
// the image). Memory is O(N²) plus a chunk whatever the number of rows.
func imageTable(env *runEnv, path string, ropt uv.ReadOptions, req imageRequest, used map[string]bool) error {
	var st tableStats
	open := func() (uv.ChunkReader, error) {
		r, err := uv.OpenTable(path, ropt)
		if err != nil {
			return nil, err
		}
		st = tableStats{meta: r.Meta()}
		return &statsReader{r: r, st: &st}, nil
	}
	g := uv.Grid{N: req.size, Pixel: req.pixel}
	if req.pixel == 0 || req.size == 0 {
		if err := scanAll(open); err != nil {
			return err
		}
		if st.used == 0 {
			return fmt.Errorf("%s: no unflagged visibilities to image", path)
		}
		var note string
		g, note = imageGrid(st.summary(), req.pixel, req.size)
		if note != "" {
			fmt.Fprintf(env.stderr, "deflect image: %s: %s\n", path, note)
		}
		if g.N == 0 {
			return fmt.Errorf("%s: cannot choose a grid; give --pixel and --size", path)
		}
	}
	di, err := uv.MakeDirtyStream(open, g, uv.ImagingOptions{Weighting: req.scheme, Robust: req.robust})
	if err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	m := st.meta
	label := fileLabel(m.Label, path, used)
	meta := uv.ImageMeta{RA: m.RA, Dec: m.Dec, HasPhaseCentre: m.HasPhaseCentre,
		Freq: m.Freq, Object: m.Label, BUnit: "JY/BEAM", Beam: &di.Clean}
	if meta.Freq == 0 && st.fMax > 0 {
		meta.Freq = 0.5 * (st.fMin + st.fMax)
	}
	bmeta := meta
	bmeta.BUnit = ""
	beamGrid := uv.Grid{N: g.N, Pixel: g.Pixel}
	base := filepath.Join(req.outDir, label)
	files := []string{base + ".dirty.fits", base + ".beam.fits", base + ".dirty." + req.format}
	if err := uv.WriteFITSImage(files[0], req.force, &uv.SkyImage{Grid: g, Meta: meta, Data: di.Image}); err != nil {
		return err
	}
	if err := uv.WriteFITSImage(files[1], req.force, &uv.SkyImage{Grid: beamGrid, Meta: bmeta, Data: di.Beam}); err != nil {
		return err
	}
	wname := weightingName(req.scheme, req.robust)
	fig, err := imageFigure(di, fmt.Sprintf("%s dirty image (%s)", m.Label, wname))
	if err != nil {
		return err
	}
	if err := plots.Save(fig, 0, 0, files[2], req.format, req.force); err != nil {
		return err
	}
	lo, hi := minMax(di.Image)
	if st.rep != nil {
		fmt.Fprintf(env.stdout, "[%s] %s: %d rows, %d visibilities imaged (%d flagged, %d autocorrelations, %d skipped)\n",
			m.Label, path, st.rep.Rows, di.Count, st.rep.Flagged, st.rep.Autocorrelations, st.rep.Skipped)
	}
	fmt.Fprintf(env.stdout, "  %d×%d grid of %.4g″ pixels, %s weighting\n", g.N, g.N, g.Pixel, wname)
	fmt.Fprintf(env.stdout, "  clean beam %.4g″ × %.4g″ at PA %.1f°; noise %.4g mJy/beam (natural %.4g); image %.4g to %.4g mJy/beam\n",
		di.Clean.BMaj, di.Clean.BMin, di.Clean.BPA, 1000*di.Noise, 1000*di.NaturalNoise, 1000*lo, 1000*hi)
	fmt.Fprintf(env.stdout, "  wrote %s\n", strings.Join(files, ", "))
	return nil
}

// tableStats is what "deflect image" needs of a table besides the image:
// the ranges behind inspect's grid suggestion, gathered chunk by chunk.
type tableStats struct {
	meta           uv.Meta
	rep            *uv.ReadReport // set at the end of the pass
	used           int
	uvMin2, uvMax2 float64 // λ²
	fMin, fMax     float64 // Hz, 0 when unknown
}

func (s *tableStats) add(d *uv.Dataset) {
	if s.used == 0 {
		s.uvMin2, s.fMin = math.Inf(1), math.Inf(1)
	}
	for k := range d.Len() {
		if d.Flagged(k) {
			continue
		}
		s.used++
		q := d.U[k]*d.U[k] + d.V[k]*d.V[k]
		s.uvMin2, s.uvMax2 = math.Min(s.uvMin2, q), math.Max(s.uvMax2, q)
		if f := d.FreqAt(k); f > 0 {
			s.fMin, s.fMax = math.Min(s.fMin, f), math.Max(s.fMax, f)
		}
	}
}

// summary returns the part of uv.Summarize's result that imageGrid reads,
// by the same formulas: resolution 1/|uv|max, primary beam 1.13 λ/D at the
// lowest frequency, pixel NicePixel(resolution/5), grid over the beam.
func (s *tableStats) summary() uv.Summary {
	sm := uv.Summary{Label: s.meta.Label, Dish: s.meta.Dish}
	if s.used == 0 || !(s.uvMax2 > 0) {
		return sm
	}
	sm.Resolution = uv.ArcsecPerRadian / math.Sqrt(s.uvMax2)
	sm.LargestScale = 0.6 * uv.ArcsecPerRadian / math.Sqrt(s.uvMin2)
	if s.fMax > 0 {
		sm.FreqMin, sm.FreqMax = s.fMin, s.fMax
		if sm.Dish > 0 {
			sm.PrimaryBeam = uv.NewPrimaryBeam(sm.Dish, s.fMin).FWHM
		}
	}
	sm.Pixel = uv.NicePixel(sm.Resolution / 5)
	sm.SetField(0)
	return sm
}

// statsReader passes a table's chunks on, gathering tableStats, and keeps
// the read report once the table is exhausted.
type statsReader struct {
	r  *uv.TableReader
	st *tableStats
}

func (s *statsReader) Next(dst *uv.Dataset) error {
	err := s.r.Next(dst)
	if err == nil {
		s.st.add(dst)
	} else if errors.Is(err, io.EOF) {
		s.st.rep = s.r.Report()
	}
	return err
}

func (s *statsReader) Close() error { return s.r.Close() }

// scanAll reads every chunk of a reader from open, closing it.
func scanAll(open func() (uv.ChunkReader, error)) (err error) {
	r, err := open()
	if err != nil {
		return err
	}
	defer func() {
		if c, ok := r.(io.Closer); ok {
			if cerr := c.Close(); err == nil {
				err = cerr
			}
		}
	}()
	var chunk uv.Dataset
	for {
		if err := r.Next(&chunk); err != nil {
			if errors.Is(err, io.EOF) {
				return nil
			}
			return err
		}
	}
}
