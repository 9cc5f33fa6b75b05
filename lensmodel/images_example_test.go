package lensmodel_test

import (
	"fmt"
	"log"

	"deflect/lensmodel"
)

// A singular isothermal sphere of Einstein radius 1″ images a source 0.25″
// off-centre twice, at β ± θ_E with μ = 1 ± θ_E/β; its central image is
// infinitely demagnified. The delay between them is D_Δt/c · 2βθ_E =
// 83.2 d/arcsec² × 0.5 arcsec² for z_l = 0.5, z_s = 2. A 0.05″ core brings
// the third, central image.
func ExampleFindImages() {
	c := lensmodel.FlatLambdaCDM(70, 0.3)
	opt := lensmodel.ImageOptions{DelayScale: c.DelayScale(0.5, 2)}
	for _, core := range []float64{0, 0.05} {
		lens := lensmodel.Lens{lensmodel.SIE{ThetaE: 1, Q: 1, Core: core}}
		res, err := lensmodel.FindImages(lens, 0.25, 0, opt)
		if err != nil {
			log.Fatal(err)
		}
		fmt.Printf("core %g″: %d images, central image missing: %v\n", core, len(res.Images), res.CentralNote() != "")
		for _, im := range res.Images {
			fmt.Printf("  x = %+.3f″  μ = %+.3f  %-7v  delay %5.1f d\n", im.X, im.Mu, im.Kind, im.Delay)
		}
	}
	// Output:
	// core 0″: 2 images, central image missing: true
	//   x = +1.250″  μ = +5.000  minimum  delay   0.0 d
	//   x = -0.750″  μ = -3.000  saddle   delay  41.6 d
	// core 0.05″: 3 images, central image missing: false
	//   x = +1.210″  μ = +5.002  minimum  delay   0.0 d
	//   x = -0.679″  μ = -3.020  saddle   delay  39.4 d
	//   x = -0.030″  μ = +0.018  maximum  delay  50.6 d
}

// The critical curves of a cored isothermal ellipsoid: the outer,
// tangential curve and the inner, radial one.
func ExampleCriticalCurves() {
	lens := lensmodel.SIE{ThetaE: 1, Q: 0.8, PA: 30, Core: 0.1}
	curves, err := lensmodel.CriticalCurves(lens, lensmodel.CurveOptions{})
	if err != nil {
		log.Fatal(err)
	}
	for _, c := range curves {
		fmt.Printf("%v curve, closed: %v\n", c.Kind, c.Closed)
	}
	// Unordered output:
	// tangential curve, closed: true
	// radial curve, closed: true
}
