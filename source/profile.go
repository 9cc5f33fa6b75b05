package source

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mathext"
)

// Component is one parametric part of a source, described in the source
// plane at its reference frequency.
type Component interface {
	// Brightness returns the surface brightness in Jy/arcsec² at the
	// source-plane position (x, y) arcsec. A point component returns 0.
	Brightness(x, y float64) float64
	// TotalFlux returns the flux in Jy integrated over the whole plane.
	TotalFlux() float64
	// Centre returns the position of the component in arcsec.
	Centre() (x, y float64)
	// Scale returns a characteristic size in arcsec below which the
	// brightness changes appreciably, used to decide how finely to
	// supersample; 0 for a point.
	Scale() float64
	// SpectralIndex returns α in S_ν ∝ ν^α.
	SpectralIndex() float64
}

var (
	_ Component = Sersic{}
	_ Component = Gaussian{}
	_ Component = Point{}
)

// ellipse returns the coordinates (x', y') of (x, y) about (x0, y0) along the
// major axis at position angle pa degrees east of north and along the minor
// axis. The major axis points along (sin PA, cos PA) in (x east, y north).
func ellipse(x, y, x0, y0, pa float64) (xp, yp float64) {
	s, c := math.Sincos(pa * math.Pi / 180)
	dx, dy := x-x0, y-y0
	return dx*s + dy*c, -dx*c + dy*s
}

// Sersic is an elliptical Sérsic profile
//
//	I(R) = I_e exp(−b_n [(R/R_e)^{1/n} − 1]),  R² = x'² + (y'/q)²,
//
// with x' along the major axis, parameterised by its total flux
//
//	F = 2π q n R_e² I_e e^{b_n} b_n^{−2n} Γ(2n).
//
// b_n is the exact root of γ(2n, b_n) = Γ(2n)/2, so that R_e is the
// half-light semi-major radius.
//
// References:
//   - Sérsic J. L., 1963, Boletin de la Asociacion Argentina de Astronomia 6, 41.
//   - Ciotti L., Bertin G., 1999, A&A 352, 447 (eq. 18, asymptotic b_n).
//   - Graham A. W., Driver S. P., 2005, PASA 22, 118 (eq. 2, 4; total flux).
type Sersic struct {
	X, Y  float64 // centre, arcsec
	Flux  float64 // total flux at the reference frequency, Jy
	Reff  float64 // half-light semi-major radius R_e, arcsec
	N     float64 // Sérsic index n > 0
	Q     float64 // axis ratio b/a in (0, 1]
	PA    float64 // major-axis position angle, degrees east of north
	Alpha float64 // spectral index, S_ν ∝ ν^α
}

// SersicB returns b_n, the root of P(2n, b) = ½ where P is the regularised
// lower incomplete gamma function, for n > 0. It panics for n ≤ 0.
func SersicB(n float64) float64 {
	if !(n > 0) || math.IsInf(n, 0) {
		panic(fmt.Sprintf("source: Sérsic index %v is not positive and finite", n))
	}
	a := 2 * n
	b := mathext.GammaIncRegInv(a, 0.5)
	// Polish with Newton steps on P(a, b) − ½; dP/db = b^{a−1} e^{−b}/Γ(a).
	lg, _ := math.Lgamma(a)
	for range 4 {
		f := mathext.GammaIncReg(a, b) - 0.5
		d := math.Exp((a-1)*math.Log(b) - b - lg)
		if d == 0 {
			break
		}
		step := f / d
		b -= step
		if math.Abs(step) <= 1e-15*b {
			break
		}
	}
	return b
}

