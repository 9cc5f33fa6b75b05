// Package nufft evaluates two-dimensional Fourier sums between a square grid of
// integer modes and arbitrary ("non-uniform") points: exactly by the direct
// DFT, and fast by the non-uniform FFT (NUFFT) with the "exponential of
// semicircle" spreading kernel.
//
// # Conventions
//
// A grid f of n×n modes (n even) is stored row-major, f[j*n+i], and holds the
// integer modes
//
//	m1 = i − n/2,   m2 = j − n/2,
//
// so the zero mode sits at index (n/2, n/2). Points (x_k, y_k) are in radians
// and may take any real value: the sums are 2π-periodic in x and y because the
// modes are integers. With an exponent sign s = +1 or −1,
//
//	type 2 (grid → points):  c_k      = Σ_{i,j} f[j*n+i] exp(s·i·(m1 x_k + m2 y_k)),
//	type 1 (points → grid):  f[j*n+i] = Σ_k c_k exp(s·i·(m1 x_k + m2 y_k)).
//
// Neither direction is normalised. Type 1 with sign −s is the adjoint of type 2
// with sign s, exactly so in the fast transform as well (it spreads with the
// same kernel values that type 2 interpolates with).
//
// For the measurement operator of package uv, x = 2π u Δl and y = 2π v Δm for a
// sky pixel size Δl, Δm in radians and (u, v) in wavelengths, and sign −1 gives
// model visibilities in the convention of the project (Thompson, Moran &
// Swenson 2017, ch. 3).
//
// # Methods
//
// DFT2, DFT1 and DFT2Real are exact (to rounding) and run in parallel across
// runtime.GOMAXPROCS(0) cores; they are the reference the fast transform is
// tested against. Their cost is n² complex multiply–adds per point.
//
// A Plan computes the same sums to a requested relative ℓ2 tolerance ε in
// O(n² log n + M w²) operations for M points. It follows Barnett, Magland &
// af Klinteberg (2019): the grid is oversampled by σ = 2, the kernel is
//
//	φ(z) = exp(β(√(1 − z²) − 1)),   |z| ≤ 1,
//
// of width w = ⌈log10(1/ε)⌉ + 1 fine-grid points and β = 2.30·w, the modes are
// divided by the kernel's Fourier transform (deapodisation), which is computed
// by Gauss–Legendre quadrature, and the kernel is evaluated at each point by a
// piecewise polynomial (one fit per grid interval, evaluated by Horner's rule).
// Spreading (type 1) and interpolation (type 2) run in parallel across
// runtime.GOMAXPROCS(0) cores over fixed bands of the fine grid, so results
// are bit-for-bit the same for the same input whatever the number of cores and
// however the goroutines are scheduled.
//
// FFT2 is the two-dimensional complex FFT the Plan uses, exported for other
// packages' convolutions.
//
// References:
//
//   - Barnett A. H., Magland J. & af Klinteberg L. 2019, SIAM J. Sci. Comput.
//     41, C479: "A parallel nonuniform fast Fourier transform library based on
//     an 'exponential of semicircle' kernel" — the ES kernel (their eq. 1.8),
//     the choice of w and β for σ = 2 (§3.1.1, from memory: w = ⌈log10 1/ε⌉ + 1,
//     β = 2.30 w) and deapodisation by numerical quadrature of the kernel's
//     Fourier transform (§3.1.2). Equation and section numbers are quoted from
//     memory.
//   - Dutt A. & Rokhlin V. 1993, SIAM J. Sci. Comput. 14, 1368: the
//     spread–FFT–deconvolve structure of the non-uniform FFT.
//   - Thompson A. R., Moran J. M. & Swenson G. W. 2017, Interferometry and
//     Synthesis in Radio Astronomy, 3rd ed., Springer, ch. 3.
package nufft
