package source

import (
	"fmt"

	"deflect/lensmodel"
)

// PixelOptions are the settings of ReconstructPixels. The zero value is the
// documented default for every field.
type PixelOptions struct {
	// Grid fixes the source-plane grid; nil builds one over the ray-traced
	// masked sub-pixels: NX×NY nodes (0 means 30 each), regular with a
	// margin of Pad (0 means 0.05) times the box on each side, or
	// density-adaptive (AdaptiveGrid with uniform fraction Uniform) when
	// Adaptive is set.
	Grid     *PixelGrid
	NX, NY   int
	Pad      float64
	Adaptive bool
	Uniform  float64
	// Sub is the number of sub-pixels per image-pixel side; 0 means 2.
	Sub int
	// Prior, when not nil, is reused (its grid shape must match);
	// otherwise a Prior of form Reg with zeroth-order term Eps is built.
	Prior *Prior
	Reg   Regularization
	Eps   float64
	// Invert are the inversion settings (fixed λ or evidence search,
	// data normalisation, uncertainties).
	Invert InvertOptions
}

// PixelSource is a reconstructed pixelated source with everything that
// produced it.
type PixelSource struct {
	Grid    *PixelGrid
	Mapping *Mapping
	Normal  *Normal
	Prior   *Prior
	*Inversion
}

// ReconstructPixels reconstructs the pixelated source behind lens that best
// explains the measurements on the sky grid pix, using the image pixels in
// mask (flat indices k = j·N + i): it traces the masked sub-pixels, builds
// or takes the source grid, the mapping L, the normal system
// F = Lᵀ A B A L, b = Lᵀ A D summed over the measurements, and solves
// (F + λR) s = b at the given or the evidence-maximising λ (see Invert). The
// evidence in the result is the likelihood of the lens parameters with a
// pixelated source.
func ReconstructPixels(meas []Measurement, pix Pixels, lens lensmodel.Mass, mask []int, opt PixelOptions) (*PixelSource, error) {
	if len(mask) == 0 {
		return nil, fmt.Errorf("source: the image-plane mask is empty")
	}
	sub := subOrDefault(opt.Sub)
	bx, by := TraceMask(pix, lens, mask, sub)
	g := opt.Grid
	if g == nil {
		nx, ny := opt.NX, opt.NY
		if nx == 0 {
			nx = 30
		}
		if ny == 0 {
			ny = 30
		}
		if opt.Adaptive {
			g = AdaptiveGrid(bx, by, nx, ny, opt.Uniform)
		} else {
			pad := opt.Pad
			if pad == 0 {
				pad = 0.05
			}
			g = BoundingGrid(bx, by, nx, ny, pad)
		}
	}
	prior := opt.Prior
	if prior == nil {
		var err error
		prior, err = NewPrior(g, opt.Reg, opt.Eps)
		if err != nil {
			return nil, err
		}
	} else if prior.R.SymmetricDim() != g.Len() {
		return nil, fmt.Errorf("source: prior has %d nodes, grid %d", prior.R.SymmetricDim(), g.Len())
	}
	mp := newMapping(pix, mask, g, sub, bx, by)
	nm := NewNormal(meas, mp)
	inv, err := Invert(nm, prior, g, mp, opt.Invert)
	if err != nil {
		return nil, err
	}
	return &PixelSource{Grid: g, Mapping: mp, Normal: nm, Prior: prior, Inversion: inv}, nil
}
