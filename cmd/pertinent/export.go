package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
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
	format := fs.String("format", "svmlight", "svmlight, qrels, csv or jsonl")
	out := fs.String("out", "", "directory to write into (created if missing)")
	split := fs.String("split", "", "query-level split train,validation,test, e.g. 0.8,0.1,0.1")
	folds := fs.Int("folds", 0, "split queries into K folds instead")
	seed := fs.Uint64("seed", 1, "seed of the split's shuffle")
	policy := policyFlags(fs.FlagSet)
	fs.Usage = func() {
		fmt.Fprintln(stderr, "usage: pertinent export --db FILE --project NAME --format svmlight|qrels|csv|jsonl --out DIR [policy flags] [--split 0.8,0.1,0.1 | --folds K] [--seed S]")
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
	req := store.ExportRequest{Format: store.ExportFormat(*format), Split: export.SplitSpec{Method: "none", Seed: *seed}}
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
	for reason, n := range m.Excluded {
		fmt.Fprintf(stdout, "left out: %d %s\n", n, reason)
	}
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
