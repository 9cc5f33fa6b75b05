package lensmodel

// Sheet is a uniform convergence sheet κ = KappaExt (dimensionless), the
// mass-sheet approximation to matter along the line of sight or to a group
// or cluster much larger than the lens:
//
//	ψ = (κ/2) r²,   α = κ r⃗,
//
// r⃗ the offset from (X, Y) in arcsec (the centre only adds a constant
// deflection; it is usually left at the origin). κ may be negative.
//
// References:
//   - Falco E. E., Gorenstein M. V., Shapiro I. I., 1985, ApJ 289, L1 (the
//     mass sheet and the degeneracy it introduces into lens models).
//   - Schneider P., Ehlers J., Falco E. E., 1992, Gravitational Lenses
//     (Springer), sect. 5.5 (μ = 1/(1 − κ)² of a uniform sheet; section
//     from memory).
type Sheet struct {
	KappaExt float64 // convergence κ (dimensionless); the method Kappa returns it
	X, Y     float64 // centre, arcsec
}

var (
	_ Mass      = Sheet{}
	_ Validator = Sheet{}
)

// Validate reports a non-finite parameter.
func (m Sheet) Validate() error {
	const kind = "sheet"
	return checkAll(
		checkFinite(kind, "kappa", m.KappaExt),
		checkFinite(kind, "x", m.X), checkFinite(kind, "y", m.Y),
	)
}

// Deflect returns κ (x − X, y − Y) in arcsec.
func (m Sheet) Deflect(x, y float64) (ax, ay float64) {
	return m.KappaExt * (x - m.X), m.KappaExt * (y - m.Y)
}

// Kappa returns κ.
func (m Sheet) Kappa(x, y float64) float64 { return m.KappaExt }

// Hessian returns (κ, 0, κ).
func (m Sheet) Hessian(x, y float64) (hxx, hxy, hyy float64) {
	return m.KappaExt, 0, m.KappaExt
}

// Potential returns (κ/2) r² in arcsec².
func (m Sheet) Potential(x, y float64) float64 {
	dx, dy := x-m.X, y-m.Y
	return m.KappaExt / 2 * (dx*dx + dy*dy)
}

func (m Sheet) prepare() evaluator { return sheetEval(m) }

type sheetEval Sheet

func (e sheetEval) deflect(x, y float64) (ax, ay float64)        { return Sheet(e).Deflect(x, y) }
func (e sheetEval) kappa(x, y float64) float64                   { return e.KappaExt }
func (e sheetEval) hessian(x, y float64) (hxx, hxy, hyy float64) { return e.KappaExt, 0, e.KappaExt }
func (e sheetEval) potential(x, y float64) float64               { return Sheet(e).Potential(x, y) }

func (e sheetEval) addDeflect(ax, ay, x, y []float64) {
	ax, ay, y = ax[:len(x)], ay[:len(x)], y[:len(x)]
	for i := range x {
		ax[i] += e.KappaExt * (x[i] - e.X)
		ay[i] += e.KappaExt * (y[i] - e.Y)
	}
}
