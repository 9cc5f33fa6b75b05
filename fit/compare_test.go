package fit

import (
	"math"
	"testing"
)

// TestKassRaftery pins the scale of Kass & Raftery (1995), J. Am. Stat.
// Assoc. 90, 773, §3.2, on 2 ln B: 0–2, 2–6, 6–10, > 10.
func TestKassRaftery(t *testing.T) {
	for _, tc := range []struct {
		x    float64
		want string
	}{{0.5, "not worth more than a bare mention"}, {-1.9, "not worth more than a bare mention"},
		{3, "positive"}, {-5.9, "positive"}, {7, "strong"}, {12, "very strong"}} {
		if got := KassRaftery(tc.x); got != tc.want {
			t.Errorf("KassRaftery(%g) = %q, want %q", tc.x, got, tc.want)
		}
	}
}

func TestCompare(t *testing.T) {
	a := &Result{Chi2: 1000, BIC: 1100, Data: 2000, Evidence: &Evidence{LogZ: -500, LogZErr: 0.3},
		Datasets: []DatasetSummary{{Label: "x", Chi2Scaled: 1000, Visibilities: 1000}}}
	b := &Result{Chi2: 980, BIC: 1092, Data: 2000, Evidence: &Evidence{LogZ: -496, LogZErr: 0.4},
		Datasets: []DatasetSummary{{Label: "x", Chi2Scaled: 980, Visibilities: 1000}}}
	c := Compare(a, b, "a", "b")
	if !c.HasEvidence || c.LnBayes != 4 || math.Abs(c.LnBayesErr-0.5) > 1e-15 {
		t.Errorf("ln B = %v ± %v, want 4 ± 0.5", c.LnBayes, c.LnBayesErr)
	}
	if c.DeltaChi2 != 20 || c.DeltaBIC != 8 || c.Datasets["x"] != 20 {
		t.Errorf("Δχ² %v, ΔBIC %v, per dataset %v", c.DeltaChi2, c.DeltaBIC, c.Datasets)
	}
	if c.Preferred != "B" || c.Strength != "strong" || c.Basis != "2 ln B" {
		t.Errorf("preferred %q (%q on %q), want B, strong on 2 ln B", c.Preferred, c.Strength, c.Basis)
	}
	b.Evidence = nil
	if c := Compare(a, b, "a", "b"); c.HasEvidence || c.Strength != "strong" || c.Preferred != "B" {
		t.Errorf("without evidence: %+v", c)
	}
}
