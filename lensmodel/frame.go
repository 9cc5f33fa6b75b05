package lensmodel

import (
	"fmt"
	"math"
)

// frame is the coordinate frame of an elliptical component: centre (x0, y0)
// in arcsec and the unit vectors of its major axis e1 = (sin PA, cos PA) and
// minor axis e2 = (−cos PA, sin PA) in sky (x east, y north) coordinates,
// PA east of north. (e1, e2) is a proper rotation of (x, y).
type frame struct {
	x0, y0 float64
	s, c   float64 // sin PA, cos PA
}

func newFrame(x0, y0, paDeg float64) frame {
	s, c := math.Sincos(paDeg * math.Pi / 180)
	return frame{x0: x0, y0: y0, s: s, c: c}
}

// local returns the coordinates (x', y') of the sky position (x, y) along the
// major and minor axes.
func (f *frame) local(x, y float64) (xp, yp float64) {
	dx, dy := x-f.x0, y-f.y0
	return dx*f.s + dy*f.c, -dx*f.c + dy*f.s
}

// vector returns the sky components of the vector (a1, a2) given along the
// major and minor axes.
func (f *frame) vector(a1, a2 float64) (ax, ay float64) {
	return a1*f.s - a2*f.c, a1*f.c + a2*f.s
}

// tensor returns the sky components of the symmetric tensor (h11, h12, h22)
// given in the axes frame: H = E H' Eᵀ with E = [e1 e2].
func (f *frame) tensor(h11, h12, h22 float64) (hxx, hxy, hyy float64) {
	s, c := f.s, f.c
	ss, cc, sc := s*s, c*c, s*c
	hxx = ss*h11 - 2*sc*h12 + cc*h22
	hyy = cc*h11 + 2*sc*h12 + ss*h22
	hxy = sc*h11 + (ss-cc)*h12 - sc*h22
	return hxx, hxy, hyy
}

// checkFinite returns an error naming the component and parameter when v is
// not a finite number.
func checkFinite(kind, name string, v float64) error {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return fmt.Errorf("lensmodel: %s: %s = %v is not a finite number", kind, name, v)
	}
	return nil
}

// checkAxisRatio returns an error when q is outside (0, 1].
func checkAxisRatio(kind string, q float64) error {
	if !(q > 0 && q <= 1) {
		return fmt.Errorf("lensmodel: %s: axis ratio q = %v outside (0, 1]", kind, q)
	}
	return nil
}

// checkNonNegative returns an error when v is negative or not finite.
func checkNonNegative(kind, name string, v float64) error {
	if err := checkFinite(kind, name, v); err != nil {
		return err
	}
	if v < 0 {
		return fmt.Errorf("lensmodel: %s: %s = %v is negative", kind, name, v)
	}
	return nil
}

// checkPositive returns an error when v is not a positive finite number.
func checkPositive(kind, name string, v float64) error {
	if err := checkFinite(kind, name, v); err != nil {
		return err
	}
	if v <= 0 {
		return fmt.Errorf("lensmodel: %s: %s = %v must be positive", kind, name, v)
	}
	return nil
}

// checkAll returns the first non-nil error.
func checkAll(errs ...error) error {
	for _, err := range errs {
		if err != nil {
			return err
		}
	}
	return nil
}
