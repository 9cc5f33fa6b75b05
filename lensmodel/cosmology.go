package lensmodel

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/integrate/quad"
)

// Physical constants in SI units (CODATA 2018 and the IAU 2015 nominal solar
// mass, the values astropy 5 uses).
const (
	lightSpeed      = 299792458.0          // c in m/s
	newtonG         = 6.67430e-11          // G in m³ kg⁻¹ s⁻²
	solarMassKg     = 1.988409870698051e30 // M_sun in kg
	mpcInMetres     = 3.085677581491367e22 // 1 Mpc in m
	arcsecPerRadian = 180 * 3600 / math.Pi
	secondsPerDay   = 86400.0
)

// Cosmology is a ΛCDM universe with matter and a cosmological constant,
// flat or curved. Radiation (and neutrino) density is neglected, so the
// expansion rate is
//
//	E(z) = H(z)/H0 = √(Ωm (1+z)³ + Ωk (1+z)² + ΩΛ),  Ωk = 1 − Ωm − ΩΛ.
//
// Distances are in Mpc. Use FlatLambdaCDM for the flat case: the zero value of
// Ode is a valid open universe without dark energy, not "flat".
//
// References:
//   - Hogg D. W., 1999, arXiv:astro-ph/9905116, eqs. 14–16 (D_M with the
//     curvature sinh/sin), 18 (D_A) and 19 (D_A between two redshifts).
type Cosmology struct {
	H0  float64 // Hubble constant in km s⁻¹ Mpc⁻¹
	Om  float64 // matter density parameter Ωm today
	Ode float64 // dark-energy (cosmological constant) density parameter ΩΛ today
}

// FlatLambdaCDM returns the flat cosmology with ΩΛ = 1 − Ωm.
func FlatLambdaCDM(h0, om float64) Cosmology {
	return Cosmology{H0: h0, Om: om, Ode: 1 - om}
}

// Validate reports whether the parameters describe a usable universe: H0 > 0,
// Ωm ≥ 0 and E(z) > 0 for all z ≥ 0 (no bounce).
func (c Cosmology) Validate() error {
	switch {
	case !(c.H0 > 0) || math.IsInf(c.H0, 0):
		return fmt.Errorf("lensmodel: cosmology: H0 = %v km/s/Mpc, want a finite positive number", c.H0)
	case !(c.Om >= 0) || math.IsInf(c.Om, 0):
		return fmt.Errorf("lensmodel: cosmology: Om = %v, want a finite number ≥ 0", c.Om)
	case math.IsNaN(c.Ode) || math.IsInf(c.Ode, 0):
		return fmt.Errorf("lensmodel: cosmology: Ode = %v, want a finite number", c.Ode)
	}
	// E² is a cubic in a = 1+z; check it stays positive on a fine grid up to
	// z = 1100, far beyond any lens or source redshift.
	for z := 0.0; z <= 1100; z += 0.01 * (1 + z) {
		if c.e2(z) <= 0 {
			return fmt.Errorf("lensmodel: cosmology: H(z)² ≤ 0 at z = %.3g for Om = %v, Ode = %v (a bouncing universe)", z, c.Om, c.Ode)
		}
	}
	return nil
}

// Ok returns the curvature density parameter Ωk = 1 − Ωm − ΩΛ.
func (c Cosmology) Ok() float64 { return 1 - c.Om - c.Ode }

func (c Cosmology) e2(z float64) float64 {
	a := 1 + z
	return c.Om*a*a*a + c.Ok()*a*a + c.Ode
}

// E returns the dimensionless expansion rate H(z)/H0.
func (c Cosmology) E(z float64) float64 { return math.Sqrt(c.e2(z)) }

// HubbleDistance returns D_H = c/H0 in Mpc.
func (c Cosmology) HubbleDistance() float64 { return lightSpeed / 1e3 / c.H0 }

// comovingOrder is the number of Gauss–Legendre nodes per panel. The
// integrand (1+z)/E(z) in u = ln(1+z) is smooth, so 48 nodes on panels of
// unit width give double precision.
const comovingOrder = 48

// glNodes and glWeights are the Gauss–Legendre rule on [−1, 1].
var glNodes, glWeights = func() ([]float64, []float64) {
	x := make([]float64, comovingOrder)
	w := make([]float64, comovingOrder)
	quad.Legendre{}.FixedLocations(x, w, -1, 1)
	return x, w
}()

// ComovingDistance returns the line-of-sight comoving distance
//
//	D_C(z) = D_H ∫_0^z dz'/E(z')
//
// in Mpc (Hogg 1999, eq. 15). The integral is evaluated by Gauss–Legendre
// quadrature in u = ln(1+z). It panics if z < 0.
func (c Cosmology) ComovingDistance(z float64) float64 {
	return c.HubbleDistance() * c.comovingIntegral(0, z)
}

func (c Cosmology) comovingIntegral(z1, z2 float64) float64 {
	if !(z1 >= 0) || !(z2 >= 0) {
		panic(fmt.Sprintf("lensmodel: negative redshift (%v, %v)", z1, z2))
	}
	if z1 == z2 {
		return 0
	}
	f := func(u float64) float64 {
		a := math.Exp(u)
		return a / c.E(a-1)
	}
	u1, u2 := math.Log1p(z1), math.Log1p(z2)
	// Split into panels of width ≤ 1 in u so high redshifts keep full accuracy.
	n := int(math.Ceil(math.Abs(u2-u1) / 1))
	var sum float64
	for i := 0; i < n; i++ {
		a := u1 + (u2-u1)*float64(i)/float64(n)
		b := u1 + (u2-u1)*float64(i+1)/float64(n)
		mid, half := (a+b)/2, (b-a)/2
		for k, x := range glNodes {
			sum += half * glWeights[k] * f(mid+half*x)
		}
	}
	return sum
}

