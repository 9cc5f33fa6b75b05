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
	// data normalisation, uncertainties, the matrix-free path's settings).
	Invert InvertOptions
	// Solver chooses dense Cholesky or the matrix-free path; SolverAuto
	// (the zero value) solves grids of up to DenseMax nodes densely (0
	// means DefaultDenseMax; at most MaxDensePrior) and larger ones
	// matrix-free.
	Solver   Solver
	DenseMax int
}

// PixelSource is a reconstructed pixelated source with everything that
// produced it.
type PixelSource struct {
	Grid    *PixelGrid
	Mapping *Mapping
	// Normal is the dense normal system (nil on the matrix-free path),
	// Operator the matrix-free one (nil on the dense path).
	Normal   *Normal
	Operator *Operator
	Prior    *Prior
	Solver   Solver // the path taken: SolverDense or SolverMatrixFree
	*Inversion
}

// ReconstructPixels reconstructs the pixelated source behind lens that best
// explains the measurements on the sky grid pix, using the image pixels in
// mask (flat indices k = j·N + i): it traces the masked sub-pixels, builds
// or takes the source grid, the mapping L, the normal system
// F = Lᵀ A B A L, b = Lᵀ A D summed over the measurements, and solves
// (F + λR) s = b at the given or the evidence-maximising λ (see Invert). The
// evidence in the result is the likelihood of the lens parameters with a
// pixelated source. Grids beyond DenseMax nodes take the matrix-free path
// instead (NewOperator, InvertMatrixFree), whose evidence and
// uncertainties are stochastic estimates with stated errors.
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
	} else if prior.Len() != g.Len() {
		return nil, fmt.Errorf("source: prior has %d nodes, grid %d", prior.Len(), g.Len())
	}
	mp := newMapping(pix, mask, g, sub, bx, by)
	solver := opt.Solver
	switch solver {
	case SolverAuto:
		dmax := opt.DenseMax
		if dmax == 0 {
			dmax = DefaultDenseMax
		}
		if dmax < 0 {
			return nil, fmt.Errorf("source: DenseMax %d is negative", dmax)
		}
		solver = SolverMatrixFree
		if g.Len() <= min(dmax, MaxDensePrior) {
			solver = SolverDense
		}
	case SolverDense, SolverMatrixFree:
	default:
		panic(fmt.Sprintf("source: unknown solver %d", int(solver)))
	}
	ps := &PixelSource{Grid: g, Mapping: mp, Prior: prior, Solver: solver}
	var err error
	if solver == SolverDense {
		if prior.R == nil {
			return nil, fmt.Errorf("source: dense solver asked for %d nodes, beyond the %d of a dense prior; use the matrix-free solver", g.Len(), MaxDensePrior)
		}
		ps.Normal = NewNormal(meas, mp)
		ps.Inversion, err = Invert(ps.Normal, prior, g, mp, opt.Invert)
	} else {
		ps.Operator = NewOperator(meas, mp)
		ps.Inversion, err = InvertMatrixFree(ps.Operator, prior, g, mp, opt.Invert)
	}
	if err != nil {
		return nil, err
	}
	return ps, nil
}
