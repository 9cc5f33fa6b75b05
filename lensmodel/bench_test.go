package lensmodel

import (
	"syscall"
	"testing"
	"time"
)

// cpuNow returns the process's CPU time (all threads), so that benchmarks on
// a shared machine can report CPU milliseconds per operation beside wall
// time.
func cpuNow() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// benchGrid returns the points of an n×n grid of pixel 4/n arcsec about the
// origin with sub×sub sub-pixels each.
func benchGrid(n, sub int) (x, y []float64) {
	pix := 4.0 / float64(n)
	d := pix / float64(sub)
	m := n * sub
	x, y = make([]float64, 0, m*m), make([]float64, 0, m*m)
	for j := range m {
		for i := range m {
			x = append(x, -2+(float64(i)+0.5)*d)
			y = append(y, -2+(float64(j)+0.5)*d)
		}
	}
	return x, y
}

// compositeLens is the benchmark lens of issue 4: three galaxies, a group
// halo and an external shear.
func compositeLens() Lens {
	return Lens{
		SIE{X: 0.3, Y: 0.1, ThetaE: 0.9, Q: 0.7, PA: 40},
		SIE{X: -0.8, Y: 0.5, ThetaE: 0.4, Q: 0.5, PA: -20},
		SIE{X: 0.2, Y: -0.9, ThetaE: 0.3, Q: 0.8, PA: 75},
		NFW{KappaS: 0.1, Rs: 15, Q: 0.9, PA: 30},
		Shear{Gamma: 0.05, Angle: 110},
	}
}

// BenchmarkDeflect measures the deflection per point of each profile over a
// 256² grid (ns/point), and of the composite lens over 256² pixels with 4×4
// sub-pixels (ms per call). Run with -cpu 1 for the single-core figures.
func BenchmarkDeflect(b *testing.B) {
	profiles := []struct {
		name string
		m    Mass
	}{
		{"point", PointMass{ThetaE: 1}},
		{"sis", SIE{ThetaE: 1, Q: 1}},
		{"sie", SIE{ThetaE: 1, Q: 0.7, PA: 30}},
		{"sie-core", SIE{ThetaE: 1, Q: 0.7, PA: 30, Core: 0.1}},
		{"powerlaw", PowerLaw{ThetaE: 1, Q: 0.7, PA: 30, Slope: 2.2}},
		{"nfw", NFW{KappaS: 0.2, Rs: 5, Q: 1}},
		{"nfw-elliptical", NFW{KappaS: 0.2, Rs: 5, Q: 0.9, PA: 30}},
		{"gnfw", GNFW{KappaS: 0.2, Rs: 5, Gamma: 1.3, Q: 1}},
		{"burkert", Burkert{KappaS: 0.2, Rs: 5, Q: 1}},
		{"shear", Shear{Gamma: 0.1, Angle: 20}},
		{"sheet", Sheet{KappaExt: 0.1}},
	}
	x, y := benchGrid(256, 1)
	ax, ay := make([]float64, len(x)), make([]float64, len(x))
	for _, p := range profiles {
		b.Run(p.name, func(b *testing.B) {
			l := Lens{p.m}
			l.DeflectPoints(ax, ay, x, y) // builds GNFW and Burkert tables
			b.ReportAllocs()
			c0 := cpuNow()
			for b.Loop() {
				l.DeflectPoints(ax, ay, x, y)
			}
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(len(x)), "ns/point")
			b.ReportMetric(float64(cpuNow()-c0)/float64(b.N)/float64(len(x)), "cpu-ns/point")
		})
	}
	b.Run("composite", func(b *testing.B) {
		x, y := benchGrid(256, 4)
		ax, ay := make([]float64, len(x)), make([]float64, len(x))
		l := compositeLens()
		b.ReportAllocs()
		c0 := cpuNow()
		for b.Loop() {
			l.DeflectPoints(ax, ay, x, y)
		}
		b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(len(x)), "ns/point")
		b.ReportMetric(float64(b.Elapsed().Nanoseconds())/1e6/float64(b.N), "ms/call")
		b.ReportMetric(float64(cpuNow()-c0)/1e6/float64(b.N), "cpu-ms/op")
	})
	b.Run("composite-grid", func(b *testing.B) {
		// The same points traced by TraceGrid, without coordinate slices.
		const m = 256 * 4
		bx, by := make([]float64, m*m), make([]float64, m*m)
		l := compositeLens()
		d := 4.0 / m
		b.ReportAllocs()
		c0 := cpuNow()
		for b.Loop() {
			l.TraceGrid(bx, by, -2+d/2, -2+d/2, d, d, m, m)
		}
		b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(m*m), "ns/point")
		b.ReportMetric(float64(b.Elapsed().Nanoseconds())/1e6/float64(b.N), "ms/call")
		b.ReportMetric(float64(cpuNow()-c0)/1e6/float64(b.N), "cpu-ms/op")
	})
}

// BenchmarkMagnification measures the Hessian-based magnification of the
// composite lens per point.
func BenchmarkMagnification(b *testing.B) {
	x, y := benchGrid(256, 1)
	mu := make([]float64, len(x))
	l := compositeLens()
	b.ReportAllocs()
	for b.Loop() {
		l.MagnificationPoints(mu, x, y)
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(len(x)), "ns/point")
}

// BenchmarkDeflectPointwise compares point-by-point evaluation of the
// composite lens as a Lens (constants recomputed per call) and as the
// result of Lens.Prepare.
func BenchmarkDeflectPointwise(b *testing.B) {
	x, y := benchGrid(64, 1)
	l := compositeLens()
	for _, tc := range []struct {
		name string
		m    Mass
	}{{"lens", l}, {"prepared", l.Prepare()}} {
		b.Run(tc.name, func(b *testing.B) {
			var s float64
			for b.Loop() {
				for i := range x {
					ax, _ := tc.m.Deflect(x[i], y[i])
					s += ax
				}
			}
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(len(x)), "ns/point")
			if s == 0 {
				b.Fatal("no deflection")
			}
		})
	}
}
