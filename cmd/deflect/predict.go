package main

import (
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"path/filepath"
	"strconv"
	"strings"

	"deflect/internal/atomicfile"
	"deflect/lensmodel"
)

// predictLensFlags collects repeated --lens values.
type predictLensFlags []string

func (l *predictLensFlags) String() string { return strings.Join(*l, " ") }
func (l *predictLensFlags) Set(s string) error {
	*l = append(*l, s)
	return nil
}

func init() {
	var (
		sourcePos string
		flux      float64
		outDir    string
		force     bool
		format    string
		lenses    predictLensFlags
		zl, zs    float64
		h0, om    float64
		ode       float64
	)
	register(&command{
		name:    "predict",
		summary: "list the images of a point source behind a lens model, with μ, time delays and fluxes",
		usage:   "MODEL --source X,Y [--flux MJY] [-o DIR] [--force] [--format png|pdf|svg] | --lens KIND:K=V,... [--zl Z --zs Z]",
		help: `Finds every image of a point source at --source (arcsec, x east, y north)
behind the lens of MODEL, the model file of deflect fit (only its [[lens]]
tables and optional [cosmology] are needed; [[data]] files need not exist
yet; free parameters are taken at their start, or without one at the
centre of their prior), or behind the components given by repeated --lens
flags, e.g. --lens 'sie:x=0,y=0,theta_e=1.2,q=0.8,pa=30' --lens
'shear:gamma=0.05,angle=20'.

Lens kinds and parameters (arcsec, degrees east of north):
  point     x, y, theta_e
  sie       x, y, theta_e, q (1), pa (0), core (0)
  powerlaw  x, y, theta_e, q (1), pa (0), slope (2, the 3-D slope)
  nfw       x, y, kappa_s, r_s, q (1), pa (0); or m200 (M_sun) and c with a cosmology
  gnfw      x, y, kappa_s, r_s, gamma (1, the inner 3-D slope in [0, 2)), q (1), pa (0)
  burkert   x, y, kappa_s, r_s (the core radius), q (1), pa (0)
  shear     gamma, angle (0), x (0), y (0)
  sheet     kappa

The full table with units and allowed ranges: deflect fit -h kinds. For
nfw, gnfw and burkert q is the axis ratio of the potential, at least
0.8165 (the limit of the elliptical-potential form).

For each image: position, signed magnification μ (negative for saddle
points), parity and kind (minimum, saddle or maximum of the arrival time),
the time delay in days after the first-arriving image (needs the
cosmology), and the flux |μ| × --flux. Also printed: the Einstein radius
(the circle about the first component's centre with mean convergence 1)
and the projected mass inside it, M = π θ_E² Σ_cr. When a component's
centre is singular (an SIE without core, a point mass, a steep cusp) the
central image is infinitely demagnified, and the output says so.

With -o DIR: writes predict.json with the same numbers and two figures
(east left, north up, offsets in arcsec; PNG, or PDF or SVG with --format):
predict.png, the lens plane with the critical curves and the images beside
the source plane with the caustics and the source; and magnification.png,
log10 |μ| on a 256² grid about the critical curves and images, with the
critical curves. A non-empty DIR is refused without --force.`,
		setFlags: func(fs *flag.FlagSet) {
			fs.StringVar(&sourcePos, "source", "", "source position `X,Y` in arcsec (x east, y north); required")
			fs.Float64Var(&flux, "flux", 1, "source flux in `MJY`")
			fs.StringVar(&outDir, "o", "", "write predict.json, predict.png and magnification.png to `DIR`")
			fs.BoolVar(&force, "force", false, "write into a non-empty -o DIR, replacing files")
			fs.StringVar(&format, "format", "png", "figure format with -o: png, pdf or svg")
			lenses = nil // fs.Var keeps the old value; each run starts empty
			fs.Var(&lenses, "lens", "a lens component `KIND:K=V,...` instead of MODEL (repeatable)")
			fs.Float64Var(&zl, "zl", 0, "lens redshift with --lens (for time delays and masses)")
			fs.Float64Var(&zs, "zs", 0, "source redshift with --lens")
			fs.Float64Var(&h0, "H0", 70, "Hubble constant in km/s/Mpc with --lens")
			fs.Float64Var(&om, "Om", 0.3, "matter density Ωm with --lens")
			fs.Float64Var(&ode, "Ode", math.NaN(), "dark-energy density ΩΛ with --lens (default 1 − Ωm, flat)")
		},
		run: func(env *runEnv, args []string) error {
			if sourcePos == "" {
				return usagef("--source X,Y is required")
			}
			bx, by, err := predictParsePair(sourcePos)
			if err != nil {
				return usagef("--source: %v", err)
			}
			if !(flux >= 0) || math.IsInf(flux, 0) {
				return usagef("--flux must be a number ≥ 0, got %v", flux)
			}
			var pm *predictModel
			switch {
			case len(args) > 1:
				return usagef("one MODEL file, got %d arguments", len(args))
			case len(args) == 1 && len(lenses) > 0:
				return usagef("give either MODEL or --lens, not both")
			case len(args) == 1:
				if zl != 0 || zs != 0 {
					return usagef("--zl and --zs go with --lens; MODEL has its own [cosmology]")
				}
				if pm, err = readPredictModel(args[0]); err != nil {
					return err
				}
			case len(lenses) > 0:
				var cosmo *predictCosmo
				if zl != 0 || zs != 0 {
					cosmo = &predictCosmo{zl: zl, zs: zs, c: lensmodel.FlatLambdaCDM(h0, om)}
					if !math.IsNaN(ode) {
						cosmo.c.Ode = ode
					}
				}
				if pm, err = predictFlagModel(lenses, cosmo); err != nil {
					return usagef("%v", err)
				}
			default:
				return usagef("no MODEL file or --lens given")
			}
			switch format {
			case "png", "pdf", "svg":
			default:
				return usagef("--format %q: want png, pdf or svg", format)
			}
			if outDir != "" {
				if err := atomicfile.PrepareDir(outDir, force); err != nil {
					return err
				}
			}
			res, err := computePrediction(pm, bx, by, flux)
			if err != nil {
				return err
			}
			writePrediction(env.stdout, res)
			if outDir == "" {
				return nil
			}
			js, err := json.MarshalIndent(res, "", "  ")
			if err != nil {
				return err
			}
			if err := atomicfile.WriteBytes(filepath.Join(outDir, "predict.json"), force, append(js, '\n')); err != nil {
				return err
			}
			curves, err := lensmodel.CriticalCurves(pm.lens, lensmodel.CurveOptions{})
			if err != nil {
				return fmt.Errorf("critical curves for the figure: %w", err)
			}
			_, err = writePredictFigures(outDir, format, force, pm.lens, curves, res)
			return err
		},
	})
}

