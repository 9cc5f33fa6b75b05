package lensmodel

import (
	"math"
	"math/rand/v2"
	"runtime"
	"strings"
	"testing"
)

func TestSISImages(t *testing.T) {
	// Schneider, Ehlers & Falco 1992, sect. 8.1.4: a source at β < θ_E
	// behind an SIS has images at β + θ_E and β − θ_E along the line through
	// lens and source, with μ± = 1 ± θ_E/β (the minus image negative, a
	// saddle point). Tolerance: rounding.
	sis := SIE{X: -0.3, Y: 0.2, ThetaE: 1.1, Q: 1, PA: 77}
	l := Lens{sis}
	for _, beta := range []float64{0.05, 0.4, 1.0} {
		ex, ey := math.Sincos(33 * math.Pi / 180)
		for _, im := range []struct{ theta, mu float64 }{
			{beta + sis.ThetaE, 1 + sis.ThetaE/beta},
			{beta - sis.ThetaE, 1 - sis.ThetaE/beta},
		} {
			x, y := sis.X+im.theta*ex, sis.Y+im.theta*ey
			bx, by := l.TraceRay(x, y)
			checkClose(t, "β_x", bx, sis.X+beta*ex, 1e-14, 0)
			checkClose(t, "β_y", by, sis.Y+beta*ey, 1e-14, 0)
			checkClose(t, "μ", l.Magnification(x, y), im.mu, 0, 1e-12)
		}
	}
}

// foreign is a Mass from outside the package (a sheet written out), to test
// the path that evaluates through the interface.
type foreign struct{ k float64 }

func (f foreign) Deflect(x, y float64) (ax, ay float64)        { return f.k * x, f.k * y }
func (f foreign) Kappa(x, y float64) float64                   { return f.k }
func (f foreign) Hessian(x, y float64) (hxx, hxy, hyy float64) { return f.k, 0, f.k }
func (f foreign) Potential(x, y float64) float64               { return f.k / 2 * (x*x + y*y) }

func testLens() Lens {
	return Lens{
		SIE{X: 0.3, Y: 0.1, ThetaE: 0.9, Q: 0.7, PA: 40},
		SIE{X: -0.8, Y: 0.5, ThetaE: 0.4, Q: 0.5, PA: -20, Core: 0.05},
		PointMass{X: 0.5, Y: -0.9, ThetaE: 0.2},
		Shear{Gamma: 0.07, Angle: 110},
		Sheet{KappaExt: 0.03},
		PowerLaw{X: 0.1, ThetaE: 0.3, Q: 0.6, PA: 10, Slope: 2.3},
		NFW{X: 0.2, KappaS: 0.05, Rs: 8, Q: 0.9, PA: 15},
		GNFW{KappaS: 0.02, Rs: 6, Gamma: 1.37, Q: 1},
		Burkert{Y: 0.3, KappaS: 0.02, Rs: 3, Q: 0.95, PA: -40},
		foreign{0.01},
		Lens{SIE{ThetaE: 0.2, Q: 1}},
	}
}

func TestLensSum(t *testing.T) {
	l := testLens()
	x, y := 0.7, -0.2
	var ax, ay, k, hxx, hxy, hyy, p float64
	for _, m := range l {
		dx, dy := m.Deflect(x, y)
		ax, ay = ax+dx, ay+dy
		k += m.Kappa(x, y)
		a, b, c := m.Hessian(x, y)
		hxx, hxy, hyy = hxx+a, hxy+b, hyy+c
		p += m.Potential(x, y)
	}
	gx, gy := l.Deflect(x, y)
	checkClose(t, "α_x", gx, ax, 0, 1e-15)
	checkClose(t, "α_y", gy, ay, 0, 1e-15)
	checkClose(t, "κ", l.Kappa(x, y), k, 0, 1e-15)
	checkClose(t, "ψ", l.Potential(x, y), p, 0, 1e-15)
	a11, a12, a22 := l.Jacobian(x, y)
	checkClose(t, "A11", a11, 1-hxx, 0, 1e-15)
	checkClose(t, "A12", a12, -hxy, 0, 1e-15)
	checkClose(t, "A22", a22, 1-hyy, 0, 1e-15)
	checkClose(t, "μ", l.Magnification(x, y), 1/(a11*a22-a12*a12), 0, 1e-15)
	checkMassDerivatives(t, l, []fdCase{{0.7, -0.2}, {1.5, 1.2}, {-1.3, 0.1}}, 1e-3, 1e-9, 1e-7)
}

