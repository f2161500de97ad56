package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"time"

	"github.com/schollz/progressbar/v3"

	"github.com/pertinent/pertinent/export"
	"github.com/pertinent/pertinent/store"
)

// runExport implements "pertinent export": a project's final grades under a label policy,
// written as files plus manifest.json into a directory.
func runExport(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newDBFlags("export", stderr)
	project := fs.String("project", "", "project name")
	format := fs.String("format", "svmlight", "svmlight, qrels, csv, jsonl, or preferences (the preference training pairs)")
	out := fs.String("out", "", "directory to write into (created if missing)")
	split := fs.String("split", "", "query-level split train,validation,test, e.g. 0.8,0.1,0.1")
	folds := fs.Int("folds", 0, "split queries into K folds instead")
	seed := fs.Uint64("seed", 1, "seed of the split's shuffle")
	refine := fs.Bool("refine-by-preferences", false, "SVMlight: order the labels within each grade by the preference judgments' Bradley-Terry fit")
	policy := policyFlags(fs.FlagSet)
	fs.Usage = func() {
		fmt.Fprintln(stderr, "usage: pertinent export --db FILE --project NAME --format svmlight|qrels|csv|jsonl|preferences --out DIR [policy flags] [--split 0.8,0.1,0.1 | --folds K] [--seed S] [--refine-by-preferences]")
		fs.PrintDefaults()
	}
	if err := fs.Parse(args); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		return fmt.Errorf("export: unexpected argument %q", fs.Arg(0))
	}
	if *project == "" || *out == "" {
		fs.Usage()
		return errors.New("export: --project and --out are required")
	}
	if *format == "preferences" {
		if *split != "" || *folds != 0 || *refine {
			return errors.New("export: --format preferences writes the training pairs as they are: no --split, --folds or --refine-by-preferences")
		}
		return exportPreferencePairs(ctx, &fs, *project, *out, stdout)
	}
	req := store.ExportRequest{Format: store.ExportFormat(*format), Split: export.SplitSpec{Method: "none", Seed: *seed}, RefineByPreferences: *refine}
	var err error
	if req.Policy, err = policy(); err != nil {
		return fmt.Errorf("export: %w", err)
	}
	switch {
	case *split != "" && *folds != 0:
		return errors.New("export: give --split or --folds, not both")
	case *split != "":
		req.Split.Method = "ratio"
		if req.Split.Ratios, err = export.ParseRatios(*split); err != nil {
			return err // already reads "export: ..."
		}
	case *folds != 0:
		req.Split.Method, req.Split.Folds = "k-fold", *folds
	}

	st, p, err := fs.openProject(ctx, *project)
	if err != nil {
		return fmt.Errorf("export: %w", err)
	}
	defer st.Close()
	plan, err := st.PlanExport(ctx, p.ID, req)
	if err != nil {
		return fmt.Errorf("export: %w", err)
	}
	if err := os.MkdirAll(*out, 0o755); err != nil {
		return err
	}
	sink := &export.DirSink{Dir: *out}
	progress, done := progressBar(stderr, plan.Pairs()*plan.Passes(sink.Sequential()), "exporting "+p.Name)
	m, err := plan.Write(ctx, sink, time.Now(), progress)
	done()
	if cerr := sink.Close(); err == nil {
		err = cerr
	}
	if err != nil {
		return fmt.Errorf("export: %w", err)
	}
	fmt.Fprintf(stdout, "%d rows of %d queries written to %s\n", m.Rows, m.Queries, *out)
	for _, f := range m.Files {
		fmt.Fprintf(stdout, "  %-20s %-9s %d\n", f.Name, f.Format, f.Rows)
	}
	fmt.Fprintf(stdout, "  %-20s manifest\n", store.ManifestFile)
	if r := m.Refinement; r != nil {
		fmt.Fprintf(stdout, "labels refined by preferences: %d grades of %d queries, %d documents, largest label %d\n", r.Grades, r.Queries, r.Documents, r.MaxLabel)
	}
	for reason, n := range m.Excluded {
		fmt.Fprintf(stdout, "left out: %d %s\n", n, reason)
	}
	return nil
}

// Files of `export --format preferences`: the Preferences page's CSV and the API's JSON Lines.
const (
	preferencePairsCSV   = "preference-pairs.csv"
	preferencePairsJSONL = "preference-pairs.jsonl"
)

// exportPreferencePairs writes a project's preference training pairs into dir with the same
// writers as the page's download and the API.
func exportPreferencePairs(ctx context.Context, fs *dbFlags, project, dir string, stdout io.Writer) error {
	st, p, err := fs.openProject(ctx, project)
	if err != nil {
		return fmt.Errorf("export: %w", err)
	}
	defer st.Close()
	pairs, err := st.PreferencePairs(ctx, p.ID)
	if err != nil {
		return fmt.Errorf("export: %w", err)
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	for name, write := range map[string]func(io.Writer, []export.PreferencePair) error{
		preferencePairsCSV: export.WritePreferencePairsCSV, preferencePairsJSONL: export.WritePreferencePairsJSONL,
	} {
		f, err := os.Create(filepath.Join(dir, name))
		if err != nil {
			return err
		}
		err = write(f, pairs)
		if cerr := f.Close(); err == nil {
			err = cerr
		}
		if err != nil {
			return fmt.Errorf("export: %s: %w", name, err)
		}
	}
	fmt.Fprintf(stdout, "%d training pairs of %s written to %s\n  %s\n  %s\n", len(pairs), p.Name, dir, preferencePairsCSV, preferencePairsJSONL)
	return nil
}

// progressBar draws a bar of rows read against total on w when w is a terminal, and does
// nothing otherwise (a pipe or a log file gets no control characters).
func progressBar(w io.Writer, total int, what string) (progress func(int), done func()) {
	if !isTerminal(w) || total <= 0 {
		return nil, func() {}
	}
	bar := newProgressBar(w, int64(total), what, progressbar.OptionShowCount())
	return func(n int) {
			// Every row would take the bar's lock a million times for nothing.
			if n%1024 == 0 || n == total {
				bar.Set(n)
			}
		}, func() {
			bar.Finish()
		}
}