// Validate reports a Sérsic parameter outside its domain: a non-finite
// value, Reff ≤ 0, n outside (0, 20] or q outside (0, 1].
func (s Sersic) Validate() error {
	for _, p := range []struct {
		name string
		v    float64
	}{{"x", s.X}, {"y", s.Y}, {"flux", s.Flux}, {"r_eff", s.Reff}, {"n", s.N}, {"q", s.Q}, {"pa", s.PA}, {"alpha", s.Alpha}} {
		if math.IsNaN(p.v) || math.IsInf(p.v, 0) {
			return fmt.Errorf("sersic: %s = %v is not finite", p.name, p.v)
		}
	}
	switch {
	case !(s.Reff > 0):
		return fmt.Errorf("sersic: r_eff = %v arcsec, want > 0", s.Reff)
	case !(s.N > 0 && s.N <= 20):
		return fmt.Errorf("sersic: n = %v, want in (0, 20]", s.N)
	case !(s.Q > 0 && s.Q <= 1):
		return fmt.Errorf("sersic: q = %v, want in (0, 1]", s.Q)
	}
	return nil
}

// check panics if the parameters are not a valid Sérsic profile.
func (s Sersic) check() {
	if err := s.Validate(); err != nil {
		panic("source: " + err.Error())
	}
}

// Ie returns the surface brightness at the half-light radius, Jy/arcsec².
func (s Sersic) Ie() float64 {
	s.check()
	b := SersicB(s.N)
	lg, _ := math.Lgamma(2 * s.N)
	lnNorm := math.Log(2*math.Pi*s.Q*s.N*s.Reff*s.Reff) + b - 2*s.N*math.Log(b) + lg
	return s.Flux * math.Exp(-lnNorm)
}

// Brightness returns the surface brightness in Jy/arcsec² at (x, y) arcsec.
// For repeated evaluation use Prepare, which computes b_n and I_e once.
func (s Sersic) Brightness(x, y float64) float64 {
	return s.Prepare().Brightness(x, y)
}

// TotalFlux returns Flux.
func (s Sersic) TotalFlux() float64 { return s.Flux }

// Centre returns (X, Y).
func (s Sersic) Centre() (x, y float64) { return s.X, s.Y }

// SpectralIndex returns Alpha.
func (s Sersic) SpectralIndex() float64 { return s.Alpha }

// Scale returns the semi-minor radius of the ellipse enclosing 5% of the
// flux, q R_e (P⁻¹(2n, 0.05)/b_n)^n: small for the cuspy cores of large n.
func (s Sersic) Scale() float64 {
	s.check()
	x := mathext.GammaIncRegInv(2*s.N, 0.05)
	return s.Q * s.Reff * math.Pow(x/SersicB(s.N), s.N)
}

// Prepare returns s with its normalisation computed, for fast repeated
// evaluation.
func (s Sersic) Prepare() PreparedSersic {
	s.check()
	sn, cs := math.Sincos(s.PA * math.Pi / 180)
	return PreparedSersic{s: s, b: SersicB(s.N), ie: s.Ie(), sin: sn, cos: cs}
}

// PreparedSersic is a Sersic with b_n, I_e and the rotation precomputed.
type PreparedSersic struct {
	s        Sersic
	b, ie    float64
	sin, cos float64
}

// Brightness returns the surface brightness in Jy/arcsec² at (x, y) arcsec.
func (p PreparedSersic) Brightness(x, y float64) float64 {
	dx, dy := x-p.s.X, y-p.s.Y
	xp := dx*p.sin + dy*p.cos
	yp := (-dx*p.cos + dy*p.sin) / p.s.Q
	r2 := (xp*xp + yp*yp) / (p.s.Reff * p.s.Reff)
	var t float64
	switch p.s.N {
	case 1:
		t = math.Sqrt(r2)
	case 0.5:
		t = r2
	default:
		// r2^(1/2n) as exp(ln(r2)/2n): within an ulp or two of math.Pow
		// at a third of its cost; r2 = 0 gives 0 and +Inf gives +Inf.
		t = math.Exp(math.Log(r2) * (0.5 / p.s.N))
	}
	return p.ie * math.Exp(-p.b*(t-1))
}

