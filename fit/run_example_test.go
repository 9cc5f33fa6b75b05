package fit_test

import (
	"context"
	"fmt"
	"os"
	"path/filepath"

	"deflect/fit"
	"deflect/internal/demo"
)

// Fit the demo's halo model (the halo's Einstein radius and core, and the
// source's position and flux free) to its two simulated datasets with the
// optimiser, and print what one checks first: the status, the reduced χ²
// and the halo parameters (the truth of the simulation: θ_E = 1.0″,
// core 0.35″). MaxEvaluations caps each phase of each optimiser start to
// keep the example to about ten seconds, so the status reads "not
// converged"; a real fit leaves it at zero.
func ExampleRun() {
	dir, err := os.MkdirTemp("", "deflect-example")
	if err != nil {
		fmt.Println(err)
		return
	}
	defer os.RemoveAll(dir)
	if _, err := demo.Write(dir); err != nil {
		fmt.Println(err)
		return
	}
	m, err := fit.ReadModel(filepath.Join(dir, "models", "halo.toml"))
	if err != nil {
		fmt.Println(err)
		return
	}
	res, err := fit.Run(context.Background(), m, fit.RunOptions{Method: "optimize", MaxEvaluations: 400, DerivedSamples: -1, NoMaps: true})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(res.Status)
	fmt.Printf("reduced χ² %.2f for %d data values\n", res.ReducedChi2, res.Data)
	for _, p := range res.Params {
		if p.Free && (p.Name == "halo.theta_e" || p.Name == "halo.core") {
			fmt.Printf("%s = %.2f %s\n", p.Name, p.Best, p.Unit)
		}
	}
	// Output:
	// not converged
	// reduced χ² 1.00 for 89028 data values
	// halo.theta_e = 0.99 arcsec
	// halo.core = 0.33 arcsec
}
