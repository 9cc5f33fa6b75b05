package nufft

import (
	"fmt"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"runtime"
	"testing"
)

// testPoints returns m random points covering [−π, π]² and beyond (so that
// wrapping is exercised), including points exactly at ±π and at the corners.
func testPoints(rnd *rand.Rand, m int) (x, y []float64) {
	x = make([]float64, m)
	y = make([]float64, m)
	special := []float64{math.Pi, -math.Pi, 0, 3 * math.Pi, -5 * math.Pi / 2, math.Nextafter(math.Pi, 4)}
	for k := range m {
		switch {
		case k < len(special)*len(special):
			x[k] = special[k%len(special)]
			y[k] = special[k/len(special)]
		case k%7 == 0:
			x[k] = (rnd.Float64()*2 - 1) * 20
			y[k] = (rnd.Float64()*2 - 1) * 20
		default:
			x[k] = (rnd.Float64()*2 - 1) * math.Pi
			y[k] = (rnd.Float64()*2 - 1) * math.Pi
		}
	}
	return x, y
}

// testGrid returns an n×n grid of random values with extra power in the edge
// modes m = −n/2 and m = n/2 − 1 of both axes.
func testGrid(rnd *rand.Rand, n int) []complex128 {
	f := randomComplex(rnd, n*n)
	for j := range n {
		for i := range n {
			if i == 0 || i == n-1 || j == 0 || j == n-1 {
				f[j*n+i] *= 5
			}
		}
	}
	return f
}

// The NUFFT against the exact DFT. Barnett, Magland & af Klinteberg (2019,
// §3.1.1 and Fig. 3.1, from memory) find that w = ⌈log10(1/ε)⌉ + 1 with
// β = 2.30 w and σ = 2 gives relative ℓ2 errors at or below ε; the test allows
// 10ε.
func TestNUFFTvsDFT(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	const m = 600
	x, y := testPoints(rnd, m)
	for _, n := range []int{2, 16, 34, 64} {
		f := testGrid(rnd, n)
		c := randomComplex(rnd, m)
		tols := []float64{1e-3, 1e-6, 1e-9, 1e-12}
		if n <= 34 {
			tols = append(tols, MinTol) // w = 15, the widest kernel
		}
		for _, tol := range tols {
			p, err := NewPlan(n, tol)
			if err != nil {
				t.Fatal(err)
			}
			p.SetPoints(x, y)
			for _, sign := range []int{-1, 1} {
				t.Run(fmt.Sprintf("n=%d/tol=%g/sign=%d", n, tol, sign), func(t *testing.T) {
					want2 := DFT2(nil, f, n, x, y, sign)
					e2 := relErr(p.Type2(nil, f, sign), want2)
					e1 := relErr(p.Type1(nil, c, sign), DFT1(nil, c, x, y, n, sign))
					t.Logf("relative ℓ2 errors: type 2 %.3g, type 1 %.3g", e2, e1)
					if e2 > 10*tol {
						t.Errorf("type 2: relative ℓ2 error %.3g > 10ε", e2)
					}
					if e1 > 10*tol {
						t.Errorf("type 1: relative ℓ2 error %.3g > 10ε", e1)
					}
				})
			}
		}
	}
}

// Type2Real agrees with Type2 on the same real grid, and DFT2Real with DFT2.
func TestType2Real(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	const n, m = 32, 300
	x, y := testPoints(rnd, m)
	fr := make([]float64, n*n)
	fc := make([]complex128, n*n)
	for i := range fr {
		fr[i] = rnd.NormFloat64()
		fc[i] = complex(fr[i], 0)
	}
	p, err := NewPlan(n, 1e-9)
	if err != nil {
		t.Fatal(err)
	}
	p.SetPoints(x, y)
	for _, sign := range []int{-1, 1} {
		if e := relErr(p.Type2Real(nil, fr, sign), p.Type2(nil, fc, sign)); e > 1e-14 {
			t.Errorf("sign %d: Type2Real vs Type2: %g", sign, e)
		}
		if e := relErr(DFT2Real(nil, fr, n, x, y, sign), DFT2(nil, fc, n, x, y, sign)); e > 1e-14 {
			t.Errorf("sign %d: DFT2Real vs DFT2: %g", sign, e)
		}
	}
}

// Adjointness: ⟨T2(s) f, c⟩ = ⟨f, T1(−s) c⟩ to 1e-12 relative, for the fast
// transform (it spreads with the same kernel values it interpolates with) and
// for the DFT.
func TestAdjoint(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	const n, m = 48, 1000
	x, y := testPoints(rnd, m)
	f := testGrid(rnd, n)
	c := randomComplex(rnd, m)
	for _, tol := range []float64{1e-3, 1e-12} {
		p, err := NewPlan(n, tol)
		if err != nil {
			t.Fatal(err)
		}
		p.SetPoints(x, y)
		for _, sign := range []int{-1, 1} {
			l := dot(p.Type2(nil, f, sign), c)
			r := dot(f, p.Type1(nil, c, -sign))
			if e := cmplx.Abs(l-r) / cmplx.Abs(l); e > 1e-12 {
				t.Errorf("tol=%g sign=%d: NUFFT ⟨T2 f, c⟩ = %v, ⟨f, T1 c⟩ = %v (rel %g)", tol, sign, l, r, e)
			}
		}
	}
	for _, sign := range []int{-1, 1} {
		l := dot(DFT2(nil, f, n, x, y, sign), c)
		r := dot(f, DFT1(nil, c, x, y, n, -sign))
		if e := cmplx.Abs(l-r) / cmplx.Abs(l); e > 1e-12 {
			t.Errorf("sign=%d: DFT ⟨T2 f, c⟩ = %v, ⟨f, T1 c⟩ = %v (rel %g)", sign, l, r, e)
		}
	}
}

