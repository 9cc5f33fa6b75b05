package uv_test

import (
	"fmt"
	"strings"

	"deflect/uv"
)

// An earth-rotation synthesis of a fictional three-antenna array: 3
// baselines × 7 integrations of 900 s over ±1 h of hour angle (900 s of
// time is 0.2507 h of hour angle at the sidereal rate, so 7 fit in 2 h),
// with the radiometer noise of Stokes I from two correlation products,
// 100 Jy / √(2 · 2 GHz · 900 s · 2).
func ExampleSynthesize() {
	a, err := uv.ReadArray(strings.NewReader("name: trio\nlatitude: -30\ndish: 12\nsefd: 100\n0 0 0\n200 0 0\n0 300 0\n"), "trio.txt")
	if err != nil {
		fmt.Println(err)
		return
	}
	d, err := uv.Synthesize(a, uv.Observation{Dec: -45, HAStart: -1, HAEnd: 1, Integration: 900,
		Freqs: []float64{230e9}, ChanWidth: 2e9})
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("%d rows, σ = %.3g mJy per part\n", d.Len(), 1e3*uv.RadiometerSigma(100, 2e9, 900, 2))
	// Output: 21 rows, σ = 0.0373 mJy per part
}
