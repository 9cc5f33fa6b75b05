package source

import (
	"fmt"
	"math"
	"os"
	"runtime"
	"testing"

	"deflect/lensmodel"

	"gonum.org/v1/gonum/mathext"
)

// testGrid is the sky grid of uv.Grid (conventions.md): pixel (i, j) at
// x = X0 − (i − N/2)·Pixel, y = Y0 + (j − N/2)·Pixel, k = j·N + i.
type testGrid struct {
	n      int
	pixel  float64
	x0, y0 float64
}

func (g testGrid) Size() int          { return g.n }
func (g testGrid) PixelSize() float64 { return g.pixel }
func (g testGrid) Centre(k int) (x, y float64) {
	i, j := k%g.n, k/g.n
	return g.x0 - float64(i-g.n/2)*g.pixel, g.y0 + float64(j-g.n/2)*g.pixel
}

// inside reports whether (x, y) lies in the union of the grid's pixels,
// fractional pixel coordinates i, j ∈ [−½, N − ½).
func (g testGrid) inside(x, y float64) bool {
	h := float64(g.n / 2)
	i := h - (x-g.x0)/g.pixel
	j := h + (y-g.y0)/g.pixel
	top := float64(g.n) - 0.5
	return i >= -0.5 && i < top && j >= -0.5 && j < top
}

func sum(v []float64) float64 {
	var s float64
	for _, x := range v {
		s += x
	}
	return s
}

func TestRenderNoLensConservesFlux(t *testing.T) {
	g := testGrid{n: 256, pixel: 0.05}
	for _, tc := range []struct {
		name string
		c    Component
	}{
		// 1.3e-5 of an n = 4 profile's flux lies beyond 128 R_e (the
		// grid edge), far below the tolerance.
		{"Sérsic n=4 compact", Sersic{X: 0.13, Y: -0.07, Flux: 1, Reff: 0.05, N: 4, Q: 0.7, PA: 30}},
		{"Sérsic n=1", Sersic{X: -0.4, Y: 0.3, Flux: 2, Reff: 0.3, N: 1, Q: 0.5, PA: -10}},
		{"Sérsic n=0.5 sub-pixel", Sersic{Flux: 1, Reff: 0.01, N: 0.5, Q: 0.4, PA: 80}},
		{"Gaussian", Gaussian{X: 0.02, Y: 0.01, Flux: 1, FWHM: 0.08, Q: 0.3, PA: 45}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			img, _ := Render(nil, g, nil, Source{Components: []Component{tc.c}}, RenderOptions{})
			within(t, "rendered flux", sum(img), tc.c.TotalFlux(), 5e-4)
		})
	}
}

func TestRenderOrientation(t *testing.T) {
	// A compact Gaussian 0.5" east and 0.25" north of the centre lands in
	// pixel i = N/2 − 10, j = N/2 + 5 (x decreases with i, conventions.md).
	g := testGrid{n: 64, pixel: 0.05}
	src := Source{Components: []Component{Gaussian{X: 0.5, Y: 0.25, Flux: 1, FWHM: 0.02, Q: 1}}}
	img, _ := Render(nil, g, nil, src, RenderOptions{})
	best := 0
	for k := range img {
		if img[k] > img[best] {
			best = k
		}
	}
	if i, j := best%64, best/64; i != 22 || j != 37 {
		t.Errorf("peak at pixel (%d, %d), want (22, 37)", i, j)
	}
}

func TestRenderDeterministic(t *testing.T) {
	g := testGrid{n: 64, pixel: 0.06}
	lens := lensmodel.Lens{lensmodel.SIE{ThetaE: 1, Q: 0.7, PA: 20}, lensmodel.Shear{Gamma: 0.05, Angle: 10}}
	src := Source{Components: []Component{Sersic{X: 0.05, Y: 0.02, Flux: 1, Reff: 0.1, N: 2, Q: 0.8}}}
	prev := runtime.GOMAXPROCS(1)
	a, _ := Render(nil, g, lens, src, RenderOptions{})
	runtime.GOMAXPROCS(4)
	b, _ := Render(nil, g, lens, src, RenderOptions{})
	runtime.GOMAXPROCS(prev)
	for k := range a {
		if a[k] != b[k] {
			t.Fatalf("pixel %d: %v with 1 goroutine, %v with 4", k, a[k], b[k])
		}
	}
}

