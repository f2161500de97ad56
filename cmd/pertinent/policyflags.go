package main

import (
	"flag"
	"fmt"

	"github.com/pertinent/pertinent/export"
)

// policyFlags adds the label-policy flags shared by export and evaluate; the returned
// function reads them once the flags are parsed.
func policyFlags(fs *flag.FlagSet) func() (export.LabelPolicy, error) {
	adj := fs.Bool("adjudication-first", true, "use a lead's adjudicated grade where there is one")
	consensus := fs.String("consensus", "median", "final grade from judgments: median, majority, mean or dawid-skene")
	minJ := fs.Int("min-judgments", 1, "least number of grades a pair needs")
	maxD := fs.Int("max-disagreement", -1, "largest allowed spread (highest minus lowest grade); -1 for no limit")
	exCJ := fs.Bool("exclude-cannot-judge", false, "leave out pairs with any cannot-judge answer")
	exFlag := fs.Bool("exclude-flagged", false, "leave out pairs flagged as disturbing")
	exGold := fs.Bool("exclude-gold", false, "leave out gold pairs")
	fill := fs.String("fill-from", "", "where no person graded a pair, take the grade of this source (counted in the manifest)")
	return func() (export.LabelPolicy, error) {
		p := export.LabelPolicy{AdjudicationFirst: *adj, Consensus: export.Consensus(*consensus), MinJudgments: *minJ,
			ExcludeCannotJudge: *exCJ, ExcludeFlagged: *exFlag, ExcludeGold: *exGold, FillFrom: *fill}
		if *maxD >= 0 {
			d := *maxD
			p.MaxDisagreement = &d
		}
		if *minJ < 1 {
			return p, fmt.Errorf("--min-judgments %d: at least 1", *minJ)
		}
		return p, p.Validate()
	}
}
