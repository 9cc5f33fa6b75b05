package fit

import (
	"math"

	"deflect/uv"
)

// lanczosA is the half-width, in pixels, of the interpolation kernel that
// deposits point images on the grid.
const lanczosA = 3

// lanczos returns the Lanczos kernel L(t) = sinc(t) sinc(t/a) for |t| < a,
// 0 beyond, sinc(t) = sin(πt)/(πt).
func lanczos(t float64) float64 {
	if t == 0 {
		return 1
	}
	if math.Abs(t) >= lanczosA {
		return 0
	}
	pt := math.Pi * t
	return lanczosA * math.Sin(pt) * math.Sin(pt/lanczosA) / (pt * pt)
}

// depositPoint adds a point of flux Jy at (x, y) arcsec to img on g, spread
// over the 2a×2a pixels around it with the separable Lanczos-a kernel,
// normalised on each axis so that the deposited flux is exact. The grid is
// band-limited interpolation's natural partner: with pixels at most a fifth
// of the resolution every measured spatial frequency lies below 0.2 cycles
// per pixel, where the kernel's response is flat to the accuracy measured
// in TestPointDepositMatchesExactVisibilities. Kernel pixels that fall off
// the grid are dropped (the caller keeps point images inside the grid).
//
// References:
//   - Duchon C. E. 1979, J. Appl. Meteor. 18, 1016 (Lanczos filtering).
func depositPoint(img []float64, g uv.Grid, x, y, flux float64) {
	fi, fj := g.Pix(x, y)
	i0, j0 := int(math.Floor(fi))-lanczosA+1, int(math.Floor(fj))-lanczosA+1
	var wi, wj [2 * lanczosA]float64
	var si, sj float64
	for k := range wi {
		wi[k] = lanczos(float64(i0+k) - fi)
		wj[k] = lanczos(float64(j0+k) - fj)
		si += wi[k]
		sj += wj[k]
	}
	n := g.N
	scale := flux / (si * sj)
	for b := range wj {
		j := j0 + b
		if j < 0 || j >= n {
			continue
		}
		row := img[j*n : (j+1)*n]
		f := scale * wj[b]
		for a := range wi {
			if i := i0 + a; i >= 0 && i < n {
				row[i] += f * wi[a]
			}
		}
	}
}
