package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"runtime/debug"
	"strings"
	"text/tabwriter"

	"github.com/schollz/progressbar/v3"

	"github.com/pertinent/pertinent/ingest"
	"github.com/pertinent/pertinent/store"
)

const importHelp = "usage: pertinent import queries|documents|pairs|rows|runs|qrels|features|calibration --db FILE --project NAME " +
	"[--format csv|jsonl|svmlight] [--dry-run] [--depth K] [--source NAME [--source-kind model|campaign|heuristic] [--source-about KEY=VALUE]...] [--gold] [--progress] FILE..."

// errRejected makes the command exit non-zero after it has printed the problems itself.
var errRejected = errors.New("import rejected: nothing was changed")

// runImport brings files into a project through the same store import the web page uses.
func runImport(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 || strings.HasPrefix(args[0], "-") {
		return errors.New(importHelp)
	}
	kind := store.ImportKind(args[0])
	fs := newDBFlags("import "+args[0], stderr)
	project := fs.String("project", env("PERTINENT_PROJECT", ""), "project name (env PERTINENT_PROJECT)")
	format := fs.String("format", "", "csv, jsonl or svmlight; default: from each file's extension")
	dry := fs.Bool("dry-run", false, "check the files and report what would change, without changing anything")
	depth := fs.Int("depth", store.DefaultPoolDepth, "runs: pool the top K of each run and query")
	source := fs.String("source", "", "qrels: the name the judgments are recorded under (required for qrels)")
	sourceKind := fs.String("source-kind", "", "qrels: what the source is: model, campaign or heuristic")
	about := keyValues{}
	fs.Var(about, "source-about", "qrels: one provenance field of the source as KEY=VALUE (model, version, prompt_sha256, parameters, date, ...); repeat for more")
	gold := fs.Bool("gold", false, "qrels: also make each pair a gold pair with its qrels grade")
	progress := fs.Bool("progress", false, "show a progress bar even when standard error is not a terminal")
	maxProblems := fs.Int("max-problems", 20, "problems listed before counting the rest")
	if err := fs.Parse(args[1:]); err != nil {
		return err
	}
	// The import's live heap is mostly the readers' duplicate hashes (about 70 MB for a
	// million pairs); a soft limit makes the collector run before the heap doubles, which
	// measured 160 rather than 195 MB peak for a million rows at some 10% more time. The
	// environment's GOMEMLIMIT wins.
	if _, set := os.LookupEnv("GOMEMLIMIT"); !set {
		debug.SetMemoryLimit(110 << 20)
	}
	if *project == "" || fs.NArg() == 0 {
		return errors.New(importHelp)
	}
	st, p, err := fs.openProject(ctx, *project)
	if err != nil {
		return err
	}
	defer st.Close()

	var files []store.ImportFile
	var total int64
	for _, name := range fs.Args() {
		f, err := os.Open(name)
		if err != nil {
			return err
		}
		defer f.Close()
		if info, err := f.Stat(); err == nil {
			total += info.Size()
		}
		files = append(files, store.ImportFile{Name: name, R: f})
	}
	if *progress || isTerminal(stderr) {
		bar := newProgressBar(stderr, total, "importing "+string(kind), progressbar.OptionShowBytes(true))
		for i := range files {
			r := files[i].R
			files[i].R = io.TeeReader(r, bar)
		}
		defer bar.Finish()
	}
	spec := store.ImportSpec{Kind: kind, Format: *format, DryRun: *dry, Depth: *depth, Source: *source, SourceKind: store.SourceKind(*sourceKind), SourceAbout: about, Gold: *gold, MaxProblems: *maxProblems}
	rep, err := st.Import(ctx, p.ID, 0, spec, files)
	var ps *ingest.Problems
	if errors.As(err, &ps) {
		fmt.Fprintln(stdout, ps.Error())
		return errRejected
	}
	if err != nil {
		return err
	}
	return printReport(stdout, p.Name, rep)
}

func printReport(w io.Writer, project string, rep store.ImportReport) error {
	verb := "imported"
	if rep.DryRun {
		verb = "dry run, nothing changed; would import"
	}
	fmt.Fprintf(w, "%s %s into %s from %s\n", verb, rep.Kind, project, strings.Join(rep.Files, ", "))
	tw := tabwriter.NewWriter(w, 0, 4, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "\tnew\tupdated\tunchanged\t")
	for _, c := range rep.Counts {
		fmt.Fprintf(tw, "%s\t%d\t%d\t%d\t\n", c.What, c.New, c.Updated, c.Unchanged)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	for _, n := range rep.Notes {
		fmt.Fprintln(w, n)
	}
	return nil
}

// keyValues collects repeated KEY=VALUE flags.
type keyValues map[string]string

func (kv keyValues) String() string { return "" }

func (kv keyValues) Set(v string) error {
	k, val, ok := strings.Cut(v, "=")
	if !ok || strings.TrimSpace(k) == "" {
		return fmt.Errorf("want KEY=VALUE, got %q", v)
	}
	if _, dup := kv[k]; dup {
		return fmt.Errorf("%s given twice", k)
	}
	kv[k] = val
	return nil
}
