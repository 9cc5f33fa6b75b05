package uv

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"github.com/astrogo/fitsio"
)

// Project returns the tangent-plane offsets x (east) and y (north) in arcsec
// of the direction (ra, dec) from the phase centre (ra0, dec0), all angles in
// degrees, by the SIN (orthographic) projection of ../shared/conventions.md:
//
//	l = cos δ sin(α − α0)
//	m = sin δ cos δ0 − cos δ sin δ0 cos(α − α0)
//	x = l·ArcsecPerRadian,  y = m·ArcsecPerRadian.
//
// Directions more than 90° from the phase centre project onto the same
// (x, y) as their mirror image in the tangent plane; Unproject returns the
// near one.
//
// References:
//
//   - Calabretta M. R. & Greisen E. W. 2002, A&A 395, 1077: the SIN
//     projection, §5.1.5 (eqs. 54–55 for the native-to-plane mapping).
func Project(ra0, dec0, ra, dec float64) (x, y float64) {
	const rad = math.Pi / 180
	sd, cd := math.Sincos(dec * rad)
	sd0, cd0 := math.Sincos(dec0 * rad)
	sa, ca := math.Sincos((ra - ra0) * rad)
	l := cd * sa
	m := sd*cd0 - cd*sd0*ca
	return l * ArcsecPerRadian, m * ArcsecPerRadian
}

// Unproject is the inverse of Project: it returns the right ascension and
// declination in degrees (ra in [0, 360)) of the tangent-plane offsets x, y
// arcsec about the phase centre (ra0, dec0) degrees. Offsets outside the unit
// circle of direction cosines (l² + m² > 1) return NaN.
//
//	n = √(1 − l² − m²)
//	sin δ = m cos δ0 + n sin δ0
//	α = α0 + atan2(l, n cos δ0 − m sin δ0)
func Unproject(ra0, dec0, x, y float64) (ra, dec float64) {
	const rad = math.Pi / 180
	l, m := x/ArcsecPerRadian, y/ArcsecPerRadian
	r2 := l*l + m*m
	if r2 > 1 {
		return math.NaN(), math.NaN()
	}
	n := math.Sqrt(1 - r2)
	sd0, cd0 := math.Sincos(dec0 * rad)
	dec = math.Asin(m*cd0+n*sd0) / rad
	ra = ra0 + math.Atan2(l, n*cd0-m*sd0)/rad
	ra = math.Mod(ra, 360)
	if ra < 0 {
		ra += 360
	}
	return ra, dec
}

// CleanBeam is an elliptical Gaussian restoring beam: full widths at half
// maximum of the major and minor axes in arcsec and the position angle of the
// major axis in degrees east of north, in (−90, 90].
type CleanBeam struct {
	BMaj, BMin float64
	BPA        float64
}

// ImageMeta is what a FITS sky image records besides its Grid.
type ImageMeta struct {
	// RA and Dec are the phase centre in degrees, the WCS reference point
	// (CRVAL). When HasPhaseCentre is false the header carries CRVAL = (0, 0)
	// and says the sky position is unknown.
	RA, Dec        float64
	HasPhaseCentre bool
	// Freq is the frequency in Hz, zero when unknown.
	Freq float64
	// BUnit is the brightness unit, e.g. "JY/BEAM" or "JY/PIXEL".
	BUnit string
	// Object names the image (a dataset label), optional.
	Object string
	// Beam is the clean-beam Gaussian, written as BMAJ, BMIN and BPA when
	// not nil.
	Beam *CleanBeam
}

// CRPix returns the 1-based FITS reference pixel (CRPIX1, CRPIX2) of the
// phase centre on g. It is N/2 + 1 on both axes when the grid is centred on
// the phase centre, shifted by the grid's offset (X0, Y0) otherwise:
//
//	CRPIX1 = N/2 + 1 + X0/Pixel,  CRPIX2 = N/2 + 1 − Y0/Pixel.
func (g Grid) CRPix() (crpix1, crpix2 float64) {
	c := float64(g.N/2 + 1)
	return c + g.X0/g.Pixel, c - g.Y0/g.Pixel
}