// addBrightness adds f times the surface brightness at (x[i], y[i]) to
// v[i]: the values of f·Brightness, with the exponential of the profile
// taken over blocks of points by vmath.Exp (within two units in the last
// place of math.Exp).
func (p PreparedSersic) addBrightness(v, x, y []float64, f float64) {
	y = y[:len(x)]
	v = v[:len(x)]
	x0, y0, sn, cs, q := p.s.X, p.s.Y, p.sin, p.cos, p.s.Q
	re2 := p.s.Reff * p.s.Reff
	b, a := p.b, f*p.ie
	n := p.s.N
	var arg [256]float64
	for lo := 0; lo < len(x); lo += len(arg) {
		hi := min(lo+len(arg), len(x))
		e := arg[:hi-lo]
		for i := range e {
			dx, dy := x[lo+i]-x0, y[lo+i]-y0
			xp := dx*sn + dy*cs
			yp := (-dx*cs + dy*sn) / q
			r2 := (xp*xp + yp*yp) / re2
			var t float64
			switch n {
			case 1:
				t = math.Sqrt(r2)
			case 0.5:
				t = r2
			default:
				t = math.Exp(math.Log(r2) * (0.5 / n))
			}
			e[i] = -b * (t - 1)
		}
		addExp(v[lo:hi], e, a)
	}
}

// Gaussian is an elliptical Gaussian
//
//	I(x', y') = F/(2π σ² q) exp(−(x'² + (y'/q)²)/(2σ²)),  σ = FWHM/(2√(2 ln 2)),
//
// with x' along the major axis and FWHM the full width at half maximum of
// the major axis.
type Gaussian struct {
	X, Y  float64 // centre, arcsec
	Flux  float64 // total flux at the reference frequency, Jy
	FWHM  float64 // major-axis full width at half maximum, arcsec
	Q     float64 // axis ratio b/a in (0, 1]
	PA    float64 // major-axis position angle, degrees east of north
	Alpha float64 // spectral index, S_ν ∝ ν^α
}

// fwhmPerSigma is 2√(2 ln 2).
var fwhmPerSigma = 2 * math.Sqrt(2*math.Ln2)

// Validate reports a Gaussian parameter outside its domain: a non-finite
// value, FWHM ≤ 0 or q outside (0, 1].
func (g Gaussian) Validate() error {
	for _, p := range []struct {
		name string
		v    float64
	}{{"x", g.X}, {"y", g.Y}, {"flux", g.Flux}, {"fwhm", g.FWHM}, {"q", g.Q}, {"pa", g.PA}, {"alpha", g.Alpha}} {
		if math.IsNaN(p.v) || math.IsInf(p.v, 0) {
			return fmt.Errorf("gaussian: %s = %v is not finite", p.name, p.v)
		}
	}
	switch {
	case !(g.FWHM > 0):
		return fmt.Errorf("gaussian: fwhm = %v arcsec, want > 0", g.FWHM)
	case !(g.Q > 0 && g.Q <= 1):
		return fmt.Errorf("gaussian: q = %v, want in (0, 1]", g.Q)
	}
	return nil
}

func (g Gaussian) check() {
	if err := g.Validate(); err != nil {
		panic("source: " + err.Error())
	}
}

// Brightness returns the surface brightness in Jy/arcsec² at (x, y) arcsec.
func (g Gaussian) Brightness(x, y float64) float64 {
	g.check()
	sig := g.FWHM / fwhmPerSigma
	xp, yp := ellipse(x, y, g.X, g.Y, g.PA)
	yp /= g.Q
	return g.Flux / (2 * math.Pi * sig * sig * g.Q) * math.Exp(-(xp*xp+yp*yp)/(2*sig*sig))
}

// TotalFlux returns Flux.
func (g Gaussian) TotalFlux() float64 { return g.Flux }

// Centre returns (X, Y).
func (g Gaussian) Centre() (x, y float64) { return g.X, g.Y }

// SpectralIndex returns Alpha.
func (g Gaussian) SpectralIndex() float64 { return g.Alpha }

