package main

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"text/tabwriter"

	"github.com/pertinent/pertinent/estimate"
	"github.com/pertinent/pertinent/rankeval"
	"github.com/pertinent/pertinent/store"
)

// runPlan implements "pertinent plan": keep run files and make a judging design from them, release
// an adaptive design's next pairs, list designs, or plan how many queries a comparison needs.
func runPlan(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newDBFlags("plan", stderr)
	project := fs.String("project", "", "project name")
	kind := fs.String("design", "stratified", "judging design: depth, stratified, decide or find")
	depth := fs.Int("depth", 10, "ranks judged in full (depth pooling, or the top stratum)")
	maxDepth := fs.Int("max-depth", 100, "deepest rank a stratified design samples")
	budget := fs.Int("budget", 0, "judgments to spend over all queries (0: no total limit)")
	perQuery := fs.Int("per-query", 0, "judgments to spend per query (0: no limit per query)")
	k := fs.Int("k", 10, "cut-off of NDCG@k")
	gain := fs.String("gain", "exponential", "NDCG gain: exponential (2^g-1) or linear (g)")
	threshold := fs.Int("threshold", 2, "grades at or above this are relevant (AP, finding)")
	confidence := fs.Float64("confidence", 0.95, "confidence at which deciding A versus B stops")
	method := fs.String("method", estimate.FindBandit, "finding method: bandit or move-to-front")
	wave := fs.Int("wave", 20, "pairs an adaptive design releases at a time")
	breakTies := fs.Bool("break-ties", false, "accept tied scores, ordered by document id")
	dryRun := fs.Bool("dry-run", false, "count what the design would send; store nothing")
	advance := fs.Int64("advance", 0, "release the next pairs of this adaptive design")
	list := fs.Bool("list", false, "list the project's judging designs")
	queries := fs.Bool("queries", false, "plan how many queries a comparison of --of's runs needs")
	of := fs.Int64("of", 0, "the design whose runs --queries plans for")
	metric := fs.String("metric", "ndcg", "measure for --queries: ndcg or ap")
	minDiff := fs.Float64("min-diff", 0.05, "smallest difference worth detecting (--queries)")
	alpha := fs.Float64("alpha", 0.05, "two-sided significance level (--queries)")
	power := fs.Float64("power", 0.8, "power 1-beta (--queries)")
	halfWidth := fs.Float64("half-width", 0, "target half-width of a difference's 95% interval (--queries; 0: skip)")
	asJSON := fs.Bool("json", false, "print one JSON object instead of text")
	fs.Usage = func() {
		fmt.Fprintln(stderr, `usage: pertinent plan --db FILE --project NAME [--design stratified|depth|decide|find] [design flags] [--dry-run] [--json] RUN...
       pertinent plan --db FILE --project NAME --advance DESIGN
       pertinent plan --db FILE --project NAME --list
       pertinent plan --db FILE --project NAME --queries --of DESIGN [--metric ndcg] [--min-diff 0.05] [--alpha 0.05] [--power 0.8]
Run files are kept in the project under their file names; the pairs a design chooses go to judging.
Estimates of a design: pertinent evaluate --design DESIGN.`)
		fs.PrintDefaults()
	}
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *project == "" {
		fs.Usage()
		return errors.New("plan: --project is required")
	}
	st, p, err := fs.openProject(ctx, *project)
	if err != nil {
		return fmt.Errorf("plan: %w", err)
	}
	defer st.Close()
	emit := func(v any, text func(io.Writer) error) error {
		if *asJSON {
			enc := json.NewEncoder(stdout)
			enc.SetIndent("", "  ")
			return enc.Encode(v)
		}
		return text(stdout)
	}
	switch {
	case *list:
		ds, err := st.Designs(ctx, p.ID)
		if err != nil {
			return fmt.Errorf("plan: %w", err)
		}
		return emit(ds, func(w io.Writer) error {
			tw := tabwriter.NewWriter(w, 0, 4, 2, ' ', 0)
			fmt.Fprintln(tw, "design\tkind\truns\tchosen\tcreated")
			for _, d := range ds {
				fmt.Fprintf(tw, "%d\t%s\t%s\t%d\t%s\n", d.ID, d.Settings.Design.Kind, strings.Join(d.RunNames, ", "), d.Chosen, d.CreatedAt.UTC().Format("2006-01-02 15:04"))
			}
			return tw.Flush()
		})
	case *advance > 0:
		n, err := st.AdvanceDesign(ctx, p.ID, 0, *advance)
		if err != nil {
			return fmt.Errorf("plan: %w", err)
		}
		return emit(map[string]int{"released": n}, func(w io.Writer) error {
			_, err := fmt.Fprintf(w, "released %d pairs\n", n)
			return err
		})
	case *queries:
		if *of <= 0 {
			return errors.New("plan: --queries needs --of DESIGN, the design whose runs are compared")
		}
		req := estimate.QueryPlanRequest{MinDiff: *minDiff, Alpha: *alpha, Beta: 1 - *power, HalfWidth: *halfWidth}
		qr, err := st.DesignQueries(ctx, p.ID, *of, *metric, req)
		if err != nil {
			return fmt.Errorf("plan: %w", err)
		}
		return emit(qr, func(w io.Writer) error { return writeQueriesText(w, qr) })
	}
	if fs.NArg() < 1 {
		fs.Usage()
		return errors.New("plan: give one or more run files")
	}
	req := store.PlanRequest{DryRun: *dryRun}
	req.Settings.Design = estimate.Design{Kind: estimate.Kind(*kind), Depth: *depth, MaxDepth: *maxDepth, Budget: *budget,
		PerQuery: *perQuery, K: *k, Confidence: *confidence, Method: *method, Wave: *wave}
	req.Settings.Threshold = *threshold
	req.Settings.BreakTies = *breakTies
	switch *gain {
	case "exponential":
		req.Settings.Gain = rankeval.GainExponential
	case "linear":
		req.Settings.Gain = rankeval.GainLinear
	default:
		return fmt.Errorf("plan: --gain %q: want exponential or linear", *gain)
	}
	for _, path := range fs.Args() {
		f, err := os.Open(path)
		if err != nil {
			return fmt.Errorf("plan: %w", err)
		}
		kr, err := st.KeepRun(ctx, p.ID, 0, filepath.Base(path), f)
		f.Close()
		if err != nil {
			return fmt.Errorf("plan: %w", err)
		}
		req.Runs = append(req.Runs, kr.ID)
	}
	out, err := st.PlanJudging(ctx, p.ID, 0, req)
	if err != nil {
		return fmt.Errorf("plan: %w", err)
	}
	return emit(out, func(w io.Writer) error {
		if out.DryRun {
			fmt.Fprintf(w, "would send %d new pairs to judging (%d already in the project count with a higher probability)\n", out.Added, out.Raised)
		} else {
			fmt.Fprintf(w, "design %d: sent %d new pairs to judging (%d already in the project)\n", out.DesignID, out.Added, out.Raised)
		}
		if len(out.Plan.Strata) > 0 {
			tw := tabwriter.NewWriter(w, 0, 4, 2, ' ', 0)
			fmt.Fprintln(tw, "stratum\tbest rank\tpairs\trate\texpected")
			for _, s := range out.Plan.Strata {
				fmt.Fprintf(tw, "%d\t%d-%d\t%d\t%.3f\t%.0f\n", s.Index, s.FromRank, s.ToRank, s.Pairs, s.Rate, s.Expected)
			}
			tw.Flush()
		}
		for _, n := range out.Plan.Notes {
			fmt.Fprintln(w, n)
		}
		return nil
	})
}

