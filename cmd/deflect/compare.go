package main

import (
	"encoding/json"
	"flag"
	"fmt"
	"math"
	"sort"

	"deflect/fit"
)

func init() {
	var asJSON bool
	register(&command{
		name:    "compare",
		summary: "compare fits of the same data: Bayes factor, Δχ², ΔBIC",
		usage:   "DIR_A DIR_B ... [--json]",
		help: `Compares the fits in the output directories of "deflect fit", each against
the first (A): the natural log of the Bayes factor ln B = ln Z_B − ln Z_A
with its error (needs nested-sampling fits, method = "nested"), Δχ² =
χ²_A − χ²_B per dataset and in total, and ΔBIC = BIC_A − BIC_B with
BIC = −2 ln L_max + k ln n, k the free parameters and n the real data
values (both the real and the imaginary part of every visibility count).
Positive values favour B. The preferred model is named with the strength of
evidence on the scale of Kass & Raftery (1995, J. Am. Stat. Assoc. 90, 773)
applied to 2 ln B, or to ΔBIC where there is no evidence: < 2 not worth
more than a bare mention, 2–6 positive, 6–10 strong, > 10 very strong.`,
		setFlags: func(fs *flag.FlagSet) {
			fs.BoolVar(&asJSON, "json", false, "print the comparisons as JSON")
		},
		run: func(env *runEnv, args []string) error {
			if len(args) < 2 {
				return usagef("want at least two fit directories, got %d", len(args))
			}
			rs := make([]*fit.Result, len(args))
			for i, dir := range args {
				r, err := fit.LoadResult(dir)
				if err != nil {
					return err
				}
				rs[i] = r
			}
			var cs []fit.Comparison
			for i := 1; i < len(rs); i++ {
				cs = append(cs, fit.Compare(rs[0], rs[i], args[0], args[i]))
			}
			if asJSON {
				b, err := json.MarshalIndent(cs, "", "  ")
				if err != nil {
					return err
				}
				fmt.Fprintln(env.stdout, string(b))
				return nil
			}
			w := env.stdout
			fmt.Fprintf(w, "%-3s %-28s %-9s %4s %14s %14s %14s  %s\n", "", "fit", "method", "k", "ln L_max", "χ²", "BIC", "ln Z")
			for i, r := range rs {
				z := "—"
				if e := r.Evidence; e != nil {
					z = fmt.Sprintf("%.3f ± %.3f", e.LogZ, e.LogZErr)
				}
				fmt.Fprintf(w, "%-3s %-28s %-9s %4d %14.4f %14.4f %14.4f  %s\n", string(rune('A'+i)), args[i], r.Method, r.FreeParams, r.BestLogLike, r.Chi2, r.BIC, z)
			}
			for i, c := range cs {
				fmt.Fprintf(w, "\n%s vs A (positive favours %s):\n", string(rune('B'+i)), string(rune('B'+i)))
				if c.HasEvidence {
					fmt.Fprintf(w, "  ln B    = %+.3f ± %.3f\n", c.LnBayes, c.LnBayesErr)
					if math.Abs(c.LnBayes) < 2*c.LnBayesErr {
						fmt.Fprintf(w, "            (within 2σ of zero: the sampling error matters; rerun with more live points)\n")
					}
				} else {
					fmt.Fprintf(w, "  ln B    = — (needs nested-sampling results for both fits: method = \"nested\")\n")
				}
				fmt.Fprintf(w, "  Δχ²     = %+.3f in total\n", c.DeltaChi2)
				labels := make([]string, 0, len(c.Datasets))
				for l := range c.Datasets {
					labels = append(labels, l)
				}
				sort.Strings(labels)
				for _, l := range labels {
					fmt.Fprintf(w, "            %+.3f %s\n", c.Datasets[l], l)
				}
				fmt.Fprintf(w, "  ΔBIC    = %+.3f (n = %d real values, k = %d and %d)\n", c.DeltaBIC, rs[0].Data, rs[0].FreeParams, rs[i+1].FreeParams)
				pref := map[string]string{"A": args[0], "B": args[i+1]}[c.Preferred]
				if c.Preferred == "neither" {
					fmt.Fprintf(w, "  preferred: neither (%s on %s)\n", c.Strength, c.Basis)
				} else {
					fmt.Fprintf(w, "  preferred: %s — %s evidence on %s (Kass & Raftery 1995)\n", pref, c.Strength, c.Basis)
				}
				for _, warn := range c.Warnings {
					fmt.Fprintf(w, "  warning: %s\n", warn)
				}
			}
			fmt.Fprintf(w, "\n%s\n", fit.EvidenceCaution)
			return nil
		},
	})
}