// lightQuadrature integrates M over the light of a Sérsic or Gaussian
// source: Σ F/(nu·nt) M(β(u, t)) on the midpoint grid of the enclosed-light
// fraction u and the eccentric anomaly t, where β(u, t) lies on the ellipse
// that encloses the fraction u of the flux. The light in each (u, t) cell is
// the same, so this is the source-plane integral ∫ I(β) M(β) d²β.
func lightQuadrature(c Component, m func(bx, by float64) float64, nu, nt int) float64 {
	var x0, y0, q, pa float64
	var radius func(u float64) float64
	switch c := c.(type) {
	case Sersic:
		x0, y0, q, pa = c.X, c.Y, c.Q, c.PA
		b := SersicB(c.N)
		radius = func(u float64) float64 { return c.Reff * math.Pow(mathext.GammaIncRegInv(2*c.N, u)/b, c.N) }
	case Gaussian:
		x0, y0, q, pa = c.X, c.Y, c.Q, c.PA
		sig := c.FWHM / fwhmPerSigma
		radius = func(u float64) float64 { return sig * math.Sqrt(-2*math.Log1p(-u)) }
	default:
		panic("lightQuadrature: unsupported component")
	}
	sp, cp := math.Sincos(pa * math.Pi / 180)
	var total float64
	for i := range nu {
		r := radius((float64(i) + 0.5) / float64(nu))
		var ring float64
		for k := range nt {
			s, co := math.Sincos(2 * math.Pi * (float64(k) + 0.5) / float64(nt))
			xp, yp := r*co, q*r*s
			ring += m(x0+xp*sp-yp*cp, y0+xp*cp+yp*sp)
		}
		total += ring
	}
	return c.TotalFlux() * total / float64(nu*nt)
}

// sisMagSum returns Σ|μ| over the images inside the grid of a source at
// (bx, by) behind an SIS of Einstein radius te at the origin: images at
// (β + θ_E) β̂ with |μ| = 1 + θ_E/β, and for β < θ_E at −(θ_E − β) β̂ with
// |μ| = θ_E/β − 1 (Schneider, Ehlers & Falco 1992, sect. 8.1.4).
func sisMagSum(g testGrid, te, bx, by float64) float64 {
	b := math.Hypot(bx, by)
	ux, uy := bx/b, by/b
	var m float64
	if r := b + te; g.inside(r*ux, r*uy) {
		m += 1 + te/b
	}
	if r := te - b; r > 0 && g.inside(-r*ux, -r*uy) {
		m += te/b - 1
	}
	return m
}

func TestRenderSISMagnifiedFlux(t *testing.T) {
	g := testGrid{n: 128, pixel: 0.04}
	lens := lensmodel.SIE{ThetaE: 1, Q: 1}
	for _, tc := range []struct {
		name string
		c    Component
	}{
		{"n=1 over the caustic", Sersic{X: 0.05, Y: -0.03, Flux: 1, Reff: 0.15, N: 1, Q: 0.7, PA: 30}},
		{"n=4 over the caustic", Sersic{X: 0.08, Y: 0.05, Flux: 1, Reff: 0.1, N: 4, Q: 0.8, PA: -40}},
		{"n=4 off the caustic", Sersic{X: 0.5, Y: 0.3, Flux: 1, Reff: 0.05, N: 4, Q: 0.6, PA: 70}},
		{"Gaussian", Gaussian{X: 0.3, Y: -0.2, Flux: 1, FWHM: 0.1, Q: 0.5, PA: 10}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			want := lightQuadrature(tc.c, func(x, y float64) float64 { return sisMagSum(g, 1, x, y) }, 2000, 1000)
			img, st := Render(nil, g, lens, Source{Components: []Component{tc.c}}, RenderOptions{})
			got := sum(img)
			t.Logf("rendered %.6f, source-plane quadrature %.6f, rel diff %.2g, %d rays, depth %d", got, want, got/want-1, st.Rays, st.MaxDepth)
			within(t, "magnified flux", got, want, 1e-3)
		})
	}
}

func TestRenderSIEMagnifiedFlux(t *testing.T) {
	g := testGrid{n: 128, pixel: 0.04}
	sie := lensmodel.SIE{ThetaE: 1, Q: 0.7, PA: 25}
	pf := newPolarFinder(sie, 2048)
	mag := func(x, y float64) float64 { return pf.magSum(g, x, y) }
	long := os.Getenv("DEFLECT_LONG_TESTS") != ""
	for _, tc := range []struct {
		name string
		long bool
		c    Component
	}{
		{"n=1 inside the astroid", false, Sersic{X: 0.04, Y: 0.03, Flux: 1, Reff: 0.1, N: 1, Q: 0.8, PA: 60}},
		{"n=4 inside the astroid", false, Sersic{X: -0.03, Y: 0.05, Flux: 1, Reff: 0.08, N: 4, Q: 0.7, PA: 10}},
		{"n=1 between the caustics", true, Sersic{X: 0.35, Y: -0.1, Flux: 1, Reff: 0.05, N: 1, Q: 0.9, PA: 0}},
		{"n=4 between the caustics", false, Sersic{X: 0.1, Y: 0.4, Flux: 1, Reff: 0.05, N: 4, Q: 0.6, PA: -30}},
		{"n=1 outside the caustics", false, Sersic{X: 1.0, Y: 0.6, Flux: 1, Reff: 0.05, N: 1, Q: 0.7, PA: 45}},
		{"n=4 outside the caustics", true, Sersic{X: -0.9, Y: -0.7, Flux: 1, Reff: 0.04, N: 4, Q: 0.8, PA: 80}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if tc.long && !long {
				t.Skip("set DEFLECT_LONG_TESTS=1 for this case")
			}
			// The caustics make Σ|μ| singular (∝ d^{-1/2} at folds); the
			// midpoint rule on this grid is good to about 0.2%.
			want := lightQuadrature(tc.c, mag, 500, 250)
			img, st := Render(nil, g, sie, Source{Components: []Component{tc.c}}, RenderOptions{})
			got := sum(img)
			t.Logf("rendered %.6f, source-plane quadrature %.6f, rel diff %.2g, %d rays, depth %d", got, want, got/want-1, st.Rays, st.MaxDepth)
			within(t, "magnified flux", got, want, 5e-3)
		})
	}
}

