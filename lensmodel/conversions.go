package lensmodel

import (
	"errors"
	"fmt"
	"math"
)

// ThetaEFromSigma returns the Einstein radius in arcsec of a singular
// isothermal sphere of one-dimensional velocity dispersion sigma (km/s),
//
//	θ_E = 4π (σ/c)² D_ls/D_s,
//
// for a lens at zl and a source at zs > zl (Schneider, Ehlers & Falco 1992,
// Gravitational Lenses, sect. 8.1.4).
func (c Cosmology) ThetaEFromSigma(sigma, zl, zs float64) float64 {
	_, ds, dls := c.LensDistances(zl, zs)
	v := sigma * 1e3 / lightSpeed
	return 4 * math.Pi * v * v * dls / ds * arcsecPerRadian
}

// SigmaFromThetaE returns the velocity dispersion in km/s of the singular
// isothermal sphere with Einstein radius thetaE (arcsec), the inverse of
// ThetaEFromSigma.
func (c Cosmology) SigmaFromThetaE(thetaE, zl, zs float64) float64 {
	_, ds, dls := c.LensDistances(zl, zs)
	return lightSpeed / 1e3 * math.Sqrt(thetaE/arcsecPerRadian*ds/(4*math.Pi*dls))
}

// MassInsideThetaE returns the projected mass in solar masses inside the
// Einstein radius thetaE (arcsec) of any lens whose Einstein radius is
// defined by a mean convergence of 1 inside it (a circularly symmetric
// lens, or the effective radius of EinsteinRadius): M = π θ_E² Σ_cr.
func (c Cosmology) MassInsideThetaE(thetaE, zl, zs float64) float64 {
	return math.Pi * thetaE * thetaE * c.SigmaCrit(zl, zs)
}

// EnclosedConvergence returns ∫κ dA over the disk of radius r (arcsec)
// about (x0, y0), in arcsec², from the flux of the deflection through its
// rim (∇·α = 2κ and Gauss's theorem):
//
//	∫κ dA = ½ ∮ α·n̂ dl.
//
// This needs no integration through singular centres (point masses,
// isothermal cusps) and is exact for any mass inside. The periodic
// integrand is summed with the trapezoid rule, doubling the number of
// points from 256 until successive sums agree to 1e-12 relative (or 2¹⁶
// points); accuracy degrades only when the rim passes within a few
// thousandths of r of a singular centre. Multiply by SigmaCrit for solar
// masses. It panics if r ≤ 0.
func EnclosedConvergence(m Mass, x0, y0, r float64) float64 {
	if !(r > 0) {
		panic(fmt.Sprintf("lensmodel: EnclosedConvergence: radius %v ≤ 0", r))
	}
	flux := func(n, offset int, step int) float64 {
		// Sum over k = offset, offset+step, … < n of α·n̂ at angle 2πk/n.
		var s float64
		for k := offset; k < n; k += step {
			sn, cs := math.Sincos(2 * math.Pi * float64(k) / float64(n))
			ax, ay := m.Deflect(x0+r*cs, y0+r*sn)
			s += ax*cs + ay*sn
		}
		return s
	}
	n := 256
	sum := flux(n, 0, 1)
	prev := 0.5 * sum * 2 * math.Pi * r / float64(n)
	for n < 1<<16 {
		// Reuse the previous points: add the odd ones of the doubled rule.
		sum += flux(2*n, 1, 2)
		n *= 2
		cur := 0.5 * sum * 2 * math.Pi * r / float64(n)
		if math.Abs(cur-prev) <= 1e-12*math.Abs(cur) {
			return cur
		}
		prev = cur
	}
	return prev
}

// ErrNoEinsteinRadius is returned, wrapped, when the mean convergence about
// a point never crosses 1.
var ErrNoEinsteinRadius = errors.New("lensmodel: the mean convergence does not cross 1")

// EinsteinRadius returns the radius in arcsec of the circle about (x0, y0)
// inside which the mean convergence is 1, EnclosedConvergence(r) = π r².
// For circularly symmetric lenses it is the radius of the tangential
// critical curve; for others it is the usual effective Einstein radius.
// Roots are searched between 10⁻⁴ and 10⁴ arcsec, outward from the centre,
// and the first crossing is refined by bisection to 1e-12 relative.
func EinsteinRadius(m Mass, x0, y0 float64) (float64, error) {
	f := func(r float64) float64 { return EnclosedConvergence(m, x0, y0, r)/(math.Pi*r*r) - 1 }
	lo := 1e-4
	flo := f(lo)
	if !(flo > 0) {
		return 0, fmt.Errorf("%w about (%g, %g): mean κ inside %g arcsec is %g", ErrNoEinsteinRadius, x0, y0, lo, flo+1)
	}
	hi := lo
	for {
		hi *= 1.5
		if hi > 1e4 {
			return 0, fmt.Errorf("%w about (%g, %g) within 10⁴ arcsec", ErrNoEinsteinRadius, x0, y0)
		}
		if f(hi) <= 0 {
			break
		}
		lo = hi
	}
	for hi-lo > 1e-12*hi {
		mid := (lo + hi) / 2
		if f(mid) > 0 {
			lo = mid
		} else {
			hi = mid
		}
	}
	return (lo + hi) / 2, nil
}

