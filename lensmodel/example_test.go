package lensmodel_test

import (
	"fmt"

	"deflect/lensmodel"
)

// A lens of one galaxy and an external shear: check the parameters, trace a
// few image-plane positions to the source plane and evaluate the
// magnification there.
func Example() {
	lens := lensmodel.Lens{
		lensmodel.SIE{ThetaE: 1.2, Q: 0.8, PA: 30},
		lensmodel.Shear{Gamma: 0.05, Angle: -20},
	}
	if err := lens.Validate(); err != nil {
		fmt.Println(err)
		return
	}
	x := []float64{1.3, -0.9, 0.0}
	y := []float64{0.4, -0.6, 1.5}
	bx, by := make([]float64, len(x)), make([]float64, len(x))
	lens.Trace(bx, by, x, y)
	for i := range x {
		fmt.Printf("θ = (%+.2f, %+.2f)  β = (%+.4f, %+.4f)  μ = %+.3f\n",
			x[i], y[i], bx[i], by[i], lens.Magnification(x[i], y[i]))
	}

	bad := lensmodel.Lens{lensmodel.SIE{ThetaE: 1, Q: 1.3}}
	fmt.Println(bad.Validate())
	// Output:
	// θ = (+1.30, +0.40)  β = (+0.1956, +0.1602)  μ = +13.286
	// θ = (-0.90, -0.60)  β = (+0.0601, -0.0183)  μ = -4.314
	// θ = (+0.00, +1.50)  β = (+0.1276, +0.2681)  μ = +5.206
	// lens component 0: lensmodel: sie: axis ratio q = 1.3 outside (0, 1]
}
