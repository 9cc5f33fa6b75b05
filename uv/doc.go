// Package uv holds interferometric visibilities and the operators that act on
// them: reading and writing visibility tables, weight checks, the sky grid,
// Fourier transforms at the measured (u,v) points, dirty images and beams, and
// the compressed χ² used by every fit.
//
// # Units and conventions
//
// u, v and w are in wavelengths, u toward east and v toward north. Re and Im
// are in Jy. A weight is 1/σ² in Jy⁻², σ the rms noise of the real part and,
// equally, of the imaginary part, so that
//
//	χ² = Σ_k w_k |d_k − m_k|²
//
// counts both parts. Model visibilities follow
//
//	V(u, v) = Σ_j A(l_j, m_j) I_j exp(−2πi (u l_j + v m_j)),
//
// with I_j in Jy per pixel and A the primary beam (Thompson, Moran & Swenson
// 2017, ch. 3). Tables exported with the opposite exponent sign carry the
// metadata line "# sign: +1" and are conjugated on input.
//
// Sky offsets (x, y) are in arcsec from the phase centre, x toward east and
// y toward north; position angles are in degrees east of north. A Grid's
// pixel (i, j) sits at x = X0 − (i − N/2)·Pixel, y = Y0 + (j − N/2)·Pixel,
// so drawn with i increasing to the right east is left and north up, as in
// a FITS image with CDELT1 < 0. Model images are in Jy per pixel; dirty
// images in Jy per beam, normalised so that a point source of S Jy peaks at
// S. Frequencies are in Hz; the primary beam is a Gaussian of FWHM
// 1.13 λ/D (common practice), D the dish diameter in metres. The compressed
// products of wide-band data are split into frequency groups; the error of
// the grouping and its default are documented at DefaultMaxFracBandwidth.
package uv
