package fit

import (
	"fmt"
	"math"

	"deflect/lensmodel"
	"deflect/source"
)

// paramMap turns a vector of free-parameter values into the values of every
// parameter of a model: free ones from the vector, tied ones from their
// targets, fixed ones from the file.
type paramMap struct {
	m     *Model
	index map[*Param]int // position in m.Params
	free  []int          // m.Params index of each free parameter
	tied  []int          // m.Params index of each parameter's tie target, −1 if untied
	base  []float64      // Value of every parameter
}

func newParamMap(m *Model) *paramMap {
	pm := &paramMap{m: m, index: make(map[*Param]int, len(m.Params))}
	for i, q := range m.Params {
		pm.index[q] = i
	}
	for _, q := range m.Free {
		pm.free = append(pm.free, pm.index[q])
	}
	pm.tied = make([]int, len(m.Params))
	pm.base = make([]float64, len(m.Params))
	for i, q := range m.Params {
		pm.tied[i] = -1
		if q.Tied != nil {
			pm.tied[i] = pm.index[q.Tied]
		}
		pm.base[i] = q.Value
	}
	return pm
}

// values sets dst (len(m.Params), allocated when nil) to every parameter's
// value for the free-parameter vector theta.
func (pm *paramMap) values(dst, theta []float64) []float64 {
	if len(theta) != len(pm.free) {
		panic(fmt.Sprintf("fit: parameter vector of %d values for %d free parameters", len(theta), len(pm.free)))
	}
	if dst == nil {
		dst = make([]float64, len(pm.base))
	}
	copy(dst, pm.base)
	for k, i := range pm.free {
		dst[i] = theta[k]
	}
	for i, t := range pm.tied {
		if t >= 0 {
			dst[i] = dst[t]
		}
	}
	return dst
}

func (pm *paramMap) get(vals []float64, q *Param) float64 { return vals[pm.index[q]] }

// Start returns the starting vector of the free parameters: their Value,
// the start given in the file (or the prior's centre). For a bestfit.toml
// written by Run it is the best fit.
func (m *Model) Start() []float64 {
	theta := make([]float64, len(m.Free))
	for i, q := range m.Free {
		theta[i] = q.Value
	}
	return theta
}

// Priors returns the prior of each free parameter, in the order of Free.
func (m *Model) Priors() Priors {
	ps := make(Priors, len(m.Free))
	for i, q := range m.Free {
		switch q.Prior {
		case PriorNormal:
			n := Normal{Mean: q.Mean, SD: q.SD}
			if !math.IsInf(q.Min, -1) || !math.IsInf(q.Max, 1) {
				n.Min, n.Max = q.Min, q.Max
			}
			ps[i] = n
		case PriorLogUniform:
			ps[i] = LogUniform{Min: q.Min, Max: q.Max}
		default:
			ps[i] = Uniform{Min: q.Min, Max: q.Max}
		}
	}
	return ps
}

// Lens returns the lens of the model for the free-parameter vector theta
// (in the order of Free), each component validated; an invalid parameter
// combination is an error.
func (m *Model) Lens(theta []float64) (lensmodel.Lens, error) {
	pm := newParamMap(m)
	return pm.lens(pm.values(nil, theta))
}

// Source returns the source of the model for theta with fluxes in Jy (the
// model file's mJy divided by 1000) at the reference frequency refFreq Hz
// (0 disables spectral scaling). A pixelated source has no parametric
// form and is left out.
func (m *Model) Source(theta []float64, refFreq float64) (source.Source, error) {
	pm := newParamMap(m)
	return pm.source(pm.values(nil, theta), refFreq)
}

