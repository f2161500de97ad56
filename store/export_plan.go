package store

import (
	"bytes"
	"context"
	"fmt"
	"strings"
	"time"

	"github.com/pertinent/pertinent/agreement"
	"github.com/pertinent/pertinent/export"
)

// ExportFormat is the file format of an export's data files.
type ExportFormat string

// Export formats.
const (
	FormatSVMlight ExportFormat = "svmlight" // one .svm file (+ group file) per split, and a qid map
	FormatQrels    ExportFormat = "qrels"    // one .qrels file per split
	FormatCSV      ExportFormat = "csv"      // one file, the split in a column
	FormatJSONL    ExportFormat = "jsonl"    // one file, the split in a field
)

// ExportRequest says what to export.
type ExportRequest struct {
	Policy export.LabelPolicy
	Format ExportFormat
	// Split is how queries are divided: Method "none" (or empty), "ratio" with Ratios, or
	// "k-fold" with Folds; Seed drives the shuffle.
	Split export.SplitSpec
	// RefineByPreferences refines SVMlight labels within each grade by the Bradley–Terry
	// order of the project's preference judgments (export.RefineRule).
	RefineByPreferences bool
}

// ExportPlan is a validated export, ready to write: the Dawid-Skene fit, the split and the
// project's agreement figures are computed up front, so a web handler can refuse a bad request
// before the first byte of a download goes out.
type ExportPlan struct {
	s       *Store
	project Project
	req     ExportRequest
	ds      map[int64]int
	assign  map[string]string // query -> split name; nil when not split
	queries []string          // the project's queries with pairs, sorted
	parts   []string          // split names in file order; "all" when not split
	agree   map[string]float64
	pairs   int
	// labels are the refined labels of the queries with a refined grade, by query and
	// document; refine is the manifest's account of them (nil without the option).
	labels map[[2]string]int
	refine *export.LabelRefinement
}

// PlanExport checks a request against a project and prepares it.
func (s *Store) PlanExport(ctx context.Context, projectID int64, req ExportRequest) (*ExportPlan, error) {
	p, err := s.Project(ctx, projectID)
	if err != nil {
		return nil, err
	}
	if err := req.Policy.Validate(); err != nil {
		return nil, err
	}
	if err := s.checkFillFrom(ctx, projectID, req.Policy.FillFrom); err != nil {
		return nil, err
	}
	switch req.Format {
	case FormatSVMlight, FormatQrels, FormatCSV, FormatJSONL:
	default:
		return nil, errorf(CodeInvalid, fmt.Sprintf("unknown format %q (want svmlight, qrels, csv or jsonl)", req.Format))
	}
	plan := &ExportPlan{s: s, project: p, req: req, parts: []string{"all"}}
	if plan.pairs, err = s.PairCount(ctx, projectID); err != nil {
		return nil, err
	}
	if plan.queries, err = s.ExportQueryIDs(ctx, projectID); err != nil {
		return nil, err
	}
	if err := plan.planSplit(ctx); err != nil {
		return nil, err
	}
	if req.Policy.Consensus == export.ConsensusDawidSkene {
		if plan.ds, err = s.DawidSkeneGrades(ctx, projectID); err != nil {
			return nil, err
		}
	}
	if req.RefineByPreferences {
		if req.Format != FormatSVMlight {
			return nil, errorf(CodeInvalid, "refining labels by preferences is for SVMlight exports only")
		}
		if err := plan.planRefinement(ctx); err != nil {
			return nil, err
		}
	}
	if plan.agree, err = s.agreementFigures(ctx, projectID); err != nil {
		return nil, err
	}
	return plan, nil
}

