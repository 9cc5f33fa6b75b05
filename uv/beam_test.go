package uv

import (
	"math"
	"testing"
)

func TestPrimaryBeam(t *testing.T) {
	// FWHM = 1.13 λ/D (common practice): a 12 m dish at 300 GHz has
	// λ = 0.99931 mm, FWHM = 9.4102e-5 rad = 19.410″ (from memory, ≈ 19″ is
	// the figure usually quoted), to 1e-3 arcsec.
	b := NewPrimaryBeam(12, 300e9)
	if math.Abs(b.FWHM-19.410) > 1e-3 {
		t.Errorf("FWHM = %.4f arcsec, want 19.410", b.FWHM)
	}
	// By definition the gain is 1/2 at half the FWHM from the centre, in
	// every direction (to rounding).
	for _, pa := range []float64{0, 0.3, 1, 2.5} {
		x, y := b.FWHM/2*math.Sin(pa), b.FWHM/2*math.Cos(pa)
		if a := b.At(x, y); math.Abs(a-0.5) > 1e-15 {
			t.Errorf("gain at half FWHM, direction %v rad: %v, want 0.5", pa, a)
		}
	}
	if a := b.At(0, 0); a != 1 {
		t.Errorf("gain at the centre %v, want 1", a)
	}
	// FWHM ∝ 1/ν.
	if b2 := NewPrimaryBeam(12, 150e9); math.Abs(b2.FWHM/b.FWHM-2) > 1e-14 {
		t.Errorf("FWHM ratio 150/300 GHz = %v, want 2", b2.FWHM/b.FWHM)
	}
	none := NewPrimaryBeam(0, 300e9)
	if !none.None() || none.At(100, 100) != 1 {
		t.Error("zero dish: want no beam, gain 1")
	}
	g := Grid{N: 8, Pixel: 2, X0: 3}
	gains := b.Gains(nil, g)
	for k, a := range gains {
		x, y := g.Centre(k)
		if a != b.At(x, y) {
			t.Fatalf("Gains[%d] = %v, want %v", k, a, b.At(x, y))
		}
	}
}
