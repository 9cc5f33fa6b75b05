// Package plots draws the figures astronomers judge a fit by: uv coverage,
// visibilities against uv distance, dirty and residual images, source planes,
// magnification maps, posterior corner plots and the central-feature probe
// panel. Sky images are displayed east left, north up, with offsets in
// arcsec and units on every axis and colour bar.
package plots
