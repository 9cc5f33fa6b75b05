package lensmodel

import (
	"math"
	"math/rand/v2"
	"testing"
)

// fastTestPoints returns points about (x0, y0) for comparing the batch
// kernels with the per-point methods: uniform in a box of half-width w,
// log-uniform radii from 1e-9 w to 1e3 w, the centre itself, points on the
// frame's axes (position angle paDeg), far points and tiny offsets.
func fastTestPoints(rnd *rand.Rand, x0, y0, paDeg, w float64, n int) (x, y []float64) {
	add := func(dx, dy float64) {
		x = append(x, x0+dx)
		y = append(y, y0+dy)
	}
	s, c := math.Sincos(paDeg * math.Pi / 180)
	add(0, 0)
	for _, r := range []float64{1e-12, 1e-6, 0.01, 0.3, 1, 2.5, 1e3, 1e6} {
		r *= w
		// Along the major axis (s, c) and the minor axis (−c, s).
		add(r*s, r*c)
		add(-r*s, -r*c)
		add(-r*c, r*s)
		add(r*c, -r*s)
		add(r, 0)
		add(0, -r)
	}
	for len(x) < n/2 {
		add(w*(2*rnd.Float64()-1), w*(2*rnd.Float64()-1))
	}
	for len(x) < n {
		r := w * math.Pow(10, -9+12*rnd.Float64())
		phi := 2 * math.Pi * rnd.Float64()
		add(r*math.Cos(phi), r*math.Sin(phi))
	}
	return x, y
}

// compareFast evaluates m over the points with the assembly kernels and with
// the per-point methods (useAVX off) and returns the largest
// |Δα|/(fastRel |α| + abs) over the points: at most 1 within the bound.
func compareFast(t *testing.T, m Mass, x, y []float64, abs float64) (worst float64, at int) {
	t.Helper()
	n := len(x)
	fx, fy := make([]float64, n), make([]float64, n)
	sx, sy := make([]float64, n), make([]float64, n)
	l := Lens{m}
	l.DeflectPoints(fx, fy, x, y)
	useAVX = false
	l.DeflectPoints(sx, sy, x, y)
	useAVX = haveAVX
	for i := range x {
		d := math.Hypot(fx[i]-sx[i], fy[i]-sy[i])
		if math.IsNaN(d) {
			t.Fatalf("point %d (%g, %g): fast (%g, %g), per point (%g, %g)", i, x[i], y[i], fx[i], fy[i], sx[i], sy[i])
		}
		if r := d / (fastRel*math.Hypot(sx[i], sy[i]) + abs); r > worst {
			worst, at = r, i
		}
	}
	return worst, at
}

// The tested bound between the batch kernels and the per-point methods:
// |Δα| ≤ fastRel |α| + fastAbs θ, θ the component's deflection scale: b/e
// for the SIE (the factor of its atan and atanh, b = θ_E √q), κ_s r_s for
// NFW. fastAbs covers points where α vanishes (the centre of a core) and
// the absolute error ~1e-16 b/e of both paths' α_y' (sie.go), which grows
// as q → 1 until e = sieLogE; elsewhere the two agree to a few units in the
// last place.
const (
	fastRel = 4e-15
	fastAbs = 1e-15
)

func TestFastSIE(t *testing.T) {
	if !haveAVX {
		t.Skip("no AVX2/FMA: the batch path is the per-point one")
	}
	rnd := rand.New(rand.NewPCG(1, 1))
	for _, m := range []SIE{
		{X: 0.3, Y: 0.1, ThetaE: 0.9, Q: 0.7, PA: 40},
		{X: -0.8, Y: 0.5, ThetaE: 0.4, Q: 0.5, PA: -20},
		{X: 0.2, Y: -0.9, ThetaE: 0.3, Q: 0.8, PA: 75},
		{ThetaE: 1, Q: 0.7, PA: 0},
		{ThetaE: 1, Q: 0.7, PA: 90, Core: 0.1},
		{ThetaE: 1.3, Q: 0.05, PA: 12, Core: 0},
		{ThetaE: 1.3, Q: 0.05, PA: 12, Core: 0.02},
		{ThetaE: 2, Q: 0.3, PA: -60, Core: 1},
		{ThetaE: 2, Q: 0.9, PA: 170, Core: 10},
		{ThetaE: 1, Q: 0.998, PA: 33},  // e = 0.063, near the kernel's limit
		{ThetaE: 1, Q: 0.9999, PA: 33}, // per point (e < sieLogE)
		{ThetaE: 1, Q: 1, Core: 0.1},   // per point (sphere)
	} {
		x, y := fastTestPoints(rnd, m.X, m.Y, m.PA, 3*m.ThetaE, 20003)
		e := m.eval()
		worst, at := compareFast(t, m, x, y, fastAbs*math.Max(e.be, m.ThetaE))
		t.Logf("%+v: worst %.3g × bound at (%g, %g)", m, worst, x[at], y[at])
		if worst > 1 {
			t.Errorf("%+v: |Δα| = %.3g × bound at (%g, %g)", m, worst, x[at], y[at])
		}
	}
}