// nfwMassFunc returns m(c) = ln(1 + c) − c/(1 + c), the NFW mass inside c
// scale radii in units of 4π ρ_s r_s³.
func nfwMassFunc(c float64) float64 { return math.Log1p(c) - c/(1+c) }

// NFWFromM200 returns the lensing parameters of an NFW halo,
// ρ(r) = ρ_s / ((r/r_s)(1 + r/r_s)²), of mass m200 (solar masses) and
// concentration conc = r_200/r_s, where r_200 is the radius inside which
// the mean density is 200 times the critical density ρ_crit(z_l) at the
// lens redshift:
//
//	M_200 = (4π/3) 200 ρ_crit r_200³,   ρ_s = (200/3) ρ_crit c³ / m(c),
//
// m(c) = ln(1 + c) − c/(1 + c). It returns κ_s = ρ_s r_s / Σ_cr
// (dimensionless) and r_s in arcsec at the lens distance.
//
// References:
//   - Navarro J. F., Frenk C. S., White S. D. M., 1997, ApJ 490, 493,
//     eqs. 1–2.
//   - Wright C. O., Brainerd T. G., 2000, ApJ 534, 34, eqs. 1–2 and 7
//     (δ_c and κ_s = ρ_s r_s/Σ_cr).
func (c Cosmology) NFWFromM200(m200, conc, zl, zs float64) (kappaS, rs float64) {
	if !(m200 > 0) || !(conc > 0) {
		panic(fmt.Sprintf("lensmodel: NFWFromM200: M200 = %v, c = %v, want both > 0", m200, conc))
	}
	rhoc := c.CriticalDensity(zl)
	r200 := math.Cbrt(3 * m200 * solarMassKg / (800 * math.Pi * rhoc)) // m
	rsm := r200 / conc
	rhos := 200.0 / 3 * rhoc * conc * conc * conc / nfwMassFunc(conc)
	kappaS = rhos * rsm / c.SigmaCritSI(zl, zs)
	rs = rsm / (c.AngularDiameterDistance(zl) * mpcInMetres) * arcsecPerRadian
	return kappaS, rs
}

// M200FromNFW is the inverse of NFWFromM200: it returns the mass M_200 in
// solar masses and the concentration of the NFW halo with κ_s = kappaS and
// r_s = rs arcsec. The concentration solves (200/3) c³/m(c) = ρ_s/ρ_crit(z_l)
// by bisection in ln c on [10⁻³, 10³]; an error is returned outside it.
func (c Cosmology) M200FromNFW(kappaS, rs, zl, zs float64) (m200, conc float64, err error) {
	if !(kappaS > 0) || !(rs > 0) {
		return 0, 0, fmt.Errorf("lensmodel: NFW: kappa_s = %v, r_s = %v, want both > 0", kappaS, rs)
	}
	rhoc := c.CriticalDensity(zl)
	rsm := rs / arcsecPerRadian * c.AngularDiameterDistance(zl) * mpcInMetres
	rhos := kappaS * c.SigmaCritSI(zl, zs) / rsm
	target := rhos / rhoc
	g := func(lnc float64) float64 {
		x := math.Exp(lnc)
		return 200.0/3*x*x*x/nfwMassFunc(x) - target
	}
	lo, hi := math.Log(1e-3), math.Log(1e3)
	if g(lo) > 0 || g(hi) < 0 {
		return 0, 0, fmt.Errorf("lensmodel: NFW: kappa_s = %g, r_s = %g arcsec gives ρ_s/ρ_crit = %.3g, outside concentrations 10⁻³…10³", kappaS, rs, target)
	}
	for it := 0; it < 200 && hi-lo > 1e-14; it++ {
		mid := (lo + hi) / 2
		if g(mid) > 0 {
			hi = mid
		} else {
			lo = mid
		}
	}
	conc = math.Exp((lo + hi) / 2)
	m200 = 4 * math.Pi * rhos * rsm * rsm * rsm * nfwMassFunc(conc) / solarMassKg
	return m200, conc, nil
}
