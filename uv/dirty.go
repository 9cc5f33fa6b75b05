package uv

import (
	"errors"
	"math"

	"deflect/uv/nufft"
)

// ImagingOptions are the settings of a dirty image. The zero value is
// natural weighting at the default tolerance.
type ImagingOptions struct {
	Weighting Weighting
	// Robust is the Briggs robustness R, used with Briggs weighting.
	Robust float64
	// Tol is the NUFFT tolerance; zero means 1e-9.
	Tol float64
}

// DirtyImage is the dirty image and dirty beam of one dataset.
type DirtyImage struct {
	// Grid is the image grid. The dirty beam is on a grid of the same size
	// and pixel centred on zero offset (pixel (N/2, N/2) is the beam's
	// centre).
	Grid Grid
	// Image is the dirty image in Jy/beam: Σ_k W_k Re(d_k e^{+2πi(u l + v m)}) / Σ_k W_k,
	// so a point source of S Jy (primary beam included) peaks at S.
	Image []float64
	// Beam is the dirty beam, Σ_k W_k cos(2π(u Δl + v Δm)) / Σ_k W_k, peak 1.
	Beam []float64
	// Clean is the Gaussian fitted to the main lobe of Beam.
	Clean CleanBeam
	// Noise is the image rms expected from the weights, in Jy/beam:
	// √(Σ W_k²/w_k) / Σ W_k; NaturalNoise is (Σ w_k)^−½, the same for
	// natural weighting and the lowest noise any weighting reaches.
	Noise, NaturalNoise float64
	// Count is the number of unflagged rows imaged, SumWeights Σ w_k.
	Count      int
	SumWeights float64
	// Weighting and Robust record the scheme used.
	Weighting Weighting
	Robust    float64
}

// MakeDirty returns the dirty image and beam of the unflagged rows of d on
// g. The image is not corrected for the primary beam: a point source of S
// Jy at offset r appears with peak A(r)·S.
//
// References:
//
//   - Thompson A. R., Moran J. M. & Swenson G. W. 2017, Interferometry and
//     Synthesis in Radio Astronomy, 3rd ed., Springer, §10.2 (weighting) and
//     §11.1 (the dirty image and beam).
func MakeDirty(d *Dataset, g Grid, opt ImagingOptions) (*DirtyImage, error) {
	if opt.Tol == 0 {
		opt.Tol = 1e-9
	}
	wts, err := ImagingWeights(d, g, opt.Weighting, opt.Robust)
	if err != nil {
		return nil, err
	}
	var sumW, sumIW, sumIW2 float64
	var count int
	var x, y []float64
	var cI, cB []complex128
	var shift bool = g.X0 != 0 || g.Y0 != 0
	p := 2 * math.Pi * g.Pixel / ArcsecPerRadian
	for k, wt := range wts {
		if wt == 0 {
			continue
		}
		count++
		sumW += d.Weight[k]
		sumIW += wt
		sumIW2 += wt * wt / d.Weight[k]
		x = append(x, -p*d.U[k])
		y = append(y, p*d.V[k])
		c := complex(d.Re[k]*wt, d.Im[k]*wt)
		if shift {
			s, co := math.Sincos(offsetPhase(g, d.U[k], d.V[k]))
			c *= complex(co, s)
		}
		cI = append(cI, c)
		cB = append(cB, complex(wt, 0))
	}
	if count == 0 {
		return nil, errors.New("uv: no unflagged visibilities to image")
	}
	plan, err := nufft.NewPlan(g.N, opt.Tol)
	if err != nil {
		return nil, err
	}
	plan.SetPoints(x, y)
	im := plan.Type1(nil, cI, +1)
	bm := plan.Type1(nil, cB, +1)
	out := &DirtyImage{Grid: g, Image: make([]float64, g.Len()), Beam: make([]float64, g.Len()),
		Noise: math.Sqrt(sumIW2) / sumIW, NaturalNoise: 1 / math.Sqrt(sumW),
		Count: count, SumWeights: sumW, Weighting: opt.Weighting, Robust: opt.Robust}
	for k := range out.Image {
		out.Image[k] = real(im[k]) / sumIW
		out.Beam[k] = real(bm[k]) / sumIW
	}
	cb, err := FitCleanBeam(out.Beam, g.N, g.Pixel)
	if err != nil {
		return nil, err
	}
	out.Clean = cb
	return out, nil
}
