package main

import (
	"encoding/json"
	"fmt"
	"io"

	"github.com/pertinent/pertinent/store"
)

// printEffects prints what each assessor does, as the Assessors page's "what each assessor
// does" shows it: one JSON object (the API's), or lines of text.
func printEffects(w io.Writer, e store.AssessorEffects, asJSON bool) error {
	if asJSON {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(e)
	}
	fmt.Fprintln(w, "Leniency (against the lower median of the others' grades of the same pairs):")
	for _, l := range e.Leniency {
		fmt.Fprintf(w, "  %s: %s\n", l.Rater, l.Summary)
	}
	if e.Note != "" {
		fmt.Fprintln(w, e.Note)
		return nil
	}
	fmt.Fprintf(w, "Order of %d kept runs by mean %s, under each assessor's own grades against the others' (Kendall's tau):\n", len(e.Runs), e.Measure)
	for _, a := range e.Alone {
		if !a.Order.TauDefined {
			fmt.Fprintf(w, "  %s: no order (%s%s)\n", a.Assessor, a.Order.Why, a.Note)
			continue
		}
		fmt.Fprintf(w, "  %s: tau %.3f, %d run pairs in another order\n", a.Assessor, a.Order.Tau, len(a.Order.Changed))
	}
	if e.Standout != "" {
		fmt.Fprintf(w, "%s moves the order clearly away from the others'.\n", e.Standout)
	} else {
		fmt.Fprintln(w, "No single assessor's grades move the order clearly away from the others'.")
	}
	return nil
}
