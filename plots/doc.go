// Package plots draws the figures astronomers judge a fit by: uv coverage,
// visibilities against uv distance, dirty and residual images, source planes,
// magnification maps, posterior corner plots and the central-feature probe
// panel. Sky images are displayed east left, north up, with offsets in
// arcsec and units on every axis and colour bar.
//
// # Inputs
//
// The package takes plain values, not the types of the packages that
// compute them: a SkyImage is an N×N grid of float64 in FITS order (pixel
// (i, j) at index j·N + i, x = X0 − (i − N/2)·Pixel toward east, y = Y0 +
// (j − N/2)·Pixel toward north, arcsec); a Beam gives FWHMs in arcsec and a
// position angle in degrees east of north; curves are Polylines of (x, y)
// arcsec; u and v are in wavelengths, visibilities in Jy with weights 1/σ²
// (σ per real and imaginary part), fluxes in the probe panel in mJy.
//
// # Figures
//
// Each figure function validates its input, computes what it shows, and
// returns a *Figure of a natural size (ColumnWidth or PageWidth wide);
// Save writes it atomically as PNG (DPI dots per inch), PDF or SVG and
// never replaces a file unless asked to.
//
//	UVCoverageFigure      (u, v) and (−u, −v) per dataset, kλ, +u (east) to the left
//	VisibilityFigure      binned Re and Im against uv distance, model, residuals
//	SkyFigure             one or more sky images, each with beam, overlays and colour bar
//	DirtyFigure           data, model (shared scale) and residual in σ with ±nσ contours
//	SourceFigure          source-plane image with caustics, optional 1σ map
//	MagnificationFigure   log10 |μ| with critical curves
//	CornerFigure          weighted 1-D and 2-D marginals, 68% and 95% HPD contours
//	TraceFigure           walker traces per parameter
//	AutocorrFigure        walker-averaged autocorrelation and τ_int per parameter
//	ProbeFigure           cut-out, direct and split-test fluxes, null distribution
//	PredictFigure         lens plane and source plane of a model prediction
//
// # Look
//
// Text is 7–8 pt so figures stay legible printed at their nominal size.
// Intensities use Viridis (sequential, perceptually uniform, colour-blind
// safe); signed residuals use Diverging, a blue–white–red map of this
// package with lightness symmetric about zero; lines and datasets take the
// Okabe–Ito colours. Sky pixels are drawn as crisp blocks, not smoothed.
package plots
