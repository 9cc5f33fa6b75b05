package source

import (
	"math"
	"testing"

	"deflect/lensmodel"
)

// polarFinder finds the images of a singular isothermal ellipsoid centred
// at the origin, for the tests' source-plane reference integrals. Its
// deflection depends only on the polar angle φ of θ = r (cos φ, sin φ), so
// the lens equation β = θ − α(φ) has a solution at angle φ exactly when
// β + α(φ) is parallel to (cos φ, sin φ), and then r = (cos φ, sin φ)·(β + α)
// must be positive (Kormann, Schneider & Bartelmann 1994, A&A 284, 285,
// sect. 4). The roots are bracketed on a table of k angles and refined by
// bisection on the exact deflection; |μ| comes from the lens Hessian.
type polarFinder struct {
	m        lensmodel.Mass
	cos, sin []float64
	ax, ay   []float64
}

func newPolarFinder(m lensmodel.SIE, k int) *polarFinder {
	if m.Core != 0 || m.X != 0 || m.Y != 0 {
		panic("polarFinder: needs a singular SIE at the origin")
	}
	p := &polarFinder{m: m}
	for i := range k {
		s, c := math.Sincos(2 * math.Pi * float64(i) / float64(k))
		ax, ay := m.Deflect(c, s)
		p.cos = append(p.cos, c)
		p.sin = append(p.sin, s)
		p.ax = append(p.ax, ax)
		p.ay = append(p.ay, ay)
	}
	return p
}

// g is the cross product (cos φ, sin φ) × (β + α(φ)).
func (p *polarFinder) g(phi, bx, by float64) float64 {
	s, c := math.Sincos(phi)
	ax, ay := p.m.Deflect(c, s)
	return c*(by+ay) - s*(bx+ax)
}

// magSum returns Σ|μ| over the images of (bx, by) that lie inside the grid.
func (p *polarFinder) magSum(gr testGrid, bx, by float64) float64 {
	k := len(p.cos)
	var sum float64
	g0 := p.cos[0]*(by+p.ay[0]) - p.sin[0]*(bx+p.ax[0])
	prev := g0
	for i := range k {
		var next float64
		if i+1 < k {
			next = p.cos[i+1]*(by+p.ay[i+1]) - p.sin[i+1]*(bx+p.ax[i+1])
		} else {
			next = g0
		}
		j := (i + 1) % k
		if (prev < 0) != (next < 0) &&
			(p.cos[i]*(bx+p.ax[i])+p.sin[i]*(by+p.ay[i]) > 0 || p.cos[j]*(bx+p.ax[j])+p.sin[j]*(by+p.ay[j]) > 0) {
			phi := p.root(2*math.Pi*float64(i)/float64(k), 2*math.Pi*float64(i+1)/float64(k), prev, next, bx, by)
			s, c := math.Sincos(phi)
			ax, ay := p.m.Deflect(c, s)
			if r := c*(bx+ax) + s*(by+ay); r > 0 && gr.inside(r*c, r*s) {
				hxx, hxy, hyy := p.m.Hessian(r*c, r*s)
				sum += 1 / math.Abs((1-hxx)*(1-hyy)-hxy*hxy)
			}
		}
		prev = next
	}
	return sum
}

// root refines a sign change of g on [a, b] by the Illinois variant of
// regula falsi until |g| < 1e-13 arcsec.
func (p *polarFinder) root(a, b, fa, fb, bx, by float64) float64 {
	side := 0
	for range 60 {
		c := (a*fb - b*fa) / (fb - fa)
		if b-a < 1e-12 {
			return c
		}
		fc := p.g(c, bx, by)
		switch {
		case fc == 0:
			return c
		case (fc < 0) == (fb < 0):
			b, fb = c, fc
			if side == -1 {
				fa /= 2
			}
			side = -1
		default:
			a, fa = c, fc
			if side == 1 {
				fb /= 2
			}
			side = 1
		}
		if math.Abs(fc) < 1e-13 {
			return c
		}
	}
	return (a + b) / 2
}

// count returns the number of images of (bx, by), wherever they lie.
func (p *polarFinder) count(bx, by float64) int {
	k := len(p.cos)
	n := 0
	gi := func(i int) float64 { return p.cos[i]*(by+p.ay[i]) - p.sin[i]*(bx+p.ax[i]) }
	for i := range k {
		j := (i + 1) % k
		ga, gb := gi(i), gi(j)
		if (ga < 0) == (gb < 0) {
			continue
		}
		phi := p.root(2*math.Pi*float64(i)/float64(k), 2*math.Pi*float64(i+1)/float64(k), ga, gb, bx, by)
		s, c := math.Sincos(phi)
		ax, ay := p.m.Deflect(c, s)
		if c*(bx+ax)+s*(by+ay) > 0 {
			n++
		}
	}
	return n
}

func TestPolarFinderMatchesFindImages(t *testing.T) {
	// The tests' own SIE image counter agrees with the lensmodel image
	// finder on Σ|μ| inside the caustic, between the caustics and outside.
	g := testGrid{n: 512, pixel: 0.04}
	sie := lensmodel.SIE{ThetaE: 1, Q: 0.7, PA: 25}
	pf := newPolarFinder(sie, 2048)
	for _, b := range [][2]float64{{0.03, 0.02}, {0.35, -0.1}, {0.1, 0.4}, {1.2, 0.5}} {
		res, err := lensmodel.FindImages(sie, b[0], b[1], lensmodel.ImageOptions{})
		if err != nil {
			t.Fatal(err)
		}
		var want float64
		for _, im := range res.Images {
			want += math.Abs(im.Mu)
		}
		if n := pf.count(b[0], b[1]); n != len(res.Images) {
			t.Errorf("β = %v: %d images, FindImages %d", b, n, len(res.Images))
		}
		within(t, "Σ|μ|", pf.magSum(g, b[0], b[1]), want, 1e-7)
	}
}
