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
package source
