package main

import (
	"fmt"
	"io"
	"slices"
	"strings"
	"text/tabwriter"

	"github.com/pertinent/pertinent/agreement"
)

// writeAgreementText prints the report for people: headline figures with
// their intervals and bands, then the per-pair and per-rater tables.
func writeAgreementText(out io.Writer, source string, r agreement.Report) error {
	var b strings.Builder
	pct := int(r.Level*100 + 0.5)
	fmt.Fprintf(&b, "Agreement for %s (grades 0..%d)\n", source, r.Scale-1)
	fmt.Fprintf(&b, "  items %d, raters %d, judgments %d, items with 2+ ratings %d\n\n", r.Items, r.Raters, r.Judgments, r.PairableItems)

	f := r.Fleiss
	fmt.Fprintf(&b, "Fleiss' kappa           %s%s\n", num(f.Kappa), band(r.FleissKappaBand))
	if f.Kappa.OK {
		fmt.Fprintf(&b, "  null SE %s, z %s, %d%% CI %s (normal, null SE)\n", num(f.SE), num(f.Z), pct, ci(f.CI))
	}
	fmt.Fprintf(&b, "  over %d items with %d ratings each (%d other items skipped)\n", f.ItemsUsed, f.RatersPerItem, f.ItemsSkipped)
	if f.Kappa.OK {
		b.WriteString("  per grade:")
		for _, g := range f.PerGrade {
			fmt.Fprintf(&b, "  %d: %s", g.Grade, num(g.Kappa))
		}
		b.WriteString("\n")
	}

	fmt.Fprintf(&b, "\nKrippendorff's alpha\n")
	for _, m := range agreement.Metrics {
		v := r.KrippendorffAlpha.Get(m)
		fmt.Fprintf(&b, "  %-9s %s%s", m.String(), num(v), band(r.KrippendorffAlphaBand[m.String()]))
		if r.Bootstrap != nil {
			bc := r.Bootstrap.Alpha.Get(m)
			fmt.Fprintf(&b, "  bootstrap %d%% CI %s", pct, bootCI(bc))
		}
		b.WriteString("\n")
	}

	fmt.Fprintf(&b, "\nMean pairwise quadratic kappa %s%s over %d rater pairs", num(r.MeanQuadraticKappa), band(r.MeanQuadraticKappaBand), r.MeanQuadraticKappaPairs)
	if r.Bootstrap != nil {
		fmt.Fprintf(&b, "; bootstrap %d%% CI %s", pct, bootCI(r.Bootstrap.MeanQuadraticKappa))
	}
	b.WriteString("\n")
	fmt.Fprintf(&b, "Percent agreement       %s\n", num(r.PercentAgreement))
	fmt.Fprintf(&b, "Adjacent agreement (±1) %s\n", num(r.AdjacentAgreement))
	if r.Bootstrap != nil {
		fmt.Fprintf(&b, "(bootstrap: %d item resamples, seed %d, percentile intervals)\n", r.Bootstrap.Replicates, r.Bootstrap.Seed)
	}

	if len(r.Undefined) > 0 {
		b.WriteString("\nUndefined:\n")
		keys := make([]string, 0, len(r.Undefined))
		for k := range r.Undefined {
			keys = append(keys, k)
		}
		slices.Sort(keys)
		for _, k := range keys {
			fmt.Fprintf(&b, "  %s: %s\n", k, r.Undefined[k])
		}
	}
	if _, err := io.WriteString(out, b.String()); err != nil {
		return err
	}

	err := writeTable(out, "Cohen's kappa by rater pair (SE: Fleiss, Cohen & Everitt 1969)",
		"a\tb\tn\tkappa\tSE\tlinear\tquadratic\tagreement\t", r.Cohen, func(w io.Writer, p agreement.PairKappa) {
			fmt.Fprintf(w, "%s\t%s\t%d\t%s\t%s\t%s\t%s\t%s\t\n", p.A, p.B, p.N, num(p.Kappa), num(p.SE), num(p.KappaLinear), num(p.KappaQuadratic), num(p.Agreement))
		})
	if err != nil {
		return err
	}
	return writeTable(out, "Raters (consensus: lower median of the other raters' grades)",
		"rater\tjudgments\tmean quadratic kappa\tconsensus agreement\tconsensus MAE\tgrades\t", r.RaterStats, func(w io.Writer, s agreement.RaterStats) {
			fmt.Fprintf(w, "%s\t%d\t%s\t%s\t%s\t%v\t\n", s.Rater, s.Judgments, num(s.MeanKappaQuadratic), num(s.ConsensusAgreement), num(s.ConsensusMAE), s.Grades)
		})
}

// writeTable writes a titled table, right-aligned, with a line per row; nothing without rows.
func writeTable[T any](out io.Writer, title, header string, rows []T, line func(io.Writer, T)) error {
	if len(rows) == 0 {
		return nil
	}
	fmt.Fprintf(out, "\n%s\n", title)
	tw := tabwriter.NewWriter(out, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, header)
	for _, v := range rows {
		line(tw, v)
	}
	return tw.Flush()
}

func num(v agreement.Value) string {
	if !v.OK {
		return "undefined"
	}
	return fmt.Sprintf("%.4f", v.V)
}

func band(name string) string {
	if name == "" {
		return ""
	}
	return " (" + name + ")"
}

func ci(c agreement.CI) string {
	if !c.Lo.OK {
		return "undefined"
	}
	return fmt.Sprintf("[%.4f, %.4f]", c.Lo.V, c.Hi.V)
}

func bootCI(c agreement.BootCI) string {
	if !c.Lo.OK {
		return "undefined"
	}
	return fmt.Sprintf("[%.4f, %.4f]", c.Lo.V, c.Hi.V)
}
