package probe

import (
	"math/rand/v2"

	"deflect/uv"
)

// Simulate sets the visibilities of d to the model of sky at theta (d being
// the dataset of sky.Model.Data[idx], idx < 0 for none) plus, when rnd is
// not nil, Gaussian noise of standard deviation 1/√w_k in each part
// (uv.AddNoise). The emission inside cut is left out of the model.
func Simulate(sky *Sky, theta []float64, idx int, d *uv.Dataset, cut Disc, rnd *rand.Rand) error {
	vis, err := sky.Visibilities(theta, idx, d, cut)
	if err != nil {
		return err
	}
	for k, v := range vis {
		d.Re[k], d.Im[k] = real(v), imag(v)
	}
	if rnd != nil {
		uv.AddNoise(d, rnd)
	}
	return nil
}
