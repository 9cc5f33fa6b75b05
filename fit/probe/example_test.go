package probe_test

import (
	"fmt"
	"math"

	"deflect/fit/probe"
	"deflect/uv"
)

// The direct test's linear flux and exact error: a noiseless 2 mJy point
// source at (0.1, −0.2) arcsec, seen on 400 baselines of weight 10⁴ Jy⁻²,
// is recovered exactly, with σ_F = (Σ w)^−½ = 0.5 mJy.
func ExampleRows_FluxAt() {
	d := &uv.Dataset{Meta: uv.Meta{Label: "example"}}
	for k := range 400 {
		u := 2e5 * math.Cos(float64(k)*0.37) * float64(k%20+1) / 20
		v := 2e5 * math.Sin(float64(k)*0.37) * float64(k%20+1) / 20
		vis := uv.PredictPoints(nil, []float64{u}, []float64{v}, uv.PrimaryBeam{}, []float64{0.1}, []float64{-0.2}, []float64{2e-3})
		d.U, d.V = append(d.U, u), append(d.V, v)
		d.Re, d.Im = append(d.Re, real(vis[0])), append(d.Im, imag(vis[0]))
		d.Weight = append(d.Weight, 1e4)
	}
	var r probe.Rows
	r.Add(d, nil, 1)
	f := r.FluxAt(0.1, -0.2)
	fmt.Printf("flux %.3f ± %.3f mJy, S/N %.1f\n", f.Value*1e3, f.Err*1e3, f.SNR())
	// Output: flux 2.000 ± 0.500 mJy, S/N 4.0
}