func TestPolarFinderSIS(t *testing.T) {
	// The test's own image counter reproduces the SIS magnification sum.
	g := testGrid{n: 128, pixel: 0.04}
	pf := newPolarFinder(lensmodel.SIE{ThetaE: 1, Q: 1}, 4096)
	for _, b := range [][2]float64{{0.1, 0.05}, {0.5, -0.3}, {1.3, 0.2}, {-2, 1}} {
		t.Run(fmt.Sprint(b), func(t *testing.T) {
			within(t, "Σ|μ|", pf.magSum(g, b[0], b[1]), sisMagSum(g, 1, b[0], b[1]), 1e-8)
		})
	}
}

// TestRenderPixelTolerance checks each pixel's flux against a rendering a
// thousand times tighter: the error of a pixel, accepted from its centre ray
// alone or refined, stays within a few times its tolerance
// tol·max(|F_pix|, tol·F/N²) (common practice for adaptive quadrature: the
// error estimate is good to a small factor), with pixels accepted from
// their centre ray alone and with every pixel refined.
func TestRenderPixelTolerance(t *testing.T) {
	g := testGrid{n: 64, pixel: 0.05}
	lens := lensmodel.Lens{lensmodel.SIE{X: 0.02, ThetaE: 0.8, Q: 0.75, PA: 35}, lensmodel.Shear{Gamma: 0.05, Angle: 110}}
	for _, tc := range []struct {
		name string
		c    Component
	}{
		{"Sérsic n=1", Sersic{X: 0.05, Y: 0.04, Flux: 4e-3, Reff: 0.12, N: 1, Q: 0.7, PA: -20}},
		{"Sérsic n=2.5", Sersic{X: -0.1, Y: 0.06, Flux: 4e-3, Reff: 0.08, N: 2.5, Q: 0.6, PA: 40}},
		{"Gaussian", Gaussian{X: 0.2, Y: -0.1, Flux: 1e-3, FWHM: 0.15, Q: 0.5, PA: 10}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			src := Source{Components: []Component{tc.c}}
			const tol = 1e-2
			ref, _ := Render(nil, g, lens, src, RenderOptions{Tol: tol / 100})
			floor := tol * tc.c.TotalFlux() / float64(g.n*g.n)
			for _, one := range []bool{true, false} {
				oneRay = one
				img, st := Render(nil, g, lens, src, RenderOptions{Tol: tol})
				oneRay = true
				var worst float64
				for k := range img {
					worst = max(worst, math.Abs(img[k]-ref[k])/(tol*max(math.Abs(ref[k]), floor)))
				}
				rays := float64(st.Rays) / float64(g.n*g.n)
				t.Logf("one-ray pixels %v: worst pixel error %.2f × its tolerance, %.2f rays per pixel, total flux rel diff %.2g", one, worst, rays, sum(img)/sum(ref)-1)
				if worst > 3 {
					t.Errorf("one-ray pixels %v: worst pixel error %.2f × its tolerance, want ≤ 3", one, worst)
				}
				within(t, "total flux", sum(img), sum(ref), tol/10)
			}
		})
	}
}

// TestRenderOneRay checks that on a grid where the lensed source covers a
// small part of the field, as in a fit, most pixels take their centre ray
// alone, and that the image stays within the tolerance of one refined
// everywhere.
func TestRenderOneRay(t *testing.T) {
	g := testGrid{n: 128, pixel: 0.04}
	lens := lensmodel.Lens{lensmodel.SIE{X: 0.02, ThetaE: 0.8, Q: 0.75, PA: 35}, lensmodel.Shear{Gamma: 0.05, Angle: 110}}
	c := Sersic{X: 0.05, Y: 0.04, Flux: 4e-3, Reff: 0.12, N: 1, Q: 0.7, PA: -20}
	src := Source{Components: []Component{c}}
	const tol = 3e-2
	img, st := Render(nil, g, lens, src, RenderOptions{Tol: tol})
	oneRay = false
	all, stAll := Render(nil, g, lens, src, RenderOptions{Tol: tol})
	oneRay = true
	rays, raysAll := float64(st.Rays)/float64(g.n*g.n), float64(stAll.Rays)/float64(g.n*g.n)
	t.Logf("%.2f rays per pixel, %.2f refining every pixel", rays, raysAll)
	if rays > 2 || raysAll < 5 {
		t.Errorf("%.2f rays per pixel (want ≤ 2), %.2f refining every pixel (want ≥ 5: centre and four quarters)", rays, raysAll)
	}
	within(t, "total flux", sum(img), sum(all), tol/10)
}
