package main

import (
	"flag"
	"fmt"
	"math/rand/v2"
	"os"
	"strconv"
	"strings"

	"deflect/fit"
	"deflect/fit/probe"
	"deflect/uv"
)

// simulateOptions are the flags of "deflect simulate".
type simulateOptions struct {
	out, like, array string
	ra, dec, lat     float64
	ha               string
	integ            float64
	freqs            string
	chanWidth, sefd  float64
	dish             float64
	products         int
	seed             uint64
	force, noiseless bool
	label            string
}

func init() {
	var o simulateOptions
	register(&command{
		name:    "simulate",
		summary: "make a visibility table of a model, at the (u,v) of a table or of an array",
		usage:   "MODEL -o FILE (--like TABLE | --array FILE [--dec DEG] [--ha H1,H2] [--int S] [--freq GHZ,...] [--chan-width HZ]) [--seed N] [--force]",
		help: `Computes the visibilities of the lens and source of MODEL (a model file;
start values are used): extended sources rendered on the model's sky grid
and transformed by the non-uniform FFT, point sources summed exactly over
their images, with each dataset's primary beam. Then adds Gaussian noise.

--like TABLE uses the (u,v), weights, frequencies and metadata of an
existing table; its weights set the noise (σ = w^−½ per part).

--array FILE makes the (u,v,w) by earth-rotation synthesis (Thompson, Moran
& Swenson 2017, eq. 4.1) for the antennas of FILE, a text file of
"name:", "latitude:" (degrees), "dish:" (metres) and "sefd:" (Jy) lines and
one "east north up" line in metres per antenna. The noise of each part of
each visibility follows the radiometer equation,
σ = SEFD / √(2 Δν τ) for one correlation product, divided by a further √2
for Stokes I from two products (--products 2, the default).

The same --seed gives the same table bit for bit.`,
		setFlags: func(fs *flag.FlagSet) {
			fs.StringVar(&o.out, "o", "", "output table `FILE` (.csv, .gz or .fits; required)")
			fs.StringVar(&o.like, "like", "", "take (u,v), weights and metadata from `TABLE`")
			fs.StringVar(&o.array, "array", "", "antenna `FILE` for earth-rotation synthesis")
			fs.Float64Var(&o.ra, "ra", 150, "right ascension of the phase centre, `DEG`")
			fs.Float64Var(&o.dec, "dec", -30, "declination of the phase centre, `DEG`")
			fs.Float64Var(&o.lat, "lat", 999, "site latitude in `DEG` (default: the antenna file's)")
			fs.StringVar(&o.ha, "ha", "-3,3", "hour-angle range `H1,H2` in hours")
			fs.Float64Var(&o.integ, "int", 60, "integration time in `S`econds")
			fs.StringVar(&o.freqs, "freq", "230", "channel centre frequencies in `GHZ`, comma-separated")
			fs.Float64Var(&o.chanWidth, "chan-width", 2e9, "channel width in `HZ`")
			fs.Float64Var(&o.sefd, "sefd", 0, "system equivalent flux density in `JY` (default: the antenna file's)")
			fs.Float64Var(&o.dish, "dish", 0, "dish diameter in `M` (default: the antenna file's)")
			fs.IntVar(&o.products, "products", 2, "correlation products in Stokes I: 1 or 2")
			fs.Uint64Var(&o.seed, "seed", 1, "random seed of the noise")
			fs.BoolVar(&o.force, "force", false, "replace an existing output file")
			fs.BoolVar(&o.noiseless, "noiseless", false, "write the model without noise")
			fs.StringVar(&o.label, "label", "", "dataset label (default: the array's or table's)")
		},
		run: func(env *runEnv, args []string) error {
			if len(args) != 1 {
				return usagef("want one MODEL file, got %d arguments", len(args))
			}
			if o.out == "" {
				return usagef("-o FILE is required")
			}
			if (o.like == "") == (o.array == "") {
				return usagef("give exactly one of --like TABLE and --array FILE")
			}
			m, err := simulateModel(args[0])
			if err != nil {
				return err
			}
			d, err := simulateCoverage(o)
			if err != nil {
				return err
			}
			if err := simulateInto(m, d, o.seed, o.noiseless); err != nil {
				return err
			}
			if err := uv.WriteTableFile(o.out, o.force, d); err != nil {
				return err
			}
			fmt.Fprintf(env.stdout, "wrote %s: %d visibilities of %s (%s), seed %d\n", o.out, d.Len(), args[0], d.Meta.Label, o.seed)
			return nil
		},
	})
}

// simulateCoverage returns the rows to fill: a copy of the --like table or
// an earth-rotation synthesis.
func simulateCoverage(o simulateOptions) (*uv.Dataset, error) {
	if o.like != "" {
		d, _, err := uv.ReadFile(o.like, uv.ReadOptions{})
		if err != nil {
			return nil, err
		}
		if o.label != "" {
			d.Meta.Label = o.label
		}
		if o.dish > 0 {
			d.Meta.Dish = o.dish
		}
		return d, nil
	}
	a, err := uv.ReadArrayFile(o.array)
	if err != nil {
		return nil, err
	}
	if o.lat != 999 {
		a.Latitude = o.lat
	}
	if o.sefd > 0 {
		a.SEFD = o.sefd
	}
	if o.dish > 0 {
		a.Dish = o.dish
	}
	if o.label != "" {
		a.Name = o.label
	}
	h1, h2, ok := strings.Cut(o.ha, ",")
	if !ok {
		return nil, usagef("--ha %q: want H1,H2 in hours", o.ha)
	}
	ha1, err1 := strconv.ParseFloat(strings.TrimSpace(h1), 64)
	ha2, err2 := strconv.ParseFloat(strings.TrimSpace(h2), 64)
	if err1 != nil || err2 != nil {
		return nil, usagef("--ha %q: want two numbers H1,H2 in hours", o.ha)
	}
	var freqs []float64
	for _, f := range strings.Split(o.freqs, ",") {
		x, err := strconv.ParseFloat(strings.TrimSpace(f), 64)
		if err != nil || x <= 0 {
			return nil, usagef("--freq %q: want positive frequencies in GHz", o.freqs)
		}
		freqs = append(freqs, x*1e9)
	}
	return uv.Synthesize(a, uv.Observation{RA: o.ra, Dec: o.dec, HAStart: ha1, HAEnd: ha2, Integration: o.integ,
		Freqs: freqs, ChanWidth: o.chanWidth, Products: o.products})
}

// simulateInto sets d's visibilities to the model m (start values) plus
// noise drawn with seed. The dataset takes the flux scale and offset of the
// model's [[data]] table of the same label, if any.
func simulateInto(m *fit.Model, d *uv.Dataset, seed uint64, noiseless bool) error {
	g, err := probe.ModelGrid(m, []*uv.Dataset{d}, 256)
	if err != nil {
		return err
	}
	sky := probe.NewSky(m, g, []*uv.Dataset{d})
	idx := -1
	for i, spec := range m.Data {
		if spec.Label != "" && spec.Label == d.Meta.Label {
			idx = i
		}
	}
	var rnd *rand.Rand
	if !noiseless {
		rnd = rand.New(rand.NewPCG(seed, 0x5eed))
	}
	return probe.Simulate(sky, m.Start(), idx, d, probe.Disc{}, rnd)
}

// simulateModel reads the model file at path. A model without [[data]]
// tables (nothing observed yet) is accepted.
func simulateModel(path string) (*fit.Model, error) {
	doc, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	return fit.ParseModelOptions{NoData: true}.Parse(path, doc)
}
