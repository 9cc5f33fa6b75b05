// Package source describes the lensed background galaxy: parametric
// components (Sérsic, Gaussian, point), their lensed rendering onto a sky
// grid with flux-conserving adaptive supersampling, and pixelated sources
// reconstructed with regularisation and chosen by Bayesian evidence.
//
// Surface brightness is in Jy per square arcsec, fluxes in Jy inside the
// package (model files use mJy), positions in arcsec, x east and y north,
// position angles in degrees east of north. The package knows nothing of
// visibilities: the measurement operator reaches it through small
// interfaces.
//
// # Parametric sources
//
// A Source is a list of Components (Sersic, Gaussian, Point) with a
// reference frequency RefFreq; each component's flux at frequency ν is
// S_ν0 (ν/RefFreq)^α with its own spectral index α. Render integrates the
// surface brightness of the extended components over each pixel of a sky
// grid (the Pixels interface, which uv.Grid implements) through a lens
// (lensmodel.Mass), giving Jy per pixel. Point components have no grid
// image: LensedPoint and LensedPoints return their images and fluxes
// |μ_i| S_ν, whose visibilities are exact sums.
//
// # Pixelated sources
//
// A PixelGrid holds node values of the source brightness (Jy/arcsec²),
// bilinearly interpolated. A Mapping is the sparse matrix L from node
// values to the flux of masked image pixels (supersampled, ray-traced).
// With the compressed χ² of a Measurement (dirty image D, dirty beam B,
// primary beam A, DataTerm), NewNormal forms F = Lᵀ A B A L and b = Lᵀ A D,
// and Invert solves (F + λR) s = b with a regularisation R of zeroth,
// gradient or curvature form, choosing λ by maximising the evidence, which
// it returns term by term. For grids of many thousand nodes NewOperator
// applies F by FFT convolution over the mask's bounding box without forming
// it, and InvertMatrixFree solves by preconditioned conjugate gradients,
// estimating ln det(F + λR) by stochastic Lanczos quadrature and the
// per-node σ by a probing diagonal estimator, each with a stated error.
// ReconstructPixels runs the whole chain and picks the path by node count.
package source