// dot returns ⟨a, b⟩ = Σ conj(a_i) b_i.
func dot(a, b []complex128) complex128 {
	var s complex128
	for i := range a {
		s += cmplx.Conj(a[i]) * b[i]
	}
	return s
}

// Two runs give bit-identical results, and so do runs with different numbers
// of goroutines.
func TestDeterministic(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	const n, m = 64, 20000
	x, y := testPoints(rnd, m)
	f := testGrid(rnd, n)
	c := randomComplex(rnd, m)
	p, err := NewPlan(n, 1e-9)
	if err != nil {
		t.Fatal(err)
	}
	p.SetPoints(x, y)
	for _, avx := range []bool{haveAVX, false} {
		p.avx = avx
		testDeterministic(t, p, f, c, x, y)
	}
}

func testDeterministic(t *testing.T, p *Plan, f, c []complex128, x, y []float64) {
	a2 := p.Type2(nil, f, -1)
	a1 := p.Type1(nil, c, 1)
	for _, procs := range []int{1, 3, 8} {
		old := runtime.GOMAXPROCS(procs)
		b2 := p.Type2(nil, f, -1)
		b1 := p.Type1(nil, c, 1)
		d1 := DFT1(nil, c[:200], x[:200], y[:200], 16, 1)
		runtime.GOMAXPROCS(old)
		for k := range a2 {
			if a2[k] != b2[k] {
				t.Fatalf("GOMAXPROCS=%d: type 2 value %d differs: %v vs %v", procs, k, a2[k], b2[k])
			}
		}
		for k := range a1 {
			if a1[k] != b1[k] {
				t.Fatalf("GOMAXPROCS=%d: type 1 value %d differs: %v vs %v", procs, k, a1[k], b1[k])
			}
		}
		ref := DFT1(nil, c[:200], x[:200], y[:200], 16, 1)
		for k := range ref {
			if ref[k] != d1[k] {
				t.Fatalf("GOMAXPROCS=%d: DFT1 value %d differs", procs, k)
			}
		}
	}
}

// The DFT against hand-computed values: a single mode and a single point give
// exp(s·i(m1 x + m2 y)) (definition of the package comment).
func TestDFTWorkedCase(t *testing.T) {
	const n = 4
	x, y := []float64{0.3}, []float64{-1.1}
	for _, tc := range []struct {
		i, j, sign int
	}{
		{0, 0, -1}, {3, 1, 1}, {2, 2, -1}, {1, 3, 1},
	} {
		f := make([]complex128, n*n)
		f[tc.j*n+tc.i] = 1
		m1, m2 := float64(tc.i-n/2), float64(tc.j-n/2)
		want := cmplx.Exp(complex(0, float64(tc.sign)*(m1*x[0]+m2*y[0])))
		got := DFT2(nil, f, n, x, y, tc.sign)[0]
		if cmplx.Abs(got-want) > 1e-15 {
			t.Errorf("DFT2 mode (%d,%d) sign %d: %v, want %v", tc.i, tc.j, tc.sign, got, want)
		}
		g := DFT1(nil, []complex128{1}, x, y, n, tc.sign)[tc.j*n+tc.i]
		if cmplx.Abs(g-want) > 1e-15 {
			t.Errorf("DFT1 mode (%d,%d) sign %d: %v, want %v", tc.i, tc.j, tc.sign, g, want)
		}
	}
	// Worked by hand: n = 2, f = [1 2; 3 4] (modes −1, 0), x = π/2, y = π,
	// sign +1: c = 1·e^{i(−π/2−π)} + 2·e^{−iπ} + 3·e^{−iπ/2} + 4 = 2 − 2i.
	got := DFT2(nil, []complex128{1, 2, 3, 4}, 2, []float64{math.Pi / 2}, []float64{math.Pi}, 1)[0]
	if cmplx.Abs(got-complex(2, -2)) > 1e-14 {
		t.Errorf("worked case: %v, want 2−2i", got)
	}
}

func TestNewPlanErrors(t *testing.T) {
	for _, tc := range []struct {
		n   int
		tol float64
	}{{3, 1e-6}, {0, 1e-6}, {16, 0}, {16, 1e-16}, {16, 0.5}, {16, math.NaN()}} {
		if _, err := NewPlan(tc.n, tc.tol); err == nil {
			t.Errorf("NewPlan(%d, %g): no error", tc.n, tc.tol)
		}
	}
}

