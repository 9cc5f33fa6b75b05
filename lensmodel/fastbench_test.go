package lensmodel

import "testing"

// BenchmarkFastKernels times the batch kernels alone over one chunk of
// points resident in cache, assembly and per-point formulas.
func BenchmarkFastKernels(b *testing.B) {
	x, y := benchGrid(64, 1)
	x, y = x[:chunkSize], y[:chunkSize]
	ax, ay := make([]float64, len(x)), make([]float64, len(x))
	for _, tc := range []struct {
		name string
		m    preparer
	}{
		{"sie", SIE{ThetaE: 1, Q: 0.7, PA: 30}},
		{"nfw-elliptical", NFW{KappaS: 0.2, Rs: 15, Q: 0.9, PA: 30}},
	} {
		e := tc.m.prepare()
		for _, fast := range []bool{true, false} {
			name := tc.name + "/portable"
			if fast {
				name = tc.name + "/avx"
				if !haveAVX {
					continue
				}
			}
			b.Run(name, func(b *testing.B) {
				useAVX = fast
				defer func() { useAVX = haveAVX }()
				c0 := cpuNow()
				for b.Loop() {
					e.addDeflect(ax, ay, x, y)
				}
				b.ReportMetric(float64(cpuNow()-c0)/float64(b.N)/float64(len(x)), "cpu-ns/point")
			})
		}
	}
}

// BenchmarkFastPointwise times the prepared composite lens point by point
// (image finding, contour tracing) with and without the kernels.
func BenchmarkFastPointwise(b *testing.B) {
	x, y := benchGrid(64, 1)
	p := compositeLens().Prepare()
	for _, fast := range []bool{true, false} {
		name := "portable"
		if fast {
			name = "avx"
			if !haveAVX {
				continue
			}
		}
		b.Run(name, func(b *testing.B) {
			useAVX = fast
			defer func() { useAVX = haveAVX }()
			var s float64
			c0 := cpuNow()
			for b.Loop() {
				for i := range x {
					ax, _ := p.Deflect(x[i], y[i])
					s += ax
				}
			}
			b.ReportMetric(float64(cpuNow()-c0)/float64(b.N)/float64(len(x)), "cpu-ns/point")
			if s == 0 {
				b.Fatal("no deflection")
			}
		})
	}
}
