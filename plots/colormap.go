package plots

import (
	"image/color"
	"math"
)

// ColorMap maps a normalised value t ∈ [0, 1] to a colour through a
// 256-entry table. Values below 0 or above 1 saturate at the ends; NaN maps
// to NaNColor.
type ColorMap struct {
	// Name is a short description, used in documentation and tests.
	Name  string
	table [256]color.NRGBA
	rgb   [256][3]float64 // unquantised, for tests
}

// NaNColor is the colour of non-finite pixels in every image panel: a light
// grey distinct from every entry of Viridis and Diverging.
var NaNColor = color.NRGBA{R: 0xb8, G: 0xb8, B: 0xb8, A: 0xff}

// At returns the colour for t ∈ [0, 1].
func (m *ColorMap) At(t float64) color.NRGBA {
	if math.IsNaN(t) {
		return NaNColor
	}
	t = math.Max(0, math.Min(1, t))
	return m.table[int(t*255+0.5)]
}

func newColorMap(name string, f func(t float64) (r, g, b float64)) *ColorMap {
	m := &ColorMap{Name: name}
	for k := range m.table {
		r, g, b := f(float64(k) / 255)
		m.rgb[k] = [3]float64{r, g, b}
		m.table[k] = color.NRGBA{R: to8(r), G: to8(g), B: to8(b), A: 0xff}
	}
	return m
}

func to8(v float64) uint8 {
	return uint8(math.Round(255 * math.Max(0, math.Min(1, v))))
}

// Viridis is the perceptually uniform, colour-blind-safe sequential map
// of van der Walt & Smith: their published 256-entry sRGB table (CC0),
// entry k at t = k/255, in viridis_table.go (generated from the table as
// matplotlib ships it by testdata/gen_viridis.py). CIE L* rises from about
// 16 at t = 0 to 92 at t = 1. Used for every intensity image and for
// log |μ|.
//
// References:
//   - S. van der Walt & N. Smith (2015), "A better default colormap for
//     Matplotlib", SciPy 2015; the viridis table, CC0.
var Viridis = newColorMap("viridis", viridis)

//go:generate /usr/bin/python3 testdata/gen_viridis.py -o viridis_table.go

// viridis returns table entry round(255 t); the map is only ever sampled
// at t = k/255.
func viridis(t float64) (r, g, b float64) {
	c := viridisTable[int(math.Round(255*math.Max(0, math.Min(1, t))))]
	return c[0], c[1], c[2]
}

// Diverging is this package's blue–white–red map for signed quantities
// (residuals in σ). It is built in CIE L*C*h (D65): t = 0.5 is white
// (L* = 100), and with s = |2t − 1|
//
//	L*(s) = 100 − 68 s,   C*(s) = 72 s^0.9 (reduced where out of gamut)
//
// at hue 265° (blue) for t < 0.5 and 35° (red) for t > 0.5. Lightness is
// therefore symmetric about zero and falls monotonically away from it,
// so equal |residual| reads as equal contrast; chroma is cut back, at fixed
// L* and hue, only as far as the sRGB gamut requires.
var Diverging = newColorMap("blue–white–red diverging", diverging)

func diverging(t float64) (r, g, b float64) {
	s := 2*t - 1
	h := 35.0
	if s < 0 {
		h = 265
		s = -s
	}
	l := 100 - 68*s
	c := 72 * math.Pow(s, 0.9)
	hr := h * math.Pi / 180
	// Reduce chroma at constant L* and hue until inside the sRGB gamut.
	lo, hi := 0.0, c
	if _, _, _, ok := labToSRGB(l, c*math.Cos(hr), c*math.Sin(hr)); !ok {
		for range 40 {
			mid := (lo + hi) / 2
			if _, _, _, ok := labToSRGB(l, mid*math.Cos(hr), mid*math.Sin(hr)); ok {
				lo = mid
			} else {
				hi = mid
			}
		}
		c = lo
	}
	r, g, b, _ = labToSRGB(l, c*math.Cos(hr), c*math.Sin(hr))
	return r, g, b
}

// labToSRGB converts CIE L*a*b* (D65 white) to gamma-encoded sRGB in
// [0, 1], reporting whether the colour lies inside the gamut.
//
// References:
//   - CIE 15:2004, Colorimetry, 3rd ed., eqs. 8.1–8.3 (L*a*b* inverse).
//   - IEC 61966-2-1:1999, sRGB: XYZ→RGB matrix and transfer function.
func labToSRGB(l, a, bb float64) (r, g, b float64, ok bool) {
	const xn, yn, zn = 0.95047, 1.0, 1.08883
	fy := (l + 16) / 116
	fx := fy + a/500
	fz := fy - bb/200
	finv := func(f float64) float64 {
		const d = 6.0 / 29
		if f > d {
			return f * f * f
		}
		return 3 * d * d * (f - 4.0/29)
	}
	x, y, z := xn*finv(fx), yn*finv(fy), zn*finv(fz)
	lr := 3.2404542*x - 1.5371385*y - 0.4985314*z
	lg := -0.9692660*x + 1.8760108*y + 0.0415560*z
	lb := 0.0556434*x - 0.2040259*y + 1.0572252*z
	const eps = 1e-9
	ok = lr >= -eps && lr <= 1+eps && lg >= -eps && lg <= 1+eps && lb >= -eps && lb <= 1+eps
	enc := func(c float64) float64 {
		c = math.Max(0, math.Min(1, c))
		if c <= 0.0031308 {
			return 12.92 * c
		}
		return 1.055*math.Pow(c, 1/2.4) - 0.055
	}
	return enc(lr), enc(lg), enc(lb), ok
}
