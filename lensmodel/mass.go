package lensmodel

// Mass is a projected mass distribution evaluated at an image-plane position
// (x, y) in arcsec. Every component and every Lens implements it.
type Mass interface {
	// Deflect returns the deflection α = ∇ψ in arcsec.
	Deflect(x, y float64) (ax, ay float64)
	// Kappa returns the convergence κ = Σ/Σ_cr (dimensionless).
	Kappa(x, y float64) float64
	// Hessian returns the second derivatives of the lensing potential,
	// ψ_xx, ψ_xy and ψ_yy (dimensionless).
	Hessian(x, y float64) (hxx, hxy, hyy float64)
	// Potential returns the lensing potential ψ in arcsec².
	Potential(x, y float64) float64
}

// Validator is implemented by every mass component of this package.
// Validate reports parameters outside their domain (an axis ratio outside
// (0, 1], a negative Einstein radius, a non-finite position, …) with an
// error naming the component and the parameter. The model layer calls it
// before any computation; the evaluation methods do not check.
type Validator interface {
	Validate() error
}

// evaluator is a component with its per-component constants (sin and cos of
// the position angle, square roots of the axis ratio, …) computed once, so
// that evaluation over many points does no repeated set-up. addDeflect adds
// the component's deflection at the points (x, y) to (ax, ay), all of one
// length; it is the ray-tracing hot loop.
type evaluator interface {
	deflect(x, y float64) (ax, ay float64)
	kappa(x, y float64) float64
	hessian(x, y float64) (hxx, hxy, hyy float64)
	potential(x, y float64) float64
	addDeflect(ax, ay, x, y []float64)
}

// preparer is implemented by the components of this package: prepare returns
// the component's evaluator.
type preparer interface {
	prepare() evaluator
}

// massEvaluator evaluates a Mass that is not from this package through its
// interface methods.
type massEvaluator struct{ m Mass }

func (e massEvaluator) deflect(x, y float64) (ax, ay float64) { return e.m.Deflect(x, y) }
func (e massEvaluator) kappa(x, y float64) float64            { return e.m.Kappa(x, y) }
func (e massEvaluator) potential(x, y float64) float64        { return e.m.Potential(x, y) }

func (e massEvaluator) hessian(x, y float64) (hxx, hxy, hyy float64) {
	return e.m.Hessian(x, y)
}

func (e massEvaluator) addDeflect(ax, ay, x, y []float64) {
	for i := range x {
		dx, dy := e.m.Deflect(x[i], y[i])
		ax[i] += dx
		ay[i] += dy
	}
}

// evaluatorOf returns the evaluator of m: its own when m is a component of
// this package, otherwise one that calls m's methods.
func evaluatorOf(m Mass) evaluator {
	if p, ok := m.(preparer); ok {
		return p.prepare()
	}
	return massEvaluator{m}
}