func TestFastNFW(t *testing.T) {
	if !haveAVX {
		t.Skip("no AVX2/FMA: the batch path is the per-point one")
	}
	rnd := rand.New(rand.NewPCG(2, 2))
	for _, m := range []NFW{
		{KappaS: 0.1, Rs: 15, Q: 0.9, PA: 30},
		{KappaS: 0.2, Rs: 5, Q: 1},
		{X: 0.4, Y: -0.3, KappaS: 0.3, Rs: 1, Q: 0.82, PA: -70},
		{KappaS: 1, Rs: 0.2, Q: 0.95, PA: 0},
	} {
		x, y := fastTestPoints(rnd, m.X, m.Y, m.PA, m.Rs, 20003)
		worst, at := compareFast(t, m, x, y, fastAbs*m.KappaS*m.Rs)
		t.Logf("%+v: worst %.3g × bound at (%g, %g)", m, worst, x[at], y[at])
		if worst > 1 {
			t.Errorf("%+v: |Δα| = %.3g × bound at (%g, %g)", m, worst, x[at], y[at])
		}
	}
}

// TestFastPointwise checks that, with the kernels, the per-point deflection
// equals the batch value bit for bit, including NFW groups of eight that
// straddle the kernel's domain R < 0.8 r_s, and slice lengths not a
// multiple of eight.
func TestFastPointwise(t *testing.T) {
	rnd := rand.New(rand.NewPCG(3, 3))
	l := Lens{
		SIE{X: 0.3, Y: 0.1, ThetaE: 0.9, Q: 0.7, PA: 40, Core: 0.02},
		NFW{X: 0.1, KappaS: 0.3, Rs: 1, Q: 0.9, PA: 30},
	}
	n := 4003
	x, y := make([]float64, n), make([]float64, n)
	for i := range x {
		// Radii about the halo's 0.8 r_s = 0.8 so that groups straddle it.
		r, phi := 0.6+0.4*rnd.Float64(), 2*math.Pi*rnd.Float64()
		x[i], y[i] = 0.1+r*math.Cos(phi), r*math.Sin(phi)
	}
	ax, ay := make([]float64, n), make([]float64, n)
	l.DeflectPoints(ax, ay, x, y)
	for i := range x {
		wx, wy := l.Deflect(x[i], y[i])
		if ax[i] != wx || ay[i] != wy {
			t.Fatalf("point %d: batch (%v, %v), per point (%v, %v)", i, ax[i], ay[i], wx, wy)
		}
	}
}

// TestFastShear checks that the shear kernel gives the per-point values
// bit for bit.
func TestFastShear(t *testing.T) {
	rnd := rand.New(rand.NewPCG(4, 4))
	m := Shear{Gamma: 0.07, Angle: 110, X: 0.2, Y: -0.1}
	x, y := fastTestPoints(rnd, 0, 0, 0, 3, 1003)
	ax, ay := make([]float64, len(x)), make([]float64, len(x))
	Lens{m}.DeflectPoints(ax, ay, x, y)
	for i := range x {
		wx, wy := m.Deflect(x[i], y[i])
		if ax[i] != wx || ay[i] != wy {
			t.Fatalf("point %d: batch (%v, %v), per point (%v, %v)", i, ax[i], ay[i], wx, wy)
		}
	}
}

// TestFastMirror checks that the one-point Go forms of the kernels
// (fast_mirror.go), which the per-point methods use, give the batch
// kernels' values bit for bit, centre, axes, far and tiny offsets included.
func TestFastMirror(t *testing.T) {
	if !haveAVX {
		t.Skip("no AVX2/FMA: no kernels")
	}
	rnd := rand.New(rand.NewPCG(5, 5))
	check := func(name string, x, y []float64, batch func(ax, ay, x, y []float64) int, one func(x, y float64) (float64, float64, bool)) {
		t.Helper()
		ax, ay := make([]float64, len(x)), make([]float64, len(x))
		n := batch(ax, ay, x, y)
		for i := range n {
			wx, wy, ok := one(x[i], y[i])
			if !ok {
				continue // outside the NFW kernel's domain
			}
			if math.Float64bits(ax[i]) != math.Float64bits(wx) || math.Float64bits(ay[i]) != math.Float64bits(wy) {
				t.Fatalf("%s, point %d (%g, %g): kernel (%v, %v), Go form (%v, %v)", name, i, x[i], y[i], ax[i], ay[i], wx, wy)
			}
		}
	}
	for _, m := range []SIE{
		{X: 0.3, Y: 0.1, ThetaE: 0.9, Q: 0.7, PA: 40},
		{ThetaE: 1, Q: 0.7, PA: 0},
		{ThetaE: 1.3, Q: 0.05, PA: 12, Core: 0.02},
		{ThetaE: 2, Q: 0.9, PA: 170, Core: 10},
		{ThetaE: 1, Q: 0.998, PA: 33},
	} {
		e := m.eval()
		x, y := fastTestPoints(rnd, m.X, m.Y, m.PA, 3*m.ThetaE, 4000)
		check("sie", x, y, func(ax, ay, x, y []float64) int { return sieFast(&e, ax, ay, x, y) },
			func(x, y float64) (float64, float64, bool) { ax, ay := sieOneGo(&e.kp, x, y); return ax, ay, true })
	}
	for _, m := range []NFW{
		{KappaS: 0.1, Rs: 15, Q: 0.9, PA: 30},
		{X: 0.4, Y: -0.3, KappaS: 0.3, Rs: 1, Q: 0.82, PA: -70},
	} {
		e := m.eval()
		x, y := fastTestPoints(rnd, m.X, m.Y, m.PA, m.Rs/3, 4000)
		// Groups of eight that the kernel refuses are evaluated point by
		// point, through nfwOneGo where it applies.
		check("nfw", x, y, func(ax, ay, x, y []float64) int { return nfwFast(&e, ax, ay, x, y) },
			func(x, y float64) (float64, float64, bool) { return nfwOneGo(&e.kp, x, y) })
	}
}