func writeQueriesText(w io.Writer, qr store.QueriesReport) error {
	fmt.Fprintln(w, qr.Plan.Text)
	fmt.Fprintf(w, "variance of a per-query difference: %.6f (%s)\n", qr.Plan.Variance, qr.Plan.VarianceFrom)
	for _, p := range qr.Power {
		fmt.Fprintf(w, "discriminative power of %s: %d of %d run pairs significant at α %s (%.1f%%)\n",
			p.Metric, p.Significant, p.Pairs, strconv.FormatFloat(p.Alpha, 'g', -1, 64), 100*p.Share)
	}
	return nil
}

// writeDesignText prints "how sure are we?" for a design.
func writeDesignText(w io.Writer, rep store.DesignReport) error {
	d := rep.Design
	fmt.Fprintf(w, "design %d (%s) over %s: chose %d pairs, %d graded, %d still being judged\n",
		d.ID, d.Settings.Design.Kind, strings.Join(d.RunNames, ", "), rep.Chosen, rep.Graded, rep.Pending)
	fmt.Fprintln(w, rep.Signal.Text)
	o := rep.Estimates.Options
	tw := tabwriter.NewWriter(w, 0, 4, 2, ' ', 0)
	fmt.Fprintf(tw, "run\tNDCG@%d\t95%% interval\tAP\t95%% interval\tjudged@%d\tRBP\tRBP residual\n", o.K, o.K)
	for _, r := range rep.Estimates.Runs {
		fmt.Fprintf(tw, "%s\t%.4f\t[%.4f, %.4f]\t%.4f\t[%.4f, %.4f]\t%.4f\t%.4f\t%.4f\n", r.Run, r.NDCG.Est, r.NDCG.Low, r.NDCG.High,
			r.AP.Est, r.AP.Low, r.AP.High, r.JudgedAtK, r.RBP, r.RBPResidual)
	}
	tw.Flush()
	for _, df := range rep.Estimates.Differences {
		fmt.Fprintf(w, "%s - %s (%s): %.4f [%.4f, %.4f], P(%s beats %s) = %.3f\n", df.B, df.A, df.Metric, df.Diff.Est, df.Diff.Low, df.Diff.High, df.B, df.A, df.ProbBBeatsA)
	}
	if dec := rep.Decision; dec != nil {
		fmt.Fprintf(w, "decision: %s - %s in NDCG@%d: %.4f [%.4f, %.4f], P = %.3f, settled %v\n", dec.B, dec.A, dec.K, dec.Diff, dec.Low, dec.High, dec.ProbBBeatsA, dec.Settled)
	}
	return nil
}
