package nufft_test

import (
	"fmt"
	"log"
	"math/cmplx"

	"deflect/uv/nufft"
)

// A single mode (m1, m2) = (1, 2) on an 8×8 grid, evaluated at two points by
// the fast transform and by the direct sum: both give exp(−i(m1 x + m2 y)).
func Example() {
	const n = 8
	f := make([]complex128, n*n)
	i, j := 1+n/2, 2+n/2 // index of mode (1, 2): m = index − n/2
	f[j*n+i] = 1
	x := []float64{0.5, -3.0}
	y := []float64{0.25, 7.0} // any real value: the sums are 2π-periodic
	p, err := nufft.NewPlan(n, 1e-9)
	if err != nil {
		log.Fatal(err)
	}
	p.SetPoints(x, y)
	fast := p.Type2(nil, f, -1)
	exact := nufft.DFT2(nil, f, n, x, y, -1)
	for k := range x {
		want := cmplx.Exp(complex(0, -(1*x[k] + 2*y[k])))
		fmt.Printf("point %d: NUFFT %.6f, DFT %.6f, exp %.6f\n", k, fast[k], exact[k], want)
	}
	// Output:
	// point 0: NUFFT (0.540302-0.841471i), DFT (0.540302-0.841471i), exp (0.540302-0.841471i)
	// point 1: NUFFT (0.004426+0.999990i), DFT (0.004426+0.999990i), exp (0.004426+0.999990i)
}