func predictParsePair(s string) (x, y float64, err error) {
	a, b, ok := strings.Cut(s, ",")
	if !ok {
		return 0, 0, fmt.Errorf("%q: want X,Y", s)
	}
	if x, err = strconv.ParseFloat(strings.TrimSpace(a), 64); err != nil || math.IsInf(x, 0) || math.IsNaN(x) {
		return 0, 0, fmt.Errorf("%q: X is not a finite number", s)
	}
	if y, err = strconv.ParseFloat(strings.TrimSpace(b), 64); err != nil || math.IsInf(y, 0) || math.IsNaN(y) {
		return 0, 0, fmt.Errorf("%q: Y is not a finite number", s)
	}
	return x, y, nil
}

// predictImage is one row of the image table (and of predict.json).
type predictImage struct {
	X      float64  `json:"x_arcsec"`
	Y      float64  `json:"y_arcsec"`
	Mu     float64  `json:"mu"`
	Parity int      `json:"parity"`
	Kind   string   `json:"kind"`
	Delay  *float64 `json:"delay_days,omitempty"`
	Flux   float64  `json:"flux_mjy"`
}

type predictCosmoJSON struct {
	H0, Om, Ode float64
	ZLens       float64 `json:"z_lens"`
	ZSource     float64 `json:"z_source"`
	DL          float64 `json:"D_l_Mpc"`
	DS          float64 `json:"D_s_Mpc"`
	DLS         float64 `json:"D_ls_Mpc"`
	SigmaCrit   float64 `json:"sigma_crit_msun_per_arcsec2"`
	DelayScale  float64 `json:"days_per_arcsec2"`
}

// predictResult is everything predict reports.
type predictResult struct {
	SourceX    float64            `json:"source_x_arcsec"`
	SourceY    float64            `json:"source_y_arcsec"`
	SourceFlux float64            `json:"source_flux_mjy"`
	Lens       []predictLensSpec  `json:"lens"`
	Cosmology  *predictCosmoJSON  `json:"cosmology,omitempty"`
	Images     []predictImage     `json:"images"`
	TotalMu    float64            `json:"total_abs_mu"`
	TotalFlux  float64            `json:"total_flux_mjy"`
	ThetaE     *float64           `json:"einstein_radius_arcsec,omitempty"`
	ThetaEAt   *[2]float64        `json:"einstein_radius_centre_arcsec,omitempty"`
	ThetaENote string             `json:"einstein_radius_note,omitempty"`
	MassInside *float64           `json:"mass_inside_einstein_radius_msun,omitempty"`
	Singular   []lensmodel.Centre `json:"singular_centres_arcsec"`
	Central    string             `json:"central_image_note,omitempty"`
}

