package main

import (
	"encoding/json"
	"fmt"
	"io"

	"github.com/pertinent/pertinent/agreement"
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
	fmt.Fprintln(w, "With each assessor's grades replaced by the others' consensus (paired t-test verdicts at 0.05):")
	for _, a := range e.Replaced {
		if !a.Order.TauDefined {
			fmt.Fprintf(w, "  %s: no order (%s%s)\n", a.Assessor, a.Order.Why, a.Note)
			continue
		}
		fmt.Fprintf(w, "  %s: tau %.3f, %d run pairs in another order, %d verdicts change\n", a.Assessor, a.Order.Tau, len(a.Order.Changed), len(a.SignificanceChanged))
	}
	if e.Standout != "" {
		fmt.Fprintf(w, "%s moves the order clearly away from the others'.\n", e.Standout)
	} else {
		fmt.Fprintln(w, "No single assessor's grades move the order clearly away from the others'.")
	}
	return nil
}

// printSources prints every source against the people, as the Sources page shows it: one
// JSON object (the API's), or lines of text.
func printSources(w io.Writer, c store.SourceComparison, asJSON bool) error {
	if asJSON {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(c)
	}
	if len(c.Sources) == 0 {
		fmt.Fprintln(w, "No source of grades in this project.")
	}
	for _, f := range c.Sources {
		kind := string(f.Kind)
		if kind == "" {
			kind = "kind not given"
		}
		fmt.Fprintf(w, "%s (%s): %d grades, %d on pairs with people's final grades\n", f.Name, kind, f.Grades, f.Report.N)
		for _, k := range f.AboutKeys() {
			fmt.Fprintf(w, "  %s: %s\n", k, f.About[k])
		}
		if f.Report.N > 0 {
			k := f.Report.KappaLinear
			fmt.Fprintf(w, "  linear kappa %s (95%% interval %s to %s); %s\n", num(k.Kappa), num(k.CI.Lo), num(k.CI.Hi), f.Report.Summary)
		}
		if f.Order != nil {
			fmt.Fprintf(w, "  Kendall's tau of the kept runs' order (%s), people against source: %s; %d run pairs in another order\n",
				c.Measure, num(agreement.Value{V: f.Order.Tau, OK: f.Order.TauDefined, Why: f.Order.Why}), len(f.Order.Changed))
		} else {
			fmt.Fprintf(w, "  %s\n", f.OrderNote)
		}
	}
	return nil
}

// printCalibration prints the calibration round as the lead's page shows it: one JSON object
// (the API's), or lines of text.
func printCalibration(w io.Writer, c store.CalibrationRound, asJSON bool) error {
	if asJSON {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(c)
	}
	if c.Pairs == 0 {
		fmt.Fprintln(w, "No calibration round in this project.")
		return nil
	}
	fmt.Fprintf(w, "Calibration round: %d pairs, by known grade %v\n", c.Pairs, c.ByGrade)
	for _, a := range c.Scores {
		fmt.Fprintf(w, "  %s: %d of %d answered; same as known %s (95%% interval %s to %s), within one %s, mean given minus known %s\n",
			a.Assessor, a.Answered, c.Pairs, num(a.Exact), num(a.ExactCI.Lo), num(a.ExactCI.Hi), num(a.WithinOne), num(a.MeanSigned))
	}
	return nil
}

// printPreferences prints the store's PreferenceReport: as JSON, exactly what the API gives.
func printPreferences(w io.Writer, r store.PreferenceReport, asJSON bool) error {
	if asJSON {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(r)
	}
	a := r.Agreement
	fmt.Fprintf(w, "Preferences between documents graded %d or better, %d answers per comparison: %d answers, %d cannot judge, %d flagged\n",
		r.Threshold, r.JudgmentsPerComparison, r.Answers, r.CannotJudge, r.Flagged)
	fmt.Fprintf(w, "Agreement over %d comparisons: all alike %s, pairs of assessors agreeing %s, Krippendorff's alpha (nominal) %s\n",
		a.Comparisons, num(a.UnanimousShare), num(a.Pairwise), num(a.Alpha.Alpha))
	for _, q := range r.Queries {
		state := fmt.Sprintf("waiting for %d comparisons", q.Open)
		if q.Done {
			state = "sorted"
		}
		fmt.Fprintf(w, "%s (%s): %d documents, %s\n", q.Query, q.Text, len(q.Documents), state)
		for i, sc := range q.Fit.Scores {
			fmt.Fprintf(w, "  %d. %s  %.2f [%.2f, %.2f]  %d-%d-%d\n", i+1, sc.Document, sc.Score, sc.Low, sc.High, sc.Wins, sc.Losses, sc.Ties)
		}
		for _, t := range q.Fit.Intransitive {
			fmt.Fprintf(w, "  intransitive: %s > %s > %s > %s\n", t.A, t.B, t.C, t.A)
		}
	}
	for _, x := range r.Runs {
		fmt.Fprintf(w, "run %s: orders %d answers as preferred, %d against (share %s); %d without a preference, %d of documents it ranks neither of\n",
			x.Run, x.Agree, x.Disagree, num(x.Share), x.NoPreference, x.Unranked)
	}
	return nil
}
