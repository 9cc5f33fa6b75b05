package plots

import (
	"math"
	"testing"
)

func TestEmpiricalFalseAlarm(t *testing.T) {
	null := make([]float64, 100)
	for k := range null {
		null[k] = float64(k)
	}
	// 95…99 are ≥ 95: p = (1 + 5)/(1 + 100) (North, Curtis & Sham 2002,
	// eq. 1).
	p, n := EmpiricalFalseAlarm(null, 95)
	if n != 5 || math.Abs(p-6.0/101) > 1e-15 {
		t.Errorf("p = %g with %d exceedances, want 6/101 with 5", p, n)
	}
	if p, n := EmpiricalFalseAlarm(null, 1000); n != 0 || p != 1.0/101 {
		t.Errorf("beyond the null: p = %g, n = %d; want 1/101, 0", p, n)
	}
}

func TestWeightedMean(t *testing.T) {
	// Inverse-variance weights (Bevington & Robinson 2003, eq. 4.17):
	// 1 ± 1 and 4 ± 2 → weights 1 and 1/4, mean (1 + 1)/(5/4) = 1.6,
	// error 1/√(5/4).
	m, err := WeightedMean([]Flux{{1, 1}, {4, 2}})
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(m.Value-1.6) > 1e-12 || math.Abs(m.Err-1/math.Sqrt(1.25)) > 1e-12 {
		t.Errorf("mean %g ± %g, want 1.6 ± %g", m.Value, m.Err, 1/math.Sqrt(1.25))
	}
	if _, err := WeightedMean([]Flux{{1, 0}}); err == nil {
		t.Error("zero error: no error returned")
	}
	if _, err := WeightedMean(nil); err == nil {
		t.Error("no fluxes: no error returned")
	}
}

func TestProbeErrors(t *testing.T) {
	good := probeFixture(16)
	for _, tc := range []struct {
		name string
		edit func(p *Probe)
	}{
		{"empty null", func(p *Probe) { p.Null = nil }},
		{"NaN null", func(p *Probe) { p.Null = []float64{1, math.NaN()} }},
		{"labels mismatch", func(p *Probe) { p.SplitLabels = []string{"a"} }},
		{"bad split error", func(p *Probe) { p.Splits = []Flux{{1, 0}} }},
		{"bad image", func(p *Probe) { p.Image.N = 3 }},
	} {
		t.Run(tc.name, func(t *testing.T) {
			p := good
			tc.edit(&p)
			if _, err := ProbeFigure(p); err == nil {
				t.Error("no error")
			}
		})
	}
}
