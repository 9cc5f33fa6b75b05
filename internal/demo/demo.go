// Package demo holds the fictional scenario of "deflect demo": a dusty
// star-forming galaxy at z = 3.0 lensed by a compact group of three galaxies
// at z = 0.55 inside a common, cored dark-matter halo that makes a faint
// central (fifth) image, observed by two invented arrays — array-A, 12
// dishes of 15 m at 150 GHz, and array-B, 40 dishes of 12 m at 300 GHz, at an
// invented site of latitude −31.5° — toward an invented phase centre. Every
// name and number is made up.
//
// The model files (truth, and the two models fitted: without and with the
// halo) and the antenna files are embedded; the visibilities are generated on
// the fly by earth-rotation synthesis with radiometer noise and a fixed seed.
package demo

import (
	"embed"
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"

	"deflect/fit"
	"deflect/fit/probe"
	"deflect/internal/atomicfile"
	"deflect/uv"
)

//go:embed truth.toml nohalo.toml halo.toml array-a.txt array-b.txt
var files embed.FS

// RA and Dec are the invented phase centre of the demo, degrees.
const (
	RA  = 201.25
	Dec = -27.4
)

// Seed is the seed of the demo's noise.
const Seed = 20260101

// Array is one of the demo's arrays and how it observed.
type Array struct {
	File string // embedded antenna file
	Obs  uv.Observation
}

// Arrays are the demo's two arrays: one 0.5 GHz channel each, ±2 h of hour
// angle, 120 s integrations for array-A and 300 s for array-B (about 8000
// and 37 000 visibilities).
var Arrays = []Array{
	{File: "array-a.txt", Obs: uv.Observation{RA: RA, Dec: Dec, HAStart: -2, HAEnd: 2, Integration: 120,
		Freqs: []float64{150e9}, ChanWidth: 0.5e9, Products: 2}},
	{File: "array-b.txt", Obs: uv.Observation{RA: RA, Dec: Dec, HAStart: -2, HAEnd: 2, Integration: 300,
		Freqs: []float64{300e9}, ChanWidth: 0.5e9, Products: 2}},
}

// ModelFiles are the embedded model files, written by Write into
// DIR/models: the truth and the two fitted models.
var ModelFiles = []string{"truth.toml", "nohalo.toml", "halo.toml"}

// File returns the contents of an embedded file.
func File(name string) ([]byte, error) { return files.ReadFile(name) }

// Write writes the scenario into dir: DIR/models/*.toml, DIR/arrays/*.txt
// and the simulated tables DIR/data/array-A.csv and array-B.csv (the truth
// model plus radiometer noise from Seed). It returns the table paths.
func Write(dir string) ([]string, error) {
	for _, sub := range []string{"models", "arrays", "data"} {
		if err := os.MkdirAll(filepath.Join(dir, sub), 0o755); err != nil {
			return nil, err
		}
	}
	for _, f := range ModelFiles {
		if err := copyFile(f, filepath.Join(dir, "models", f)); err != nil {
			return nil, err
		}
	}
	var ds []*uv.Dataset
	var paths []string
	for _, a := range Arrays {
		if err := copyFile(a.File, filepath.Join(dir, "arrays", a.File)); err != nil {
			return nil, err
		}
		b, _ := files.ReadFile(a.File)
		arr, err := uv.ReadArray(strings.NewReader(string(b)), a.File)
		if err != nil {
			return nil, err
		}
		d, err := uv.Synthesize(arr, a.Obs)
		if err != nil {
			return nil, err
		}
		p := filepath.Join(dir, "data", arr.Name+".csv")
		// Written before the truth model is read, since it names these files.
		if err := uv.WriteTableFile(p, true, d); err != nil {
			return nil, err
		}
		ds = append(ds, d)
		paths = append(paths, p)
	}
	m, err := fit.ReadModel(filepath.Join(dir, "models", "truth.toml"))
	if err != nil {
		return nil, err
	}
	g, err := probe.ModelGrid(m, ds, 128)
	if err != nil {
		return nil, err
	}
	sky := probe.NewSky(m, g, ds)
	for i, d := range ds {
		rnd := rand.New(rand.NewPCG(Seed, uint64(i)))
		if err := probe.Simulate(sky, m.Start(), i, d, probe.Disc{}, rnd); err != nil {
			return nil, fmt.Errorf("demo: simulating %s: %w", d.Meta.Label, err)
		}
		if err := uv.WriteTableFile(paths[i], true, d); err != nil {
			return nil, err
		}
	}
	return paths, nil
}

func copyFile(name, dst string) error {
	b, err := files.ReadFile(name)
	if err != nil {
		return err
	}
	return atomicfile.WriteBytes(dst, true, b)
}
