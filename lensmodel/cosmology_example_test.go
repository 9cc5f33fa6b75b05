package lensmodel_test

import (
	"fmt"

	"deflect/lensmodel"
)

// Distances for a lens at z = 0.55 and a source at z = 3 in a flat ΛCDM
// universe (astropy 5.2.1 gives 1322.49, 1588.92 and 1076.46 Mpc; see
// testdata/cosmology).
func ExampleCosmology() {
	c := lensmodel.FlatLambdaCDM(70, 0.3)
	dl, ds, dls := c.LensDistances(0.55, 3)
	fmt.Printf("D_l = %.2f Mpc, D_s = %.2f Mpc, D_ls = %.2f Mpc\n", dl, ds, dls)
	fmt.Printf("Σ_cr = %.3g M_sun/arcsec²\n", c.SigmaCrit(0.55, 3))
	fmt.Printf("σ = 250 km/s gives θ_E = %.3f arcsec\n", c.ThetaEFromSigma(250, 0.55, 3))
	// Output:
	// D_l = 1322.49 Mpc, D_s = 1588.92 Mpc, D_ls = 1076.46 Mpc
	// Σ_cr = 7.63e+10 M_sun/arcsec²
	// σ = 250 km/s gives θ_E = 1.221 arcsec
}
