package lensmodel

import (
	"math"
	"testing"
)

// within reports whether got equals want to an absolute tolerance abs or a
// relative tolerance rel, whichever is larger.
func within(got, want, abs, rel float64) bool {
	if math.IsNaN(got) || math.IsNaN(want) {
		return false
	}
	if got == want {
		return true
	}
	return math.Abs(got-want) <= math.Max(abs, rel*math.Abs(want))
}

func checkClose(t *testing.T, what string, got, want, abs, rel float64) bool {
	t.Helper()
	if !within(got, want, abs, rel) {
		t.Errorf("%s = %.15g, want %.15g (abs %g, rel %g; diff %.3g)", what, got, want, abs, rel, got-want)
		return false
	}
	return true
}

// deriv5 returns the five-point central difference of f at 0 with step h
// (error O(h⁴); common practice).
func deriv5(f func(d float64) float64, h float64) float64 {
	return (8*(f(h)-f(-h)) - (f(2*h) - f(-2*h))) / (12 * h)
}

// fdCase is a point at which a Mass is checked against finite differences.
type fdCase struct {
	x, y float64
}

// checkMassDerivatives checks, at each point, by five-point finite
// differences with step h (arcsec):
//   - α = ∇ψ,
//   - the Hessian against the derivatives of α (both ψ_xy = ∂α_x/∂y and
//     ψ_xy = ∂α_y/∂x, so ∇×α = 0 is checked too),
//   - κ = ½ ∇·α, and κ = ½ tr H exactly up to rounding.
//
// Deflections are compared to the absolute tolerance tolA (arcsec) and the
// dimensionless second derivatives to tolH, each also relative.
func checkMassDerivatives(t *testing.T, m Mass, pts []fdCase, h, tolA, tolH float64) {
	t.Helper()
	for _, p := range pts {
		x, y := p.x, p.y
		ok := true
		ax, ay := m.Deflect(x, y)
		psiX := deriv5(func(d float64) float64 { return m.Potential(x+d, y) }, h)
		psiY := deriv5(func(d float64) float64 { return m.Potential(x, y+d) }, h)
		ok = checkClose(t, "α_x vs ∂ψ/∂x", ax, psiX, tolA, tolA) && ok
		ok = checkClose(t, "α_y vs ∂ψ/∂y", ay, psiY, tolA, tolA) && ok

		axx := deriv5(func(d float64) float64 { a, _ := m.Deflect(x+d, y); return a }, h)
		axy := deriv5(func(d float64) float64 { a, _ := m.Deflect(x, y+d); return a }, h)
		ayx := deriv5(func(d float64) float64 { _, a := m.Deflect(x+d, y); return a }, h)
		ayy := deriv5(func(d float64) float64 { _, a := m.Deflect(x, y+d); return a }, h)
		hxx, hxy, hyy := m.Hessian(x, y)
		ok = checkClose(t, "ψ_xx vs ∂α_x/∂x", hxx, axx, tolH, tolH) && ok
		ok = checkClose(t, "ψ_yy vs ∂α_y/∂y", hyy, ayy, tolH, tolH) && ok
		ok = checkClose(t, "ψ_xy vs ∂α_x/∂y", hxy, axy, tolH, tolH) && ok
		ok = checkClose(t, "ψ_xy vs ∂α_y/∂x", hxy, ayx, tolH, tolH) && ok
		ok = checkClose(t, "curl α", ayx-axy, 0, 2*tolH*math.Max(1, math.Abs(hxx)+math.Abs(hyy)), 0) && ok

		k := m.Kappa(x, y)
		ok = checkClose(t, "κ vs ½∇·α", k, (axx+ayy)/2, tolH, tolH) && ok
		ok = checkClose(t, "κ vs ½ tr H", k, (hxx+hyy)/2, 1e-12, 1e-12) && ok
		if !ok {
			t.Logf("at (%g, %g) of %#v", x, y, m)
			return
		}
	}
}