// TestFastBlocks checks the kernels' passes over blocks of 128 points
// (fast.go) against the one-point Go forms bit for bit: slice lengths about
// multiples of the block, and NFW groups of eight outside the kernel's
// domain R < 0.8 r_s at the start, inside and at the end of blocks, and in
// runs, where the kernel ends its block and returns.
func TestFastBlocks(t *testing.T) {
	if !haveAVX {
		t.Skip("no AVX2/FMA: no kernels")
	}
	rnd := rand.New(rand.NewPCG(6, 6))
	es := SIE{X: 0.3, Y: 0.1, ThetaE: 0.9, Q: 0.7, PA: 40, Core: 0.02}.eval()
	nm := NFW{X: 0.1, KappaS: 0.3, Rs: 1, Q: 0.9, PA: 30}
	en := nm.eval()
	// Points at radii below 0.7 r_s about the halo's centre are inside its
	// kernel's domain (R ≤ √(1 + ε) r ≤ 0.72 r_s for q = 0.9).
	inside := func(n int) (x, y []float64) {
		x, y = make([]float64, n), make([]float64, n)
		for i := range x {
			r, phi := 0.7*math.Sqrt(rnd.Float64()), 2*math.Pi*rnd.Float64()
			x[i], y[i] = nm.X+r*math.Cos(phi), nm.Y+r*math.Sin(phi)
		}
		return x, y
	}
	check := func(name string, x, y []float64, batch func(ax, ay, x, y []float64) int, one func(x, y float64) (float64, float64)) {
		t.Helper()
		ax, ay := make([]float64, len(x)), make([]float64, len(x))
		if n := batch(ax, ay, x, y); n != len(x)&^7 {
			t.Fatalf("%s, %d points: %d done, want %d", name, len(x), n, len(x)&^7)
		}
		for i := range len(x) &^ 7 {
			wx, wy := one(x[i], y[i])
			if math.Float64bits(ax[i]) != math.Float64bits(wx) || math.Float64bits(ay[i]) != math.Float64bits(wy) {
				t.Fatalf("%s, %d points, point %d (%g, %g): batch (%v, %v), one point (%v, %v)", name, len(x), i, x[i], y[i], ax[i], ay[i], wx, wy)
			}
		}
	}
	sieOne := func(x, y float64) (float64, float64) { return sieOneGo(&es.kp, x, y) }
	sieBatch := func(ax, ay, x, y []float64) int { return sieFast(&es, ax, ay, x, y) }
	nfwBatch := func(ax, ay, x, y []float64) int { return nfwFast(&en, ax, ay, x, y) }
	for _, n := range []int{8, 15, 120, 127, 128, 129, 136, 248, 256, 264, 1000} {
		x, y := inside(n)
		check("sie", x, y, sieBatch, sieOne)
		check("nfw inside", x, y, nfwBatch, en.deflect)
	}
	// One point at 2 r_s in each of the groups starting at these indices
	// (blocks of 128 from the start of each kernel call).
	for _, bad := range [][]int{{0}, {8}, {120}, {128}, {0, 8, 16}, {120, 128}, {248, 256, 264}, {504}, {200, 456}} {
		x, y := inside(512)
		for _, g := range bad {
			i := g + rnd.IntN(8)
			x[i], y[i] = nm.X+2, nm.Y
			if _, _, ok := nfwOneGo(&en.kp, x[i], y[i]); ok {
				t.Fatalf("point (%g, %g) inside the NFW kernel's domain", x[i], y[i])
			}
		}
		check("nfw", x, y, nfwBatch, en.deflect)
	}
}