// TestLensBatch checks that the batch methods give, bit for bit, the
// point-by-point values, whatever the number of goroutines.
func TestLensBatch(t *testing.T) {
	l := testLens()
	rnd := rand.New(rand.NewPCG(1, 1))
	n := 3*chunkSize + 17
	x, y := make([]float64, n), make([]float64, n)
	for i := range x {
		x[i], y[i] = 4*rnd.Float64()-2, 4*rnd.Float64()-2
	}
	run := func() [][]float64 {
		out := make([][]float64, 9)
		for i := range out {
			out[i] = make([]float64, n)
		}
		l.DeflectPoints(out[0], out[1], x, y)
		l.Trace(out[2], out[3], x, y)
		l.KappaPoints(out[4], x, y)
		l.PotentialPoints(out[5], x, y)
		l.MagnificationPoints(out[6], x, y)
		l.HessianPoints(out[7], out[8], make([]float64, n), x, y)
		return out
	}
	prev := runtime.GOMAXPROCS(1)
	one := run()
	runtime.GOMAXPROCS(4)
	four := run()
	runtime.GOMAXPROCS(prev)
	for j := range one {
		for i := range one[j] {
			if math.Float64bits(one[j][i]) != math.Float64bits(four[j][i]) {
				t.Fatalf("output %d point %d: %v with 1 goroutine, %v with 4", j, i, one[j][i], four[j][i])
			}
		}
	}
	for _, i := range []int{0, 1, chunkSize, n - 1} {
		ax, ay := l.Deflect(x[i], y[i])
		checkClose(t, "batch α_x", one[0][i], ax, 0, 1e-15)
		checkClose(t, "batch α_y", one[1][i], ay, 0, 1e-15)
		checkClose(t, "batch β_x", one[2][i], x[i]-ax, 0, 1e-15)
		checkClose(t, "batch β_y", one[3][i], y[i]-ay, 0, 1e-15)
		checkClose(t, "batch κ", one[4][i], l.Kappa(x[i], y[i]), 0, 1e-15)
		checkClose(t, "batch ψ", one[5][i], l.Potential(x[i], y[i]), 0, 1e-15)
		checkClose(t, "batch μ", one[6][i], l.Magnification(x[i], y[i]), 0, 1e-15)
		hxx, hxy, _ := l.Hessian(x[i], y[i])
		checkClose(t, "batch ψ_xx", one[7][i], hxx, 0, 1e-15)
		checkClose(t, "batch ψ_xy", one[8][i], hxy, 0, 1e-15)
	}
}

func TestLensPrepare(t *testing.T) {
	// The prepared lens gives the same values bit for bit, point by point
	// and in a batch.
	l := testLens()
	p := l.Prepare()
	for _, pt := range [][2]float64{{0.7, -0.2}, {1.5, 1.2}, {-1.3, 0.1}, {0.3, 0.1}} {
		x, y := pt[0], pt[1]
		ax, ay := l.Deflect(x, y)
		px, py := p.Deflect(x, y)
		a, b, c := l.Hessian(x, y)
		pa, pb, pc := p.Hessian(x, y)
		if ax != px || ay != py || a != pa || b != pb || c != pc ||
			l.Kappa(x, y) != p.Kappa(x, y) || l.Potential(x, y) != p.Potential(x, y) {
			t.Errorf("prepared lens differs at (%g, %g)", x, y)
		}
	}
	x, y := []float64{0.7, 1.5}, []float64{-0.2, 1.2}
	bx, by := make([]float64, 2), make([]float64, 2)
	Lens{p}.Trace(bx, by, x, y)
	for i := range x {
		wx, wy := l.TraceRay(x[i], y[i])
		if bx[i] != wx || by[i] != wy {
			t.Errorf("prepared batch trace differs at point %d", i)
		}
	}
}

