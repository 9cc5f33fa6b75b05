package uv

import "math"

// SpeedOfLight is c in m/s.
const SpeedOfLight = 299792458.0

// PrimaryBeamFactor is the ratio of the primary-beam FWHM to λ/D for a
// tapered circular dish, 1.13 (common practice).
const PrimaryBeamFactor = 1.13

// PrimaryBeam is a circular Gaussian antenna power pattern
//
//	A(r) = exp(−4 ln 2 · r²/FWHM²),
//
// centred on the phase centre, r the offset in arcsec. The zero value (FWHM
// zero) is "no primary beam": A = 1 everywhere.
type PrimaryBeam struct {
	// FWHM is the full width at half power in arcsec.
	FWHM float64
}

// NewPrimaryBeam returns the Gaussian primary beam of a dish of diameter
// dish metres at frequency freq Hz, FWHM = 1.13 λ/D (common practice, see
// ../shared/conventions.md). A non-positive dish or frequency gives no
// beam.
func NewPrimaryBeam(dish, freq float64) PrimaryBeam {
	if !(dish > 0) || !(freq > 0) {
		return PrimaryBeam{}
	}
	return PrimaryBeam{FWHM: PrimaryBeamFactor * SpeedOfLight / freq / dish * ArcsecPerRadian}
}

// None reports whether b is the absent beam (A = 1).
func (b PrimaryBeam) None() bool { return !(b.FWHM > 0) }

// At returns the beam gain A at the sky offset (x, y) arcsec.
func (b PrimaryBeam) At(x, y float64) float64 {
	if b.None() {
		return 1
	}
	return math.Exp(-4 * math.Ln2 * (x*x + y*y) / (b.FWHM * b.FWHM))
}

// Gains returns the beam gain at every pixel centre of g in FITS order. dst
// is allocated when nil; otherwise its length must be g.Len().
func (b PrimaryBeam) Gains(dst []float64, g Grid) []float64 {
	if dst == nil {
		dst = make([]float64, g.Len())
	} else if len(dst) != g.Len() {
		panic("uv: Gains destination length differs from the grid")
	}
	for k := range dst {
		dst[k] = b.At(g.Centre(k))
	}
	return dst
}