func computePrediction(pm *predictModel, bx, by, flux float64) (*predictResult, error) {
	res := &predictResult{SourceX: bx, SourceY: by, SourceFlux: flux, Lens: pm.specs, Images: []predictImage{}}
	opt := lensmodel.ImageOptions{}
	if c := pm.cosmo; c != nil {
		dl, ds, dls := c.c.LensDistances(c.zl, c.zs)
		res.Cosmology = &predictCosmoJSON{
			H0: c.c.H0, Om: c.c.Om, Ode: c.c.Ode, ZLens: c.zl, ZSource: c.zs,
			DL: dl, DS: ds, DLS: dls,
			SigmaCrit:  c.c.SigmaCrit(c.zl, c.zs),
			DelayScale: c.c.DelayScale(c.zl, c.zs),
		}
		opt.DelayScale = res.Cosmology.DelayScale
	}
	ir, err := lensmodel.FindImages(pm.lens, bx, by, opt)
	if err != nil {
		return nil, err
	}
	for _, im := range ir.Images {
		pi := predictImage{X: im.X, Y: im.Y, Mu: im.Mu, Parity: im.Parity, Kind: im.Kind.String(), Flux: math.Abs(im.Mu) * flux}
		if pm.cosmo != nil {
			d := im.Delay
			pi.Delay = &d
		}
		res.Images = append(res.Images, pi)
		res.TotalMu += math.Abs(im.Mu)
		res.TotalFlux += pi.Flux
	}
	res.Singular = ir.SingularCentres
	if res.Singular == nil {
		res.Singular = []lensmodel.Centre{}
	}
	res.Central = ir.CentralNote()
	// The Einstein radius about the first component that has a centre.
	for _, s := range pm.specs {
		if s.Kind == "shear" || s.Kind == "sheet" {
			continue
		}
		cx, cy := s.Params["x"], s.Params["y"]
		r, err := lensmodel.EinsteinRadius(pm.lens, cx, cy)
		if err != nil {
			if !errors.Is(err, lensmodel.ErrNoEinsteinRadius) {
				return nil, err
			}
			res.ThetaENote = "the mean convergence about the first component's centre never reaches 1: no Einstein radius"
			break
		}
		res.ThetaE = &r
		res.ThetaEAt = &[2]float64{cx, cy}
		if c := pm.cosmo; c != nil {
			m := c.c.MassInsideThetaE(r, c.zl, c.zs)
			res.MassInside = &m
		}
		break
	}
	return res, nil
}

func writePrediction(w io.Writer, r *predictResult) {
	fmt.Fprintf(w, "source at (%.4f, %.4f) arcsec, flux %g mJy; %d lens component", r.SourceX, r.SourceY, r.SourceFlux, len(r.Lens))
	if len(r.Lens) != 1 {
		fmt.Fprint(w, "s")
	}
	fmt.Fprintln(w)
	if c := r.Cosmology; c != nil {
		fmt.Fprintf(w, "cosmology: H0 = %g km/s/Mpc, Ωm = %g, ΩΛ = %g (radiation neglected); z_l = %g, z_s = %g\n", c.H0, c.Om, c.Ode, c.ZLens, c.ZSource)
		fmt.Fprintf(w, "distances: D_l = %.1f, D_s = %.1f, D_ls = %.1f Mpc; Σ_cr = %.4g M_sun/arcsec²\n", c.DL, c.DS, c.DLS, c.SigmaCrit)
	} else {
		fmt.Fprintln(w, "no cosmology given: no time delays or masses (add --zl and --zs, or a [cosmology] table)")
	}
	switch {
	case r.ThetaE != nil:
		fmt.Fprintf(w, "Einstein radius: %.4f arcsec (mean κ = 1 about (%.4g, %.4g))", *r.ThetaE, r.ThetaEAt[0], r.ThetaEAt[1])
		if r.MassInside != nil {
			fmt.Fprintf(w, "; projected mass inside: %.4g M_sun", *r.MassInside)
		}
		fmt.Fprintln(w)
	case r.ThetaENote != "":
		fmt.Fprintln(w, r.ThetaENote)
	}
	fmt.Fprintln(w)
	fmt.Fprintf(w, "%3s %10s %10s %12s %7s %-8s %12s %12s\n", "#", "x (\")", "y (\")", "μ", "parity", "kind", "delay (d)", "flux (mJy)")
	for i, im := range r.Images {
		delay := "—"
		if im.Delay != nil {
			delay = strconv.FormatFloat(*im.Delay, 'f', 3, 64)
		}
		fmt.Fprintf(w, "%3d %10.5f %10.5f %12.5g %+7d %-8s %12s %12.5g\n", i+1, im.X, im.Y, im.Mu, im.Parity, im.Kind, delay, im.Flux)
	}
	fmt.Fprintf(w, "%d image", len(r.Images))
	if len(r.Images) != 1 {
		fmt.Fprint(w, "s")
	}
	fmt.Fprintf(w, ", total |μ| = %.5g, total flux %.5g mJy\n", r.TotalMu, r.TotalFlux)
	if r.Central != "" {
		fmt.Fprintf(w, "note: %s\n", r.Central)
	}
}
