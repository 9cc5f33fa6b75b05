package probe

import (
	"errors"
	"math"

	"deflect/fit"
)

// cloneModel returns a deep copy of m whose parameters can be changed
// without touching m.
func cloneModel(m *fit.Model) *fit.Model {
	c := *m
	mp := make(map[*fit.Param]*fit.Param, len(m.Params))
	c.Params = make([]*fit.Param, len(m.Params))
	for i, q := range m.Params {
		nq := *q
		mp[q] = &nq
		c.Params[i] = &nq
	}
	for _, q := range c.Params {
		if q.Tied != nil {
			q.Tied = mp[q.Tied]
		}
	}
	re := func(q *fit.Param) *fit.Param {
		if q == nil {
			return nil
		}
		if n, ok := mp[q]; ok {
			return n
		}
		return q
	}
	c.Free = make([]*fit.Param, len(m.Free))
	for i, q := range m.Free {
		c.Free[i] = re(q)
	}
	comps := func(cs []fit.Component) []fit.Component {
		out := make([]fit.Component, len(cs))
		for i, cp := range cs {
			cp.Params = make(map[string]*fit.Param, len(cs[i].Params))
			for k, q := range cs[i].Params {
				cp.Params[k] = re(q)
			}
			out[i] = cp
		}
		return out
	}
	c.Lenses, c.Sources = comps(m.Lenses), comps(m.Sources)
	c.Data = make([]fit.Data, len(m.Data))
	for i, d := range m.Data {
		d.FluxScale, d.DX, d.DY, d.NoiseScale = re(d.FluxScale), re(d.DX), re(d.DY), re(d.NoiseScale)
		c.Data[i] = d
	}
	return &c
}

// Variants returns the pair of the model test derived from m when the user
// names none: A, m with the core radius of every isothermal ellipsoid fixed
// at 0 (singular profiles: no visible central image), and B, m itself when
// one of its ellipsoids has a free or non-zero core, or else m with a free
// core, uniform on [0, θ_E/2], on the ellipsoid whose centre is nearest
// (x0, y0). theta gives m's free parameters (the start of both fits).
func Variants(m *fit.Model, theta []float64, x0, y0 float64) (a, b *fit.Model, err error) {
	a, b = cloneModel(m), cloneModel(m)
	for i := range m.Free {
		a.Free[i].Value, b.Free[i].Value = theta[i], theta[i]
	}
	cored, nearest, nd := false, -1, math.Inf(1)
	for i, c := range m.Lenses {
		if c.Kind != "sie" {
			continue
		}
		if q := c.Params["core"]; q != nil && (q.Free || ParamValue(m, theta, q) > 0) {
			cored = true
		}
		d := math.Hypot(ParamValue(m, theta, c.Params["x"])-x0, ParamValue(m, theta, c.Params["y"])-y0)
		if d < nd {
			nearest, nd = i, d
		}
	}
	if nearest < 0 {
		return nil, nil, errors.New("probe: the model has no isothermal ellipsoid (kind sie) whose core decides the central image; name the pair with --models")
	}
	// A: every sie core fixed at 0.
	for _, c := range a.Lenses {
		if c.Kind != "sie" {
			continue
		}
		q := c.Params["core"]
		if q == nil {
			continue
		}
		q.Free, q.Value, q.Tied, q.SameAs = false, 0, nil, ""
	}
	a.Free = freeList(a)
	if !cored {
		q := b.Lenses[nearest].Params["core"]
		te := ParamValue(m, theta, m.Lenses[nearest].Params["theta_e"])
		q.Free, q.Prior, q.Min, q.Max, q.Value = true, fit.PriorUniform, 0, te/2, te/10
		b.Free = freeList(b)
	}
	return a, b, nil
}

// freeList returns the free, untied parameters of m in file order.
func freeList(m *fit.Model) []*fit.Param {
	var out []*fit.Param
	for _, q := range m.Params {
		if q.Free && q.Tied == nil {
			out = append(out, q)
		}
	}
	return out
}
