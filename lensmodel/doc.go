// Package lensmodel describes gravitational lenses: mass components for
// galaxies and dark-matter halos, ray tracing, magnification, critical curves
// and caustics, point-image finding and cosmological distances.
//
// # Units and conventions
//
// Positions are tangent-plane offsets in arcsec, x toward east and y toward
// north. Position angles are in degrees east of north. The lens equation is
//
//	β = θ − α(θ),
//
// the convergence κ = Σ/Σ_cr, the lensing potential ψ obeys ∇²ψ = 2κ and
// α = ∇ψ, and the magnification μ = 1/det(∂β/∂θ) is signed (negative for
// saddle-point images). Deflections are in arcsec and potentials in arcsec².
// The package knows nothing of visibilities.
package lensmodel