// transverse maps a comoving line-of-sight distance to the transverse
// comoving distance with the curvature of c (Hogg 1999, eq. 16): sinh for
// Ωk > 0, the identity for Ωk = 0, sin for Ωk < 0.
func (c Cosmology) transverse(dc float64) float64 {
	ok := c.Ok()
	dh := c.HubbleDistance()
	switch {
	case ok > 0:
		s := math.Sqrt(ok)
		return dh / s * math.Sinh(s*dc/dh)
	case ok < 0:
		s := math.Sqrt(-ok)
		return dh / s * math.Sin(s*dc/dh)
	}
	return dc
}

// TransverseComovingDistance returns D_M(z) in Mpc (Hogg 1999, eq. 16).
func (c Cosmology) TransverseComovingDistance(z float64) float64 {
	return c.transverse(c.ComovingDistance(z))
}

// AngularDiameterDistance returns D_A(z) = D_M(z)/(1+z) in Mpc (Hogg 1999,
// eq. 18).
func (c Cosmology) AngularDiameterDistance(z float64) float64 {
	return c.TransverseComovingDistance(z) / (1 + z)
}

// AngularDiameterDistanceZ1Z2 returns the angular-diameter distance in Mpc of
// an object at z2 seen from z1 ≤ z2,
//
//	D_A12 = S_k(D_C(z2) − D_C(z1)) / (1 + z2),
//
// S_k the curvature map of Hogg (1999) eq. 16. For Ωk ≥ 0 this equals Hogg's
// eq. 19; unlike eq. 19 it also holds for closed universes (Ωk < 0), where it
// is the same sine form. It panics if z2 < z1.
func (c Cosmology) AngularDiameterDistanceZ1Z2(z1, z2 float64) float64 {
	if z2 < z1 {
		panic(fmt.Sprintf("lensmodel: AngularDiameterDistanceZ1Z2: z2 = %v < z1 = %v", z2, z1))
	}
	dc := c.HubbleDistance() * c.comovingIntegral(z1, z2)
	return c.transverse(dc) / (1 + z2)
}

// LensDistances returns D_l, D_s and D_ls in Mpc for a lens at zl and a source
// at zs > zl. It panics if zs ≤ zl.
func (c Cosmology) LensDistances(zl, zs float64) (dl, ds, dls float64) {
	if !(zs > zl) {
		panic(fmt.Sprintf("lensmodel: source redshift %v not beyond lens redshift %v", zs, zl))
	}
	return c.AngularDiameterDistance(zl), c.AngularDiameterDistance(zs), c.AngularDiameterDistanceZ1Z2(zl, zs)
}

// SigmaCritSI returns the critical surface density for lensing
//
//	Σ_cr = c² D_s / (4π G D_l D_ls)
//
// in kg m⁻² for a lens at zl and a source at zs > zl.
func (c Cosmology) SigmaCritSI(zl, zs float64) float64 {
	dl, ds, dls := c.LensDistances(zl, zs)
	return lightSpeed * lightSpeed / (4 * math.Pi * newtonG) * ds / (dl * dls * mpcInMetres)
}

// SigmaCrit returns the critical surface density in solar masses per square
// arcsec of the lens plane: Σ_cr (kg m⁻²) times the area D_l² of one square
// arcsec (in m²) over M_sun.
func (c Cosmology) SigmaCrit(zl, zs float64) float64 {
	dl := c.AngularDiameterDistance(zl) * mpcInMetres / arcsecPerRadian
	return c.SigmaCritSI(zl, zs) * dl * dl / solarMassKg
}

// TimeDelayDistance returns D_Δt = (1 + z_l) D_l D_s / D_ls in Mpc.
func (c Cosmology) TimeDelayDistance(zl, zs float64) float64 {
	dl, ds, dls := c.LensDistances(zl, zs)
	return (1 + zl) * dl * ds / dls
}

// DelayScale returns the factor D_Δt/c in days per arcsec² that turns a
// Fermat potential φ = ½|θ − β|² − ψ(θ) in arcsec² into a light-travel time:
//
//	Δt = (1 + z_l)/c · D_l D_s / D_ls · Δφ
//
// (Schneider, Ehlers & Falco 1992, Gravitational Lenses, eq. 5.45).
func (c Cosmology) DelayScale(zl, zs float64) float64 {
	return c.TimeDelayDistance(zl, zs) * mpcInMetres / lightSpeed / (arcsecPerRadian * arcsecPerRadian) / secondsPerDay
}

// CriticalDensity returns the critical density of the universe at z,
// ρ_crit(z) = 3 H(z)² / (8π G), in kg m⁻³.
func (c Cosmology) CriticalDensity(z float64) float64 {
	h := c.H0 * 1e3 / mpcInMetres * c.E(z) // s⁻¹
	return 3 * h * h / (8 * math.Pi * newtonG)
}