func (pl *ExportPlan) planSplit(ctx context.Context) error {
	sp := &pl.req.Split
	if sp.Method == "" {
		sp.Method = "none"
	}
	if sp.Method == "none" {
		sp.Ratios, sp.Folds = nil, 0
		return nil
	}
	qs := pl.queries
	var err error
	switch sp.Method {
	case "ratio":
		if sp.Ratios == nil {
			return errorf(CodeInvalid, "a ratio split needs three ratios: train, validation, test")
		}
		sp.Folds = 0
		pl.assign, err = export.SplitByRatio(qs, *sp.Ratios, sp.Seed)
		pl.parts = pl.parts[:0]
		for _, part := range []struct {
			name  string
			share float64
		}{{export.SplitTrain, sp.Ratios.Train}, {export.SplitValidation, sp.Ratios.Validation}, {export.SplitTest, sp.Ratios.Test}} {
			if part.share > 0 {
				pl.parts = append(pl.parts, part.name)
			}
		}
	case "k-fold":
		sp.Ratios = nil
		pl.assign, err = export.SplitKFold(qs, sp.Folds, sp.Seed)
		pl.parts = pl.parts[:0]
		for i := range sp.Folds {
			pl.parts = append(pl.parts, export.FoldName(i))
		}
	default:
		return errorf(CodeInvalid, fmt.Sprintf("unknown split %q (want none, ratio or k-fold)", sp.Method))
	}
	if err != nil {
		return err
	}
	return nil
}

// planRefinement reads the fitted Bradley–Terry strengths of every query's compared
// documents and the final grades the export will write for those queries (one pass over the
// pairs without features), and forms the refined labels with export.RefineQuery.
func (pl *ExportPlan) planRefinement(ctx context.Context) error {
	rep, err := pl.s.PreferenceFigures(ctx, pl.project.ID)
	if err != nil {
		return err
	}
	strengths := map[string]map[string]float64{}
	for _, q := range rep.Queries {
		for _, sc := range q.Fit.Scores {
			if sc.Wins+sc.Losses+sc.Ties == 0 {
				continue // in the fit with the prior alone: never compared
			}
			if strengths[q.Query] == nil {
				strengths[q.Query] = map[string]float64{}
			}
			strengths[q.Query][sc.Document] = sc.Score
		}
	}
	grades := map[string]map[string]int{}
	scan := ExportScan{DawidSkene: pl.ds, FillFrom: pl.req.Policy.FillFrom}
	err = pl.s.ExportPairs(ctx, pl.project.ID, scan, func(p *ExportPair) error {
		if strengths[p.QueryID] == nil {
			return nil
		}
		if dec := pl.req.Policy.Apply(p.Labels); dec.Include {
			if grades[p.QueryID] == nil {
				grades[p.QueryID] = map[string]int{}
			}
			grades[p.QueryID][p.DocID] = dec.Grade
		}
		return nil
	})
	if err != nil {
		return err
	}
	pl.labels = map[[2]string]int{}
	pl.refine = &export.LabelRefinement{By: "bradley-terry", Threshold: rep.Threshold, Rule: export.RefineRule}
	for q, gs := range grades {
		r := export.RefineQuery(gs, strengths[q])
		pl.refine.Grades += r.Grades
		pl.refine.Documents += r.Documents
		pl.refine.Skipped += r.Skipped
		if r.Grades == 0 {
			continue
		}
		pl.refine.Queries++
		for d, l := range r.Labels {
			pl.labels[[2]string{q, d}] = l
		}
	}
	return nil
}

// agreementFigures are the project's headline agreement figures for the manifest; figures
// that are undefined (too few judgments) are left out.
func (s *Store) agreementFigures(ctx context.Context, projectID int64) (map[string]float64, error) {
	d, gold, err := s.AgreementData(ctx, projectID)
	if err != nil {
		return nil, err
	}
	out := map[string]float64{}
	if d.Judgments() == 0 {
		return out, nil
	}
	rep := agreement.Compute(d, agreement.Options{Gold: gold})
	for name, v := range map[string]agreement.Value{
		"fleiss_kappa":               rep.FleissKappa,
		"krippendorff_alpha_ordinal": rep.KrippendorffAlpha.Ordinal,
		"mean_quadratic_kappa":       rep.MeanQuadraticKappa,
	} {
		if v.OK {
			out[name] = v.V
		}
	}
	return out, nil
}

// Passes is how many times Write reads the project's pairs into a sink: once, or once per
// split when a sequential sink needs the split files one after another.
func (pl *ExportPlan) Passes(sequential bool) int {
	if sequential && pl.perSplitFiles() {
		return len(pl.parts)
	}
	return 1
}

