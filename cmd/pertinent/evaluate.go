package main

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"text/tabwriter"

	"github.com/pertinent/pertinent/rankeval"
	"github.com/pertinent/pertinent/store"
)

// runEvaluate implements "pertinent evaluate": one run scored against a project's final
// grades, or two runs compared query by query.
func runEvaluate(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newDBFlags("evaluate", stderr)
	project := fs.String("project", "", "project name")
	k := fs.Int("k", 10, "cut-off rank (0: the whole ranking)")
	gain := fs.String("gain", "exponential", "NDCG gain: exponential (2^g-1) or linear (g)")
	threshold := fs.Int("threshold", 2, "grades at or above this are relevant for P@k and MAP")
	asJSON := fs.Bool("json", false, "print one JSON object instead of tables")
	design := fs.Int64("design", 0, "print the estimates of this judging design (see pertinent plan) instead of scoring run files")
	policy := policyFlags(fs.FlagSet)
	fs.Usage = func() {
		fmt.Fprintln(stderr, "usage: pertinent evaluate --db FILE --project NAME [--k 10] [--gain exponential|linear] [--threshold 2] [policy flags] [--json] RUN [RUN2]\n       pertinent evaluate --db FILE --project NAME --design ID [--json]")
		fs.PrintDefaults()
	}
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *project != "" && *design > 0 {
		return evaluateDesign(ctx, *fs.db, *project, *design, *asJSON, stdout)
	}
	if *project == "" || fs.NArg() < 1 || fs.NArg() > 2 {
		fs.Usage()
		return errors.New("evaluate: --project and one or two run files are required")
	}
	req := store.EvalRequest{K: *k, Threshold: *threshold}
	switch *gain {
	case "exponential":
		req.Gain = rankeval.GainExponential
	case "linear":
		req.Gain = rankeval.GainLinear
	default:
		return fmt.Errorf("evaluate: --gain %q: want exponential or linear", *gain)
	}
	var err error
	if req.Policy, err = policy(); err != nil {
		return fmt.Errorf("evaluate: %w", err)
	}
	var runs []store.NamedRun
	for _, path := range fs.Args() {
		f, err := os.Open(path)
		if err != nil {
			return err
		}
		defer f.Close()
		runs = append(runs, store.NamedRun{Name: filepath.Base(path), Body: f})
	}
	st, p, err := fs.openProject(ctx, *project)
	if err != nil {
		return fmt.Errorf("evaluate: %w", err)
	}
	defer st.Close()
	ev, err := st.Evaluate(ctx, p.ID, req, runs)
	if err != nil {
		return fmt.Errorf("evaluate: %w", err)
	}
	if *asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		return enc.Encode(ev)
	}
	return writeEvaluationText(stdout, p.Name, ev)
}

func writeEvaluationText(w io.Writer, project string, ev store.Evaluation) error {
	o := ev.Summaries[0].Options
	at := "@" + fmt.Sprint(o.K)
	if o.K == 0 {
		at = ""
	}
	fmt.Fprintf(w, "Project %s. %s\n", project, ev.PolicyDescription)
	fmt.Fprintf(w, "NDCG%s with %s gain; ERR%s with top grade %d; P%s and MAP count grades >= %d as relevant; unjudged documents count as not relevant.\n\n",
		at, ev.Summaries[0].Gain, at, o.MaxGrade, at, o.Threshold)
	for i, s := range ev.Summaries {
		fmt.Fprintf(w, "Run %s\n", ev.Runs[i])
		tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
		fmt.Fprintf(tw, "query\tNDCG%s\tERR%s\tP%s\tAP\tjudged%s\t\n", at, at, at, at)
		for _, q := range s.PerQuery {
			fmt.Fprintf(tw, "%s\t%s\t%.4f\t%.4f\t%s\t%.4f\t\n", q.Query, defined(q.NDCG, q.NDCGDefined), q.ERR, q.Precision, defined(q.AP, q.APDefined), q.Judged)
		}
		fmt.Fprintf(tw, "mean\t%.4f\t%.4f\t%.4f\t%.4f\t%.4f\t\n", s.NDCG, s.ERR, s.Precision, s.MAP, s.Judged)
		tw.Flush()
		fmt.Fprintf(w, "%d queries; NDCG over %d, MAP over %d (the rest have no relevant document); %d missing from the run (scored 0); %d run queries without grades (ignored).\n\n",
			s.Queries, s.NDCGQueries, s.APQueries, s.MissingFromRun, s.RunOnly)
	}
	if len(ev.Summaries) == 2 {
		fmt.Fprintf(w, "%s minus %s, per query\n", ev.Runs[1], ev.Runs[0])
		diffs := map[rankeval.Metric]map[string]float64{}
		for _, c := range ev.Comparisons {
			diffs[c.Metric] = map[string]float64{}
			for i, q := range c.Queries {
				diffs[c.Metric][q] = c.Diff[i]
			}
		}
		tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
		fmt.Fprint(tw, "query\t")
		for _, m := range store.ComparedMetrics {
			fmt.Fprintf(tw, "Δ%s\t", m)
		}
		fmt.Fprintln(tw)
		for _, q := range ev.Summaries[0].PerQuery {
			fmt.Fprintf(tw, "%s\t", q.Query)
			for _, m := range store.ComparedMetrics {
				d, ok := diffs[m][q.Query]
				fmt.Fprintf(tw, "%s\t", defined(d, ok))
			}
			fmt.Fprintln(tw)
		}
		tw.Flush()
		fmt.Fprintln(w)
		tw = tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
		fmt.Fprintf(tw, "measure\t%s\t%s\tdifference\trandomisation p\tt\tt-test p\t\n", ev.Runs[0], ev.Runs[1])
		for _, c := range ev.Comparisons {
			fmt.Fprintf(tw, "%s\t%.4f\t%.4f\t%+.4f\t%.4f\t%.3f\t%.4f\t\n", c.Metric, c.MeanA, c.MeanB, c.MeanDiff, c.RandomisationP, c.T, c.TTestP)
		}
		tw.Flush()
		fmt.Fprintf(w, "Paired randomisation test: %d sign flips, seed %d; paired t-test, two-sided.\n", comparisonPermutations(ev), comparisonSeed(ev))
		for _, n := range ev.CompareNotes {
			fmt.Fprintln(w, "note:", n)
		}
	}
	if n := len(ev.Unjudged); n > 0 {
		fmt.Fprintf(w, "\n%d retrieved pairs in the top %d have no final grade; send them to judging from the project's Evaluate page.\n", n, o.K)
	}
	return nil
}

func comparisonPermutations(ev store.Evaluation) int {
	if len(ev.Comparisons) == 0 {
		return 0
	}
	return ev.Comparisons[0].Permutations
}

func comparisonSeed(ev store.Evaluation) uint64 {
	if len(ev.Comparisons) == 0 {
		return 0
	}
	return ev.Comparisons[0].Seed
}

func defined(v float64, ok bool) string {
	if !ok {
		return "–"
	}
	return strings.TrimSpace(fmt.Sprintf("%.4f", v))
}

// evaluateDesign prints the estimates of a judging design: what its page and the API show.
func evaluateDesign(ctx context.Context, db, project string, id int64, asJSON bool, stdout io.Writer) error {
	st, p, err := openProject(ctx, db, project)
	if err != nil {
		return fmt.Errorf("evaluate: %w", err)
	}
	defer st.Close()
	rep, err := st.DesignEstimate(ctx, p.ID, id)
	if err != nil {
		return fmt.Errorf("evaluate: %w", err)
	}
	if asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		return enc.Encode(rep)
	}
	return writeDesignText(stdout, rep)
}