// Scale returns the minor-axis standard deviation q·FWHM/(2√(2 ln 2)).
func (g Gaussian) Scale() float64 { g.check(); return g.Q * g.FWHM / fwhmPerSigma }

// Point is an unresolved source. Its surface brightness is a delta function,
// so Brightness returns 0 and lensed rendering leaves it out: its images
// come from LensedPoint, and their visibilities are exact sums over them.
type Point struct {
	X, Y  float64 // position, arcsec
	Flux  float64 // flux at the reference frequency, Jy
	Alpha float64 // spectral index, S_ν ∝ ν^α
}

// Validate reports a non-finite Point parameter.
func (p Point) Validate() error {
	for _, q := range []struct {
		name string
		v    float64
	}{{"x", p.X}, {"y", p.Y}, {"flux", p.Flux}, {"alpha", p.Alpha}} {
		if math.IsNaN(q.v) || math.IsInf(q.v, 0) {
			return fmt.Errorf("point: %s = %v is not finite", q.name, q.v)
		}
	}
	return nil
}

// Brightness returns 0: a point has no extended surface brightness.
func (p Point) Brightness(x, y float64) float64 { return 0 }

// TotalFlux returns Flux.
func (p Point) TotalFlux() float64 { return p.Flux }

// Centre returns (X, Y).
func (p Point) Centre() (x, y float64) { return p.X, p.Y }

// Scale returns 0.
func (p Point) Scale() float64 { return 0 }

// SpectralIndex returns Alpha.
func (p Point) SpectralIndex() float64 { return p.Alpha }

// Source is a background source made of any number of components. Fluxes
// of the components are at the reference frequency RefFreq (Hz); at
// frequency ν each component's flux and brightness scale as (ν/RefFreq)^α
// with its own spectral index α.
type Source struct {
	Components []Component
	RefFreq    float64 // reference frequency ν0, Hz; 0 disables spectral scaling
}

// Validate calls Validate on every component that has one and returns the
// first error, with the component's index; it also checks RefFreq.
func (s Source) Validate() error {
	if math.IsNaN(s.RefFreq) || math.IsInf(s.RefFreq, 0) || s.RefFreq < 0 {
		return fmt.Errorf("source: reference frequency %v Hz, want ≥ 0 (0 disables spectral scaling)", s.RefFreq)
	}
	for i, c := range s.Components {
		if c == nil {
			return fmt.Errorf("source component %d is nil", i)
		}
		if v, ok := c.(interface{ Validate() error }); ok {
			if err := v.Validate(); err != nil {
				return fmt.Errorf("source component %d: %w", i, err)
			}
		}
	}
	return nil
}

// SpectralFactor returns (nu/RefFreq)^alpha, or 1 when RefFreq or nu is 0.
func (s Source) SpectralFactor(alpha, nu float64) float64 {
	if s.RefFreq == 0 || nu == 0 || alpha == 0 {
		return 1
	}
	if !(s.RefFreq > 0) || !(nu > 0) {
		panic(fmt.Sprintf("source: frequencies must be positive (RefFreq %v Hz, ν %v Hz)", s.RefFreq, nu))
	}
	return math.Pow(nu/s.RefFreq, alpha)
}

// Flux returns the total intrinsic (unlensed) flux in Jy at frequency nu Hz
// (0 for the reference frequency), points included.
func (s Source) Flux(nu float64) float64 {
	var f float64
	for _, c := range s.Components {
		f += c.TotalFlux() * s.SpectralFactor(c.SpectralIndex(), nu)
	}
	return f
}

// Brightness returns the surface brightness in Jy/arcsec² of the extended
// components at (x, y) arcsec and frequency nu Hz (0 for the reference
// frequency).
func (s Source) Brightness(x, y, nu float64) float64 {
	var b float64
	for _, c := range s.Components {
		b += c.Brightness(x, y) * s.SpectralFactor(c.SpectralIndex(), nu)
	}
	return b
}