// Pairs is the number of pairs in the project: one pass reads this many.
func (pl *ExportPlan) Pairs() int { return pl.pairs }

// Request is the request as planned (defaults filled in).
func (pl *ExportPlan) Request() ExportRequest { return pl.req }

func (pl *ExportPlan) perSplitFiles() bool {
	return pl.req.Format == FormatSVMlight || pl.req.Format == FormatQrels
}

// File names of an export; per-split files take the split's name ("all" when not split).
const (
	ManifestFile = "manifest.json"
	QIDMapFile   = "qid-map.tsv"
)

// partFile is one split's data file with its writer and, for SVMlight, its group file.
type partFile struct {
	name  string
	data  export.RowWriter
	rows  func() int
	group *export.GroupWriter
	gbuf  bytes.Buffer // group counts: one short line per query
}

// Write streams the export into sink and returns its manifest, which is also written to the
// sink as manifest.json, last. progress, when not nil, is called after every pair read, with
// the number read so far over all passes.
func (pl *ExportPlan) Write(ctx context.Context, sink export.Sink, now time.Time, progress func(int)) (export.Manifest, error) {
	m := export.NewManifest(pl.req.Policy, now)
	m.Project = pl.project.Name
	m.Agreement = pl.agree
	if pl.refine != nil {
		r := *pl.refine
		m.Refinement = &r
	}
	if pl.req.Split.Method != "none" {
		split := pl.req.Split
		m.Split = &split
	}
	tally := export.NewTally()
	qids := pl.qidMap()
	written := map[string]bool{} // queries with rows, for the qid map file
	excluded, fromSources := map[string]int{}, map[string]int{}
	scan := ExportScan{Features: pl.req.Format == FormatSVMlight || pl.req.Format == FormatJSONL, DawidSkene: pl.ds, FillFrom: pl.req.Policy.FillFrom}

	var passes [][]string // split names written in each pass
	switch {
	case !pl.perSplitFiles():
		passes = [][]string{pl.parts}
	case sink.Sequential():
		for _, p := range pl.parts {
			passes = append(passes, []string{p})
		}
	default:
		passes = [][]string{pl.parts}
	}

	read := 0
	var feats []export.Feature
	for _, names := range passes {
		files, err := pl.openPass(sink, names, qids)
		if err != nil {
			return m, err
		}
		err = pl.s.ExportPairs(ctx, pl.project.ID, scan, func(p *ExportPair) error {
			read++
			if progress != nil {
				progress(read)
			}
			split := pl.assign[p.QueryID]
			part := split
			if part == "" {
				part = "all"
			}
			f := files[part]
			if !pl.perSplitFiles() {
				f = files["all"]
			}
			if f == nil {
				return nil // another pass writes this split
			}
			dec := pl.req.Policy.Apply(p.Labels)
			if !dec.Include {
				excluded[reasonKey(dec.Excluded)]++ // each pair reaches this in one pass only
				return nil
			}
			if dec.Source != "" {
				fromSources[dec.Source]++
			}
			row := export.Row{QueryID: p.QueryID, DocID: p.DocID, Grade: dec.Grade, Decided: dec.Decided,
				Judgments: p.Judgments, Agreement: export.AgreementOf(p.Judgments), Split: split}
			if scan.Features {
				if feats, err = p.Features(feats); err != nil {
					return err
				}
				row.Features = feats
			}
			out := row
			if m.Refinement != nil {
				if l, ok := pl.labels[[2]string{p.QueryID, p.DocID}]; ok {
					out.Grade = l
				}
				m.Refinement.MaxLabel = max(m.Refinement.MaxLabel, out.Grade)
			}
			if err := f.data.Write(out); err != nil {
				return err
			}
			written[p.QueryID] = true
			if f.group != nil {
				if err := f.group.Write(row); err != nil {
					return err
				}
			}
			return tally.Write(row)
		})
		if err != nil {
			return m, err
		}
		if err := pl.closePass(sink, names, files, &m); err != nil {
			return m, err
		}
	}
	if pl.req.Format == FormatSVMlight {
		w, err := sink.Create(QIDMapFile)
		if err != nil {
			return m, err
		}
		used := map[string]int{}
		for q := range written {
			used[q] = qids.QID(q)
		}
		out, err := export.QIDMapFrom(used)
		if err != nil {
			return m, err
		}
		if err := out.WriteTSV(w); err != nil {
			return m, err
		}
		m.Files = append(m.Files, export.ManifestFile{Name: QIDMapFile, Format: "qid-map", Rows: out.Len()})
	}
	tally.Fill(&m)
	if len(excluded) > 0 {
		m.Excluded = excluded
	}
	if len(fromSources) > 0 {
		m.FromSources = fromSources
	}
	w, err := sink.Create(ManifestFile)
	if err != nil {
		return m, err
	}
	return m, m.Write(w)
}

