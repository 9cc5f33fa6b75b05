package main

import (
	"bytes"
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"time"

	"deflect/fit"
	"deflect/fit/probe"
	"deflect/internal/atomicfile"
	"deflect/internal/demo"
	"deflect/uv"
)

func init() {
	var (
		out          string
		force, quick bool
	)
	register(&command{
		name:    "demo",
		summary: "run the whole job on an embedded, fictional lensed galaxy",
		usage:   "[-o DIR] [--force] [--quick]",
		help: `Generates a fictional scenario — a dusty star-forming galaxy at z = 3.0
lensed by a compact group of three galaxies at z = 0.55 inside a cored
common halo that makes a faint central image, observed by two invented
arrays (array-A: 12 × 15 m at 150 GHz; array-B: 40 × 12 m at 300 GHz) — and
runs the steps one would run on real data, writing everything to DIR:

  models/            truth.toml (the true sky), nohalo.toml and halo.toml
                     (the two models fitted)
  arrays/            the antenna files of the two arrays
  data/              array-A.csv, array-B.csv: the simulated visibilities
                     ("deflect simulate MODEL --array FILE" makes such tables)
  inspect.txt        "deflect inspect" of the tables
  image/             "deflect image": dirty images and beams, FITS and PNG
  fit-nohalo.json,   best fits of the two models (maximum a posteriori,
  fit-halo.json      Laplace evidence)
  compare.txt        Δχ², ΔBIC, ln Bayes factor of halo over no halo
  probe/             "deflect probe" at the group centre: probe.json, probe.png
  summary.txt        the summary printed at the end

--quick uses fewer null simulations and optimiser steps.`,
		setFlags: func(fs *flag.FlagSet) {
			fs.StringVar(&out, "o", "deflect-demo", "output `DIR`ectory")
			fs.BoolVar(&force, "force", false, "write into a non-empty output directory")
			fs.BoolVar(&quick, "quick", false, "fewer null simulations and optimiser steps")
		},
		run: func(env *runEnv, args []string) error {
			if len(args) != 0 {
				return usagef("demo takes no arguments")
			}
			return runDemo(env, out, force, quick)
		},
	})
}

func runDemo(env *runEnv, dir string, force, quick bool) error {
	start := time.Now()
	if err := atomicfile.PrepareDir(dir, force); err != nil {
		return err
	}
	step := func(format string, a ...any) {
		fmt.Fprintf(env.stdout, "[%5.1fs] %s\n", time.Since(start).Seconds(), fmt.Sprintf(format, a...))
	}
	step("generating the fictional scenario in %s", dir)
	tables, err := demo.Write(dir)
	if err != nil {
		return err
	}
	// inspect and image: the commands themselves, as a user runs them.
	var ins, errb bytes.Buffer
	if rc := runMain(append([]string{"inspect"}, tables...), &ins, &errb); rc != 0 {
		return fmt.Errorf("inspect failed: %s", errb.String())
	}
	if err := atomicfile.WriteBytes(filepath.Join(dir, "inspect.txt"), true, ins.Bytes()); err != nil {
		return err
	}
	step("inspect: %s", filepath.Join(dir, "inspect.txt"))
	errb.Reset()
	var imgOut bytes.Buffer
	imgArgs := append([]string{"image"}, tables...)
	imgArgs = append(imgArgs, "-o", filepath.Join(dir, "image"), "--pixel", "0.04", "--size", "128")
	if force {
		imgArgs = append(imgArgs, "--force")
	}
	if rc := runMain(imgArgs, &imgOut, &errb); rc != 0 {
		return fmt.Errorf("image failed: %s", errb.String())
	}
	step("image: dirty images and beams in %s", filepath.Join(dir, "image"))

	mA, err := fit.ReadModel(filepath.Join(dir, "models", "nohalo.toml"))
	if err != nil {
		return err
	}
	mB, err := fit.ReadModel(filepath.Join(dir, "models", "halo.toml"))
	if err != nil {
		return err
	}
	data, err := probe.LoadData(mB)
	if err != nil {
		return err
	}
	g, err := probe.ModelGrid(mB, data, 128)
	if err != nil {
		return err
	}
	evals, nNull := 400, 200
	if quick {
		evals, nNull = 60, 50
	}
	var fits []*probe.ModelFit
	for _, c := range []struct {
		name string
		m    *fit.Model
	}{{"nohalo", mA}, {"halo", mB}} {
		f, err := probe.FitModel(context.Background(), c.name, c.m, evals, demo.Seed)
		if err != nil {
			return err
		}
		if err := writeJSON(filepath.Join(dir, "fit-"+c.name+".json"), f); err != nil {
			return err
		}
		step("fit %s: χ² = %.1f for %d visibilities, %d free parameters, ln Z (Laplace) = %.1f, %d evaluations",
			c.name, f.Chi2, f.Visibilities, len(f.Theta), f.LogZ, f.Evaluations)
		fits = append(fits, f)
	}
	mt := probe.CompareModels(fits[0], fits[1])
	cmp := fmt.Sprintf("halo over nohalo: Δχ² = %.1f, ΔBIC = %.1f, ln Bayes factor = %.1f (%s)\nmethod: %s\ncaution: the evidence depends on the priors.\n",
		mt.DeltaChi2, mt.DeltaBIC, mt.LnBayes, mt.LnBayesFrom, mt.Method)
	if err := atomicfile.WriteBytes(filepath.Join(dir, "compare.txt"), true, []byte(cmp)); err != nil {
		return err
	}
	step("compare: %s", firstLine(cmp))

	pdir := filepath.Join(dir, "probe")
	if err := os.MkdirAll(pdir, 0o755); err != nil {
		return err
	}
	res, err := probe.Run(mB, fits[1].Theta, data, probe.Options{X: 0, Y: 0, Radius: 0.15, Null: nNull,
		Seed: demo.Seed, Weighting: uv.Natural, Grid: g, Models: mt})
	if err != nil {
		return err
	}
	if err := writeProbe(pdir, filepath.Join(pdir, "probe.png"), "png", force, res); err != nil {
		return err
	}
	step("probe: %s", filepath.Join(pdir, "probe.json"))
	summary := res.Report() + fmt.Sprintf("demo finished in %.1f s; outputs in %s\n", time.Since(start).Seconds(), dir)
	if err := atomicfile.WriteBytes(filepath.Join(dir, "summary.txt"), true, []byte(summary)); err != nil {
		return err
	}
	fmt.Fprint(env.stdout, summary)
	return nil
}

func firstLine(s string) string {
	for i, c := range s {
		if c == '\n' {
			return s[:i]
		}
	}
	return s
}

func writeJSON(path string, v any) error {
	b, err := json.MarshalIndent(v, "", "  ")
	if err != nil {
		return err
	}
	return atomicfile.WriteBytes(path, true, append(b, '\n'))
}
