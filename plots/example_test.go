package plots_test

import (
	"fmt"
	"image/png"
	"log"
	"math"
	"os"
	"path/filepath"

	"deflect/plots"
)

// ExampleSave draws the magnification map of a singular isothermal sphere
// of Einstein radius 1″, μ = 1/(1 − θ_E/θ), with its critical curve, and
// saves it as a PNG at its natural column-width size.
func ExampleSave() {
	const n = 64
	mu := plots.SkyImage{N: n, Pixel: 4.0 / n, Values: make([]float64, n*n)}
	for j := range n {
		for i := range n {
			x, y := mu.XY(i, j)
			mu.Values[j*n+i] = 1 / (1 - 1/math.Hypot(x, y))
		}
	}
	var crit plots.Polyline
	for k := range 129 {
		s, c := math.Sincos(2 * math.Pi * float64(k) / 128)
		crit = append(crit, plots.Point{X: c, Y: s})
	}
	fig, err := plots.MagnificationFigure(plots.MagnificationMap{Mu: mu, Critical: []plots.Polyline{crit}})
	if err != nil {
		log.Fatal(err)
	}
	dir, err := os.MkdirTemp("", "plots")
	if err != nil {
		log.Fatal(err)
	}
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "magnification.png")
	if err := plots.Save(fig, 0, 0, path, "", false); err != nil {
		log.Fatal(err)
	}
	err = plots.Save(fig, 0, 0, path, "", false)
	fmt.Println("second save refused:", err != nil)

	f, err := os.Open(path)
	if err != nil {
		log.Fatal(err)
	}
	defer f.Close()
	cfg, err := png.DecodeConfig(f)
	if err != nil {
		log.Fatal(err)
	}
	fmt.Printf("%d×%d px\n", cfg.Width, cfg.Height)
	// Output:
	// second save refused: true
	// 990×870 px
}