// lens builds and validates the lens for the parameter values vals.
func (pm *paramMap) lens(vals []float64) (lensmodel.Lens, error) {
	l := make(lensmodel.Lens, 0, len(pm.m.Lenses))
	for _, c := range pm.m.Lenses {
		g := func(key string) float64 {
			if q, ok := c.Params[key]; ok {
				return pm.get(vals, q)
			}
			return 0
		}
		var mass lensmodel.Mass
		switch c.Kind {
		case "point":
			mass = lensmodel.PointMass{X: g("x"), Y: g("y"), ThetaE: g("theta_e")}
		case "sie":
			mass = lensmodel.SIE{X: g("x"), Y: g("y"), ThetaE: g("theta_e"), Q: g("q"), PA: g("pa"), Core: g("core")}
		case "powerlaw":
			mass = lensmodel.PowerLaw{X: g("x"), Y: g("y"), ThetaE: g("theta_e"), Q: g("q"), PA: g("pa"), Slope: g("slope")}
		case "nfw":
			ks, rs := g("kappa_s"), g("r_s")
			if _, ok := c.Params["m200"]; ok {
				cs := pm.m.Cosmology
				if cs == nil {
					return nil, fmt.Errorf("lens %q: m200 and c need a [cosmology]", c.Name)
				}
				m200, conc := g("m200"), g("c")
				if !(m200 > 0) || !(conc > 0) {
					return nil, fmt.Errorf("lens %q: m200 = %g, c = %g: want both > 0", c.Name, m200, conc)
				}
				ks, rs = cs.lensmodel().NFWFromM200(m200, conc, cs.ZLens, cs.ZSource)
			}
			mass = lensmodel.NFW{X: g("x"), Y: g("y"), KappaS: ks, Rs: rs, Q: g("q"), PA: g("pa")}
		case "gnfw":
			mass = lensmodel.GNFW{X: g("x"), Y: g("y"), KappaS: g("kappa_s"), Rs: g("r_s"), Gamma: g("gamma"), Q: g("q"), PA: g("pa")}
		case "burkert":
			mass = lensmodel.Burkert{X: g("x"), Y: g("y"), KappaS: g("kappa_s"), Rs: g("r_s"), Q: g("q"), PA: g("pa")}
		case "shear":
			mass = lensmodel.Shear{Gamma: g("gamma"), Angle: g("angle"), X: g("x"), Y: g("y")}
		case "sheet":
			mass = lensmodel.Sheet{KappaExt: g("kappa")}
		default:
			panic("fit: lens kind " + c.Kind + " has no builder")
		}
		if v, ok := mass.(lensmodel.Validator); ok {
			if err := v.Validate(); err != nil {
				return nil, fmt.Errorf("lens %q: %w", c.Name, err)
			}
		}
		l = append(l, mass)
	}
	return l, nil
}

// lensmodel returns the lensmodel form of the cosmology.
func (c *Cosmology) lensmodel() lensmodel.Cosmology {
	return lensmodel.Cosmology{H0: c.H0, Om: c.Om, Ode: c.Ode}
}

// source builds and checks the parametric source for vals; fluxes in Jy.
func (pm *paramMap) source(vals []float64, refFreq float64) (source.Source, error) {
	src := source.Source{RefFreq: refFreq}
	for _, c := range pm.m.Sources {
		g := func(key string) float64 {
			if q, ok := c.Params[key]; ok {
				return pm.get(vals, q)
			}
			return 0
		}
		var comp source.Component
		switch c.Kind {
		case "sersic":
			comp = source.Sersic{X: g("x"), Y: g("y"), Flux: g("flux") / 1e3, Reff: g("r_eff"), N: g("n"), Q: g("q"), PA: g("pa"), Alpha: g("alpha")}
		case "gaussian":
			comp = source.Gaussian{X: g("x"), Y: g("y"), Flux: g("flux") / 1e3, FWHM: g("fwhm"), Q: g("q"), PA: g("pa"), Alpha: g("alpha")}
		case "point":
			comp = source.Point{X: g("x"), Y: g("y"), Flux: g("flux") / 1e3, Alpha: g("alpha")}
		case "pixels":
			continue
		default:
			panic("fit: source kind " + c.Kind + " has no builder")
		}
		if err := checkSource(c, g); err != nil {
			return source.Source{}, err
		}
		src.Components = append(src.Components, comp)
	}
	return src, nil
}

// checkSource reports parameters outside the domain of the source kinds,
// which the source package would otherwise reject with a panic.
func checkSource(c Component, g func(string) float64) error {
	for _, key := range []string{"x", "y", "flux", "r_eff", "n", "q", "pa", "alpha", "fwhm"} {
		if _, ok := c.Params[key]; ok {
			if v := g(key); math.IsNaN(v) || math.IsInf(v, 0) {
				return fmt.Errorf("source %q: %s = %v is not finite", c.Name, key, v)
			}
		}
	}
	if f := g("flux"); f < 0 {
		return fmt.Errorf("source %q: flux %g mJy < 0", c.Name, f)
	}
	switch c.Kind {
	case "sersic":
		if !(g("r_eff") > 0) || !(g("n") >= 0.2 && g("n") <= 10) {
			return fmt.Errorf("source %q: r_eff = %g, n = %g: want r_eff > 0 and 0.2 ≤ n ≤ 10", c.Name, g("r_eff"), g("n"))
		}
	case "gaussian":
		if !(g("fwhm") > 0) {
			return fmt.Errorf("source %q: fwhm = %g: want > 0", c.Name, g("fwhm"))
		}
	}
	if q, ok := c.Params["q"]; ok && q != nil {
		if v := g("q"); !(v > 0 && v <= 1) {
			return fmt.Errorf("source %q: q = %g outside (0, 1]", c.Name, v)
		}
	}
	return nil
}