// WCSCards returns the FITS header cards of an image on g: the celestial
// world coordinate system (RA---SIN, DEC--SIN in degrees, CDELT1 < 0,
// CDELT2 > 0, CRPIX at the phase centre, CRVAL the phase centre), BUNIT,
// and BMAJ, BMIN, BPA (degrees) when a beam is given. The mapping from pixel
// to sky agrees with Grid.XY and Project: the intermediate world coordinates
// of the SIN projection are the direction cosines l, m in degrees.
//
// References:
//
//   - Greisen E. W. & Calabretta M. R. 2002, A&A 395, 1061: CRPIX, CDELT,
//     CRVAL, CTYPE, CUNIT (§2).
//   - Calabretta M. R. & Greisen E. W. 2002, A&A 395, 1077: SIN (§5.1.5).
func (g Grid) WCSCards(m ImageMeta) []fitsio.Card {
	if g.N <= 0 || g.Pixel <= 0 {
		panic("uv: WCSCards on an empty grid")
	}
	crpix1, crpix2 := g.CRPix()
	ra, dec := m.RA, m.Dec
	if !m.HasPhaseCentre {
		ra, dec = 0, 0
	}
	cards := []fitsio.Card{
		{Name: "WCSAXES", Value: 2, Comment: "number of world coordinate axes"},
		{Name: "CTYPE1", Value: "RA---SIN", Comment: "right ascension, orthographic"},
		{Name: "CTYPE2", Value: "DEC--SIN", Comment: "declination, orthographic"},
		{Name: "CUNIT1", Value: "deg", Comment: ""},
		{Name: "CUNIT2", Value: "deg", Comment: ""},
		{Name: "CRPIX1", Value: crpix1, Comment: "phase-centre pixel, axis 1 (1-based)"},
		{Name: "CRPIX2", Value: crpix2, Comment: "phase-centre pixel, axis 2 (1-based)"},
		{Name: "CDELT1", Value: -g.Pixel / 3600, Comment: "[deg] pixel size; RA increases to the left"},
		{Name: "CDELT2", Value: g.Pixel / 3600, Comment: "[deg] pixel size"},
		{Name: "CRVAL1", Value: ra, Comment: "[deg] phase centre right ascension"},
		{Name: "CRVAL2", Value: dec, Comment: "[deg] phase centre declination"},
		{Name: "LONPOLE", Value: 180.0, Comment: "[deg] native longitude of the celestial pole"},
		{Name: "RADESYS", Value: "ICRS", Comment: ""},
		{Name: "PHCENTRE", Value: m.HasPhaseCentre, Comment: "phase centre known (else CRVAL arbitrary)"},
	}
	if m.BUnit != "" {
		cards = append(cards, fitsio.Card{Name: "BUNIT", Value: m.BUnit, Comment: "brightness unit"})
	}
	if m.Freq > 0 {
		cards = append(cards, fitsio.Card{Name: "FREQ", Value: m.Freq, Comment: "[Hz] reference frequency"})
	}
	if m.Object != "" {
		cards = append(cards, fitsio.Card{Name: "OBJECT", Value: m.Object, Comment: "dataset label"})
	}
	if b := m.Beam; b != nil {
		cards = append(cards,
			fitsio.Card{Name: "BMAJ", Value: b.BMaj / 3600, Comment: "[deg] clean beam major axis FWHM"},
			fitsio.Card{Name: "BMIN", Value: b.BMin / 3600, Comment: "[deg] clean beam minor axis FWHM"},
			fitsio.Card{Name: "BPA", Value: b.BPA, Comment: "[deg] clean beam position angle, east of north"},
		)
	}
	return cards
}

// GridFromHeader reads a Grid and its ImageMeta back from the FITS header of
// a square two-dimensional image written with WCSCards. It rejects headers
// that are not in that form (other projections, rotated or non-square
// pixels), naming the card at fault.
func GridFromHeader(h *fitsio.Header) (Grid, ImageMeta, error) {
	var m ImageMeta
	axes := h.Axes()
	if len(axes) != 2 || axes[0] != axes[1] || axes[0]%2 != 0 || axes[0] == 0 {
		return Grid{}, m, fmt.Errorf("image axes %v: want a square N×N image, N even", axes)
	}
	n := axes[0]
	str := func(key string) string {
		if c := h.Get(key); c != nil {
			if s, ok := c.Value.(string); ok {
				return strings.TrimSpace(s)
			}
		}
		return ""
	}
	var errs []error
	num := func(key string, required bool) float64 {
		c := h.Get(key)
		if c == nil {
			if required {
				errs = append(errs, fmt.Errorf("card %s: missing", key))
			}
			return 0
		}
		switch v := c.Value.(type) {
		case float64:
			return v
		case int:
			return float64(v)
		}
		errs = append(errs, fmt.Errorf("card %s: value %v is not a number", key, c.Value))
		return 0
	}
	if s := str("CTYPE1"); s != "RA---SIN" {
		errs = append(errs, fmt.Errorf("card CTYPE1: %q, want \"RA---SIN\"", s))
	}
	if s := str("CTYPE2"); s != "DEC--SIN" {
		errs = append(errs, fmt.Errorf("card CTYPE2: %q, want \"DEC--SIN\"", s))
	}
	cd1, cd2 := num("CDELT1", true), num("CDELT2", true)
	crpix1, crpix2 := num("CRPIX1", true), num("CRPIX2", true)
	m.RA, m.Dec = num("CRVAL1", true), num("CRVAL2", true)
	for _, k := range []string{"PC1_2", "PC2_1", "CROTA2", "CD1_1"} {
		if h.Get(k) != nil && num(k, false) != 0 {
			errs = append(errs, fmt.Errorf("card %s: rotated or CD-matrix images are not supported", k))
		}
	}
	if err := errors.Join(errs...); err != nil {
		return Grid{}, m, err
	}
	if cd1 >= 0 || cd2 <= 0 || math.Abs(cd1+cd2) > 1e-9*cd2 {
		return Grid{}, m, fmt.Errorf("cards CDELT1, CDELT2 = %g, %g: want CDELT1 = −CDELT2 < 0", cd1, cd2)
	}
	pix := cd2 * 3600
	c := float64(n/2 + 1)
	g := Grid{N: n, Pixel: pix, X0: (crpix1 - c) * pix, Y0: -(crpix2 - c) * pix}
	m.HasPhaseCentre = true
	if pc := h.Get("PHCENTRE"); pc != nil {
		if b, ok := pc.Value.(bool); ok {
			m.HasPhaseCentre = b
		}
	}
	m.BUnit = str("BUNIT")
	m.Object = str("OBJECT")
	m.Freq = num("FREQ", false)
	if h.Get("BMAJ") != nil {
		b := CleanBeam{BMaj: num("BMAJ", true) * 3600, BMin: num("BMIN", true) * 3600, BPA: num("BPA", true)}
		if err := errors.Join(errs...); err != nil {
			return Grid{}, m, err
		}
		m.Beam = &b
	}
	return g, m, nil
}
