package fit_test

import (
	"fmt"

	"deflect/fit"
)

// Two nested-sampling fits of the same data: B (say, a cored lens) against
// A (a singular one).
func ExampleCompare() {
	a := &fit.Result{Chi2: 20110.4, BIC: 20210.2, Data: 20000, Evidence: &fit.Evidence{LogZ: -10140.8, LogZErr: 0.21}}
	b := &fit.Result{Chi2: 20089.7, BIC: 20199.4, Data: 20000, Evidence: &fit.Evidence{LogZ: -10136.1, LogZErr: 0.23}}
	c := fit.Compare(a, b, "singular", "cored")
	fmt.Printf("ln B = %.1f ± %.1f, Δχ² = %.1f, ΔBIC = %.1f\n", c.LnBayes, c.LnBayesErr, c.DeltaChi2, c.DeltaBIC)
	fmt.Printf("preferred: %s (%s, on %s)\n", c.Preferred, c.Strength, c.Basis)
	// Output:
	// ln B = 4.7 ± 0.3, Δχ² = 20.7, ΔBIC = 10.8
	// preferred: B (strong, on 2 ln B)
}