// qidMap numbers queries in file order before anything is written: the queries of the first
// split, sorted, then those of the next. The numbers so do not depend on whether the splits
// are written in one pass or one after another.
func (pl *ExportPlan) qidMap() *export.QIDMap {
	m := export.NewQIDMap()
	for _, part := range pl.parts {
		for _, q := range pl.queries {
			if pl.assign == nil || pl.assign[q] == part {
				m.QID(q)
			}
		}
	}
	return m
}

// reasonKey drops the numbers from an exclusion reason ("too few judgments (1 of 3)"), so
// the manifest counts pairs per kind of reason.
func reasonKey(why string) string {
	if i := strings.Index(why, " ("); i > 0 {
		return why[:i]
	}
	return why
}

func (pl *ExportPlan) openPass(sink export.Sink, names []string, qids *export.QIDMap) (map[string]*partFile, error) {
	files := map[string]*partFile{}
	if !pl.perSplitFiles() {
		name := "pairs.csv"
		if pl.req.Format == FormatJSONL {
			name = "pairs.jsonl"
		}
		w, err := sink.Create(name)
		if err != nil {
			return nil, err
		}
		f := &partFile{name: name}
		if pl.req.Format == FormatJSONL {
			jw := export.NewJSONLWriter(w)
			f.data, f.rows = jw, jw.Rows
		} else {
			cw := export.NewCSVWriter(w)
			f.data, f.rows = cw, cw.Rows
		}
		files["all"] = f
		return files, nil
	}
	for _, part := range names {
		f := &partFile{}
		if pl.req.Format == FormatSVMlight {
			f.name = part + ".svm"
		} else {
			f.name = part + ".qrels"
		}
		w, err := sink.Create(f.name)
		if err != nil {
			return nil, err
		}
		if pl.req.Format == FormatSVMlight {
			sw := export.NewSVMlightWriter(w, qids, export.SVMlightOptions{})
			f.data, f.rows = sw, sw.Rows
			f.group = export.NewGroupWriter(&f.gbuf)
		} else {
			qw := export.NewQrelsWriter(w)
			f.data, f.rows = qw, qw.Rows
		}
		files[part] = f
	}
	return files, nil
}

// closePass flushes the data files of a pass, then writes their group files (counted in
// memory while the data went out, since a sequential sink cannot hold two files open).
func (pl *ExportPlan) closePass(sink export.Sink, names []string, files map[string]*partFile, m *export.Manifest) error {
	order := names
	if !pl.perSplitFiles() {
		order = []string{"all"}
	}
	for _, part := range order {
		f := files[part]
		if err := f.data.Close(); err != nil {
			return err
		}
		m.Files = append(m.Files, export.ManifestFile{Name: f.name, Format: string(pl.req.Format), Rows: f.rows()})
	}
	for _, part := range order {
		f := files[part]
		if f.group == nil {
			continue
		}
		if err := f.group.Close(); err != nil {
			return err
		}
		name := part + ".group"
		w, err := sink.Create(name)
		if err != nil {
			return err
		}
		if _, err := w.Write(f.gbuf.Bytes()); err != nil {
			return err
		}
		m.Files = append(m.Files, export.ManifestFile{Name: name, Format: "group", Rows: f.group.Groups()})
	}
	return nil
}