func TestLensTraceGrid(t *testing.T) {
	// TraceGrid equals Trace on the explicit coordinates, bit for bit.
	l := testLens()
	const nx, ny = 70, 61
	x0, y0, dx, dy := -1.7, -1.5, 0.05, 0.047
	x, y := make([]float64, nx*ny), make([]float64, nx*ny)
	for j := range ny {
		for i := range nx {
			x[j*nx+i], y[j*nx+i] = x0+float64(i)*dx, y0+float64(j)*dy
		}
	}
	wx, wy := make([]float64, nx*ny), make([]float64, nx*ny)
	l.Trace(wx, wy, x, y)
	gx, gy := make([]float64, nx*ny), make([]float64, nx*ny)
	l.TraceGrid(gx, gy, x0, y0, dx, dy, nx, ny)
	for k := range gx {
		if gx[k] != wx[k] || gy[k] != wy[k] {
			t.Fatalf("point %d: TraceGrid (%v, %v), Trace (%v, %v)", k, gx[k], gy[k], wx[k], wy[k])
		}
	}
}

func TestLensBatchAllocs(t *testing.T) {
	l := testLens()[:9]
	n := 10 * chunkSize
	x, y, ax, ay := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	prev := runtime.GOMAXPROCS(1)
	defer runtime.GOMAXPROCS(prev)
	allocs := testing.AllocsPerRun(5, func() { l.Trace(ax, ay, x, y) })
	// The evaluators are set up once per call: one slice and one value per
	// component, plus the closure; nothing per point.
	if allocs > float64(len(l)+3) {
		t.Errorf("Trace of %d points made %v allocations, want ≤ %d", n, allocs, len(l)+3)
	}
}

func TestLensValidate(t *testing.T) {
	if err := testLens().Validate(); err != nil {
		t.Errorf("Validate() = %v, want nil", err)
	}
	bad := Lens{Shear{Gamma: 0.1}, SIE{ThetaE: 1, Q: 2}}
	err := bad.Validate()
	if err == nil || !strings.Contains(err.Error(), "component 1") || !strings.Contains(err.Error(), "q = 2") {
		t.Errorf("Validate() = %v, want an error naming component 1 and q = 2", err)
	}
	defer func() {
		if r := recover(); r == nil {
			t.Error("DeflectPoints with unequal lengths did not panic")
		}
	}()
	bad.DeflectPoints(make([]float64, 2), make([]float64, 3), make([]float64, 2), make([]float64, 2))
}

// TestPreparedTrace checks that the prepared lens traces as the lens does,
// bit for bit.
func TestPreparedTrace(t *testing.T) {
	l := Lens{SIE{X: 0.1, ThetaE: 1, Q: 0.7, PA: 30}, NFW{KappaS: 0.2, Rs: 5, Q: 0.9, PA: 10}, Shear{Gamma: 0.05, Angle: 20}}
	p, ok := l.Prepare().(interface{ Trace(bx, by, x, y []float64) })
	if !ok {
		t.Fatal("the prepared lens has no Trace method")
	}
	n := 3*chunkSize + 13
	x, y := make([]float64, n), make([]float64, n)
	for i := range x {
		x[i], y[i] = float64(i%97)*0.031-1.5, float64(i%89)*0.029-1.3
	}
	ax, ay, bx, by := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	l.Trace(ax, ay, x, y)
	p.Trace(bx, by, x, y)
	for i := range x {
		if ax[i] != bx[i] || ay[i] != by[i] {
			t.Fatalf("point %d: Lens.Trace (%v, %v), prepared (%v, %v)", i, ax[i], ay[i], bx[i], by[i])
		}
	}
}
