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
package uv
