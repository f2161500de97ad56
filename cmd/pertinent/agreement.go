package main

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"strconv"
	"strings"

	"github.com/pertinent/pertinent/agreement"
	"github.com/pertinent/pertinent/store"
)

// runAgreement implements "pertinent agreement": it reads judgments and
// prints the agreement report as text or, with --json, as one JSON object.
func runAgreement(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("agreement", stderr)
	from := fs.String("from", "", "CSV file of judgments with header item,rater,grade")
	dbPath := fs.String("db", "", "database file to read judgments from (with --project)")
	project := fs.String("project", "", "project name (with --db)")
	asJSON := fs.Bool("json", false, "print one JSON object instead of text")
	scale := fs.Int("scale", 5, "number of grades K; grades are 0..K-1")
	boot := fs.Int("bootstrap", 1000, "bootstrap replicates for alpha and mean kappa intervals (0 to skip); with --db the lead's pages' rule unless given")
	seed := fs.Uint64("seed", 1, "bootstrap seed")
	sources := fs.Bool("sources", false, "with --db: every external source of grades against the people's final grades instead of agreement")
	effects := fs.Bool("effects", false, "with --db: what each assessor does (leniency, and the kept runs' order under their grades) instead of agreement")
	calibration := fs.Bool("calibration", false, "with --db: the calibration round and each assessor's score against its known grades instead of agreement")
	preferences := fs.Bool("preferences", false, "with --db: agreement on preference answers, and each query's Bradley-Terry order, instead of graded agreement")
	fs.Usage = func() {
		fmt.Fprintln(stderr, "usage: pertinent agreement --from FILE.csv [--json] [--scale K] [--bootstrap N] [--seed S]")
		fmt.Fprintln(stderr, "       pertinent agreement --db FILE --project NAME [...]")
		fmt.Fprintln(stderr, "       pertinent agreement --db FILE --project NAME --effects|--sources|--calibration|--preferences [--json]")
		fs.PrintDefaults()
	}
	if err := fs.Parse(args); err != nil {
		return err
	}
	if fs.NArg() > 0 {
		return fmt.Errorf("agreement: unexpected argument %q", fs.Arg(0))
	}
	if *scale < 2 || *scale > agreement.MaxScale {
		return fmt.Errorf("agreement: --scale %d out of range 2..%d", *scale, agreement.MaxScale)
	}
	if *boot < 0 {
		return fmt.Errorf("agreement: --bootstrap must be >= 0, got %d", *boot)
	}

	var data *agreement.Data
	var source string
	var goldGrades map[string]int
	switch {
	case *dbPath != "" && *from != "":
		return errors.New("agreement: give either --from or --db, not both")
	case *dbPath != "":
		if *project == "" {
			return errors.New("agreement: --db needs --project NAME")
		}
		st, p, err := openProject(ctx, *dbPath, *project)
		if err != nil {
			return fmt.Errorf("agreement: %w", err)
		}
		defer st.Close()
		if *sources {
			c, err := st.CompareSources(ctx, p.ID)
			if err != nil {
				return err
			}
			return printSources(stdout, c, *asJSON)
		}
		if *calibration {
			c, err := st.CalibrationRound(ctx, p.ID)
			if err != nil {
				return err
			}
			return printCalibration(stdout, c, *asJSON)
		}
		if *preferences {
			r, err := st.PreferenceFigures(ctx, p.ID)
			if err != nil {
				return err
			}
			return printPreferences(stdout, r, *asJSON)
		}
		if *effects {
			e, err := st.AssessorEffects(ctx, p.ID)
			if err != nil {
				return err
			}
			return printEffects(stdout, e, *asJSON)
		}
		d, gold, err := st.AgreementData(ctx, p.ID)
		if err != nil {
			return err
		}
		data, source, goldGrades = d, *dbPath+" project "+p.Name, gold
		// Same replicates and seed as the lead's pages, so both print the same intervals.
		given := map[string]bool{}
		fs.Visit(func(f *flag.Flag) { given[f.Name] = true })
		if !given["bootstrap"] {
			*boot = store.BootstrapReplicates(d.Judgments())
		}
		if !given["seed"] {
			*seed = store.BootstrapSeed
		}
	case *effects || *sources || *calibration || *preferences:
		return errors.New("agreement: --effects, --sources, --calibration and --preferences need --db and --project")
	case *from != "":
		d, err := readRatingsCSV(*from, *scale)
		if err != nil {
			return err
		}
		data, source = d, *from
	default:
		fs.Usage()
		return errors.New("agreement: --from FILE.csv is required")
	}
	if err := ctx.Err(); err != nil {
		return err
	}
	return writeAgreement(data, source, agreement.Options{Bootstrap: *boot, Seed: *seed, Gold: goldGrades}, *asJSON, stdout)
}

// writeAgreement computes the report for a built data set and prints it;
// any source of judgments (CSV, database) ends here.
func writeAgreement(d *agreement.Data, source string, o agreement.Options, asJSON bool, w io.Writer) error {
	rep := agreement.Compute(d, o)
	if asJSON {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(rep)
	}
	return writeAgreementText(w, source, rep)
}

// readRatingsCSV reads judgments from a CSV file whose header names the
// columns item, rater and grade (any order, other columns ignored). Errors
// name the file, the line and the reason.
func readRatingsCSV(path string, k int) (*agreement.Data, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	r := csv.NewReader(f)
	r.ReuseRecord = true
	head, err := r.Read()
	if err == io.EOF {
		return nil, fmt.Errorf("%s: empty file, want header item,rater,grade", path)
	}
	if err != nil {
		return nil, csvError(path, err)
	}
	col := map[string]int{"item": -1, "rater": -1, "grade": -1}
	for i, h := range head {
		h = strings.ToLower(strings.TrimSpace(strings.TrimPrefix(h, "\ufeff")))
		if c, ok := col[h]; ok && c < 0 {
			col[h] = i
		}
	}
	for _, name := range []string{"item", "rater", "grade"} {
		if col[name] < 0 {
			return nil, fmt.Errorf("%s:1: header lacks column %q (want item,rater,grade)", path, name)
		}
	}
	d := agreement.NewData(k)
	for {
		rec, err := r.Read()
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, csvError(path, err)
		}
		line, _ := r.FieldPos(0)
		item := strings.TrimSpace(rec[col["item"]])
		rater := strings.TrimSpace(rec[col["rater"]])
		gs := strings.TrimSpace(rec[col["grade"]])
		switch {
		case item == "":
			return nil, fmt.Errorf("%s:%d: empty item", path, line)
		case rater == "":
			return nil, fmt.Errorf("%s:%d: empty rater", path, line)
		case gs == "":
			return nil, fmt.Errorf("%s:%d: missing grade", path, line)
		}
		g, err := strconv.Atoi(gs)
		if err != nil {
			return nil, fmt.Errorf("%s:%d: grade %q is not an integer", path, line, gs)
		}
		if g < 0 || g >= k {
			return nil, fmt.Errorf("%s:%d: grade %d out of range 0..%d (--scale %d)", path, line, g, k-1, k)
		}
		if err := d.Add(item, rater, g); err != nil {
			return nil, fmt.Errorf("%s:%d: %v", path, line, err)
		}
	}
	return d, nil
}

func csvError(path string, err error) error {
	var pe *csv.ParseError
	if errors.As(err, &pe) {
		return fmt.Errorf("%s:%d: %v", path, pe.Line, pe.Err)
	}
	return fmt.Errorf("%s: %v", path, err)
}
