package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"os"
	"strings"

	"deflect/fit"
)

func init() {
	var (
		out, method, cache string
		format             string
		seed               int64
		resume, force      bool
		quiet, help        bool
	)
	c := &command{
		name:    "fit",
		summary: "fit a lens model to visibility datasets",
		usage:   "MODEL -o DIR [--method optimize|mcmc|nested] [--resume] [--seed N] [--format png|pdf|svg] [--force] [--quiet] [--cache DIR]",
		help: `Fits the lens and source model of the model file MODEL (TOML; run
"deflect fit -h kinds" for every lens and source kind and its parameters)
directly to its visibility datasets, through the compressed exact χ² on the
[sky] grid, and writes into DIR (refused when not empty, without --force):

  summary.txt           best fit, posterior median and 68% interval of every
                        free parameter; χ² and reduced χ² per dataset; ln Z;
                        derived quantities (magnification, intrinsic flux,
                        Einstein radius and mass, image multiplicity and the
                        central image)
  posterior.csv         samples: one column per free parameter, weight, ln L
  bestfit.toml          the model file with every free parameter starting at
                        its best fit (reusable as MODEL)
  result.json           every number above, machine-readable
  run.json              deflect and Go versions, sha256 of the model and data
                        files, seed, timings, host
  LABEL-*.fits          per dataset: data, model-dirty and residual dirty
                        images (Jy/beam), residual in σ, model sky (Jy/pixel)
  LABEL-dirty.FMT       per dataset: data, model and residual dirty images
  LABEL-vis.FMT         per dataset: binned visibilities against uv distance
                        with the best-fit model and the residuals (tables over
                        2^20 rows: every k-th row, said in result notes)
  magnification.FMT     the best-fit lens's magnification, critical curves
  source-plane.*        the best-fit source with the caustics (.fits and
                        .FMT; a pixelated source adds its 1σ panel)
  corner.FMT            the posterior corner plot
  trace.FMT             mcmc: every walker's path per parameter
  autocorr.FMT          mcmc: autocorrelation of each parameter against lag
  checkpoint.gob        the sampler state (every minute and on Ctrl-C)

Ctrl-C (or SIGTERM) stops the run after writing a checkpoint; run the same
command with --resume to continue: the result is bit for bit that of an
uninterrupted run. Compressed data are cached (--cache) so a re-fit does
not parse the tables again. FMT is png, or pdf or svg with --format;
figures that cannot be drawn are named in summary notes.`,
		setFlags: func(fs *flag.FlagSet) {
			fs.StringVar(&out, "o", "", "output `DIR` (required)")
			fs.StringVar(&method, "method", "", "optimize, mcmc or nested (default: the model file's [fit] method, else nested)")
			fs.Int64Var(&seed, "seed", -1, "random seed `N` (default: the model file's [fit] seed)")
			fs.BoolVar(&resume, "resume", false, "continue the run checkpointed in DIR")
			fs.StringVar(&format, "format", "png", "figure format `FMT`: png, pdf or svg")
			fs.BoolVar(&force, "force", false, "write into a non-empty DIR, replacing files")
			fs.BoolVar(&quiet, "quiet", false, "no progress bar")
			fs.StringVar(&cache, "cache", fit.DefaultCacheDir(), "cache `DIR` for compressed data (empty: none)")
			fs.BoolVar(&help, "h", false, `show this help; "-h kinds" lists the lens and source kinds`)
			fs.BoolVar(&help, "help", false, "show this help")
		},
	}
	c.run = func(env *runEnv, args []string) error {
		if help {
			if len(args) > 0 && args[0] == "kinds" {
				fmt.Fprint(env.stdout, fit.KindsHelp())
				return nil
			}
			printCommandHelp(env.stdout, c, env.flags)
			return nil
		}
		if len(args) != 1 {
			return usagef("want one model file, got %d arguments", len(args))
		}
		if out == "" {
			return usagef("-o DIR is required")
		}
		if method != "" && method != "optimize" && method != "mcmc" && method != "nested" {
			return usagef("--method %q: want optimize, mcmc or nested", method)
		}
		switch format {
		case "png", "pdf", "svg":
		default:
			return usagef("--format %q: want png, pdf or svg", format)
		}
		m, err := fit.ReadModel(args[0])
		if err != nil {
			return err
		}
		opt := fit.RunOptions{Method: method, OutDir: out, Resume: resume, Force: force, Version: version, Format: format,
			Likelihood: fit.LikelihoodOptions{CacheDir: cache}}
		if seed >= 0 {
			opt.Seed, opt.SeedSet = uint64(seed), true
		}
		if f, ok := env.stderr.(*os.File); ok {
			if bar := fit.NewProgressBar(f, quiet); bar.Enabled() {
				opt.Progress = bar
			}
		}
		ctx, stop := fit.SignalContext(context.Background())
		defer stop()
		r, err := fit.Run(ctx, m, opt)
		if err != nil {
			return err
		}
		if r.Status == fit.Interrupted.String() {
			return errors.New("interrupted: the state is saved in " + out + "/" + fit.CheckpointFile + "; run the same command with --resume to continue")
		}
		fmt.Fprint(env.stdout, r.SummaryText())
		fmt.Fprintf(env.stdout, "\nwrote %s: %s\n", out, strings.Join(r.Files, ", "))
		return nil
	}
	register(c)
}
