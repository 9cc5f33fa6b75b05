package fit

import (
	"fmt"
	"math"
)

// Comparison compares fit B with fit A of the same data. Positive values
// favour B throughout: LnBayes = ln Z_B − ln Z_A, DeltaChi2 = χ²_A − χ²_B,
// DeltaBIC = BIC_A − BIC_B.
type Comparison struct {
	A, B string // labels (e.g. directories)
	// LnBayes and its error √(σ_A² + σ_B²) need nested-sampling results
	// of both; HasEvidence says whether they are set.
	HasEvidence bool    `json:"has_evidence"`
	LnBayes     float64 `json:"ln_bayes_factor"`
	LnBayesErr  float64 `json:"ln_bayes_factor_err"`
	DeltaChi2   float64 `json:"delta_chi2"`
	// DeltaBIC is BIC_A − BIC_B with BIC = −2 ln L_max + k ln n, n the
	// number of real data values (both parts of every visibility).
	DeltaBIC float64 `json:"delta_bic"`
	// Datasets holds χ²_A − χ²_B per dataset label (noise scales applied).
	Datasets map[string]float64 `json:"delta_chi2_per_dataset"`
	// Preferred is "A", "B" or "neither", with Strength on the scale of
	// Kass & Raftery (1995) applied to 2 ln B (or to ΔBIC without
	// evidences) and Basis naming which.
	Preferred string `json:"preferred"`
	Strength  string `json:"strength"`
	Basis     string `json:"basis"`
	// Warnings lists differences that make the comparison doubtful
	// (other data, another grid).
	Warnings []string `json:"warnings,omitempty"`
}

// EvidenceCaution is the caution printed with every evidence comparison.
const EvidenceCaution = "The Bayesian evidence depends on the priors: widening the prior of a " +
	"parameter the data constrain lowers ln Z by about the log of the widening, so compare " +
	"models whose priors are physically motivated and equally generous."

// KassRaftery returns the strength of evidence for a value x = 2 ln B (or
// ΔBIC) on the scale of Kass & Raftery (1995), Table in §3.2: 0–2 "not
// worth more than a bare mention", 2–6 "positive", 6–10 "strong", > 10
// "very strong".
//
// References:
//   - Kass R. E. & Raftery A. E. 1995, J. Am. Stat. Assoc. 90, 773, §3.2.
func KassRaftery(x float64) string {
	x = math.Abs(x)
	switch {
	case x < 2:
		return "not worth more than a bare mention"
	case x < 6:
		return "positive"
	case x < 10:
		return "strong"
	}
	return "very strong"
}

// Compare compares result b with result a.
func Compare(a, b *Result, labelA, labelB string) Comparison {
	c := Comparison{A: labelA, B: labelB, Datasets: map[string]float64{}}
	c.DeltaChi2 = a.Chi2 - b.Chi2
	c.DeltaBIC = a.BIC - b.BIC
	if a.Data != b.Data {
		c.Warnings = append(c.Warnings, fmt.Sprintf("the fits use different data (%d and %d real values): the comparison is not meaningful", a.Data, b.Data))
	}
	if a.Grid.N != b.Grid.N || a.Grid.Pixel != b.Grid.Pixel {
		c.Warnings = append(c.Warnings, fmt.Sprintf("the fits use different grids (%d×%g″ and %d×%g″)", a.Grid.N, a.Grid.Pixel, b.Grid.N, b.Grid.Pixel))
	}
	for _, da := range a.Datasets {
		for _, db := range b.Datasets {
			if da.Label == db.Label {
				c.Datasets[da.Label] = da.Chi2Scaled - db.Chi2Scaled
				if da.Visibilities != db.Visibilities {
					c.Warnings = append(c.Warnings, fmt.Sprintf("dataset %q has %d visibilities in one fit and %d in the other", da.Label, da.Visibilities, db.Visibilities))
				}
			}
		}
	}
	x := c.DeltaBIC
	c.Basis = "ΔBIC (no nested-sampling evidence for both fits; run them with method = \"nested\" for a Bayes factor)"
	if a.Evidence != nil && b.Evidence != nil {
		c.HasEvidence = true
		c.LnBayes = b.Evidence.LogZ - a.Evidence.LogZ
		c.LnBayesErr = math.Hypot(a.Evidence.LogZErr, b.Evidence.LogZErr)
		x = 2 * c.LnBayes
		c.Basis = "2 ln B"
	}
	c.Strength = KassRaftery(x)
	switch {
	case math.Abs(x) < 2:
		c.Preferred = "neither"
	case x > 0:
		c.Preferred = "B"
	default:
		c.Preferred = "A"
	}
	return c
}