// The assembly kernels (where the CPU has AVX2 and FMA) and the portable
// loops compute the same sums; they differ only by rounding (fused
// multiply–adds), so they agree to 1e-14 relative.
func TestKernelPaths(t *testing.T) {
	if !haveAVX {
		t.Skip("no AVX2/FMA on this CPU: only the portable loops run")
	}
	rnd := rand.New(rand.NewPCG(1, 1))
	const n, m = 32, 3000
	x, y := testPoints(rnd, m)
	f := testGrid(rnd, n)
	c := randomComplex(rnd, m)
	for w := minWidth; w <= maxWidth; w++ {
		tol := math.Pow(10, float64(1-w))
		if tol < MinTol || tol > MaxTol {
			continue
		}
		p, err := NewPlan(n, tol)
		if err != nil {
			t.Fatal(err)
		}
		if p.Width() != w {
			t.Fatalf("tol %g: width %d, want %d", tol, p.Width(), w)
		}
		p.SetPoints(x, y)
		a2, a1 := p.Type2(nil, f, 1), p.Type1(nil, c, -1)
		p.avx = false
		b2, b1 := p.Type2(nil, f, 1), p.Type1(nil, c, -1)
		if e := relErr(a2, b2); e > 1e-14 {
			t.Errorf("w=%d: type 2 assembly vs portable: %g", w, e)
		}
		if e := relErr(a1, b1); e > 1e-14 {
			t.Errorf("w=%d: type 1 assembly vs portable: %g", w, e)
		}
	}
}

func TestSetPointsNotFinite(t *testing.T) {
	p, err := NewPlan(16, 1e-6)
	if err != nil {
		t.Fatal(err)
	}
	for _, v := range []float64{math.NaN(), math.Inf(1), math.Inf(-1)} {
		func() {
			defer func() {
				if r := recover(); r == nil {
					t.Errorf("SetPoints with %g: no panic", v)
				}
			}()
			p.SetPoints([]float64{0, v}, []float64{0, 0})
		}()
	}
}

// The benchmark size n = 256 against the DFT, for a few thousand points
// (relative ℓ2 error ≤ 10ε, as in TestNUFFTvsDFT).
func TestNUFFTvsDFTLarge(t *testing.T) {
	if testing.Short() {
		t.Skip("n = 256 DFT reference is slow")
	}
	rnd := rand.New(rand.NewPCG(2, 2))
	const n, m = 256, 3000
	x, y := testPoints(rnd, m)
	f := testGrid(rnd, n)
	c := randomComplex(rnd, m)
	want2 := DFT2(nil, f, n, x, y, -1)
	want1 := DFT1(nil, c, x, y, n, 1)
	for _, tol := range []float64{1e-6, 1e-12} {
		p, err := NewPlan(n, tol)
		if err != nil {
			t.Fatal(err)
		}
		p.SetPoints(x, y)
		e2 := relErr(p.Type2(nil, f, -1), want2)
		e1 := relErr(p.Type1(nil, c, 1), want1)
		t.Logf("tol %g: relative ℓ2 errors: type 2 %.3g, type 1 %.3g", tol, e2, e1)
		if e2 > 10*tol || e1 > 10*tol {
			t.Errorf("tol %g: errors %.3g (type 2), %.3g (type 1) > 10ε", tol, e2, e1)
		}
	}
}

// AddType1 over chunks of the points, then FinishType1, equals Type1 over all
// of them (to rounding: the terms arrive in a different order), also when a
// Type2 and a Type1 call come in between; ResetType1 starts again from zero.
func TestAddType1(t *testing.T) {
	rnd := rand.New(rand.NewPCG(1, 1))
	const n, m = 32, 3000
	x, y := testPoints(rnd, m)
	c := randomComplex(rnd, m)
	f := testGrid(rnd, n)
	p, err := NewPlan(n, 1e-9)
	if err != nil {
		t.Fatal(err)
	}
	for i, v := range p.FinishType1(nil, 1) {
		if v != 0 {
			t.Fatalf("empty accumulator: value %d is %v, want 0", i, v)
		}
	}
	p.SetPoints(x, y)
	want := p.Type1(nil, c, 1)
	for _, chunk := range [][2]int{{0, 1000}, {1000, 1001}, {1001, 2500}, {2500, m}} {
		lo, hi := chunk[0], chunk[1]
		p.SetPoints(x[lo:hi], y[lo:hi])
		p.AddType1(c[lo:hi])
		p.Type2(nil, f, -1)
		p.Type1(nil, c[lo:hi], 1)
	}
	got := p.FinishType1(nil, 1)
	if e := relErr(got, want); e > 1e-13 {
		t.Errorf("chunked accumulation vs Type1: %g", e)
	}
	again := p.FinishType1(nil, 1)
	for i := range got {
		if got[i] != again[i] {
			t.Fatalf("FinishType1 changed the accumulator")
		}
	}
	p.ResetType1()
	p.AddType1(c[2500:])
	if e := relErr(p.FinishType1(nil, -1), p.Type1(nil, c[2500:], -1)); e > 1e-14 {
		t.Errorf("after ResetType1: %g", e)
	}
}
