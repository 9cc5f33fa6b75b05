package uv

import "math"

// ArcsecPerRadian is the number of arcseconds in one radian, 180·3600/π.
const ArcsecPerRadian = 180 * 3600 / math.Pi

// Grid is a square sky grid of N×N pixels, Pixel arcsec on a side, centred
// X0, Y0 arcsec from the phase centre (x east, y north).
//
// Images on a Grid are stored in FITS order, row-major: the value of pixel
// (i, j) is at index k = j·N + i, where i runs along FITS axis 1 (RA, which
// decreases with i, so x decreases with i) and j along axis 2 (Dec, y grows
// with j). The grid centre is pixel (N/2, N/2), FITS CRPIX = N/2 + 1:
//
//	x(i) = X0 − (i − N/2)·Pixel
//	y(j) = Y0 + (j − N/2)·Pixel
//
// Drawing i left to right and j bottom to top therefore shows east left and
// north up.
type Grid struct {
	N      int
	Pixel  float64
	X0, Y0 float64
}

// Len returns the number of pixels, N².
func (g Grid) Len() int { return g.N * g.N }

// Size returns N, the number of pixels on a side.
func (g Grid) Size() int { return g.N }

// PixelSize returns the pixel side in arcsec.
func (g Grid) PixelSize() float64 { return g.Pixel }

// XY returns the sky offset in arcsec of the centre of pixel (i, j).
func (g Grid) XY(i, j int) (x, y float64) {
	h := g.N / 2
	return g.X0 - float64(i-h)*g.Pixel, g.Y0 + float64(j-h)*g.Pixel
}

// Centre returns the sky offset in arcsec of the centre of the pixel at
// flat index k = j·N + i.
func (g Grid) Centre(k int) (x, y float64) {
	return g.XY(k%g.N, k/g.N)
}

// Pix returns the fractional pixel coordinates (i, j) of the sky offset
// (x, y) arcsec; pixel centres are at whole numbers.
func (g Grid) Pix(x, y float64) (i, j float64) {
	h := float64(g.N / 2)
	return h - (x-g.X0)/g.Pixel, h + (y-g.Y0)/g.Pixel
}
