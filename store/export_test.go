package store

import (
	"archive/zip"
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"io"
	"maps"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/pertinent/pertinent/export"
)

func TestExportPairsCarryWhatThePolicyNeeds(t *testing.T) {
	f := newExportFixture(t)
	var keys []string
	seen := map[string]ExportPair{}
	err := f.s.ExportPairs(context.Background(), f.project.ID, ExportScan{Features: true}, func(p *ExportPair) error {
		key := p.QueryID + " " + p.DocID
		keys = append(keys, key)
		fs, err := p.Features(nil)
		if err != nil {
			return err
		}
		want := f.feats[key]
		if len(fs) != len(want) {
			t.Errorf("%s: %d features, want %d", key, len(fs), len(want))
		}
		for i := range min(len(fs), len(want)) {
			if fs[i].Index != int(want[i].Index) || fs[i].Value != want[i].Value {
				t.Errorf("%s: feature %d = %+v, want %+v", key, i, fs[i], want[i])
			}
		}
		c := *p
		c.Labels.Grades = slices.Clone(p.Labels.Grades)
		c.Judgments = slices.Clone(p.Judgments)
		seen[key] = c
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if len(keys) != 18 || !slices.IsSorted(keys) {
		t.Fatalf("streamed %d pairs in order %v; want 18 sorted by query then document", len(keys), keys)
	}
	if p := seen["q1 q1-d1"]; p.Labels.Adjudicated == nil || *p.Labels.Adjudicated != 1 {
		t.Errorf("q1-d1: adjudicated %v, want the current adjudication 1 (not the superseded 4)", p.Labels.Adjudicated)
	}
	if p := seen["q1 q1-d2"]; p.Labels.Adjudicated != nil || !slices.Equal(p.Labels.Grades, []int{0, 1, 4}) {
		t.Errorf("q1-d2: %+v, want grades 0 1 4 and no adjudication", p.Labels)
	}
	if p := seen["q2 q2-d1"]; !p.Labels.Flagged || p.Labels.CannotJudge != 1 || !slices.Equal(p.Labels.Grades, []int{4, 4}) {
		t.Errorf("q2-d1: %+v, want flagged, one cannot-judge, grades 4 4", p.Labels)
	}
	p := seen["q2 q2-d2"]
	if p.Labels.Flagged || p.Labels.CannotJudge != 1 || !slices.Equal(p.Labels.Grades, []int{2, 3}) {
		t.Errorf("q2-d2: %+v, want not flagged, one cannot-judge, grades 2 3", p.Labels)
	}
	wantJ := []export.JudgmentDetail{{Assessor: "amir", CannotJudge: true, Reason: "language"}, {Assessor: "bea", Grade: 2}, {Assessor: "cyd", Grade: 3}}
	if !slices.Equal(p.Judgments, wantJ) {
		t.Errorf("q2-d2 judgments %+v, want %+v", p.Judgments, wantJ)
	}
	if !seen["q2 q2-d3"].Labels.Gold || seen["q2 q2-d2"].Labels.Gold {
		t.Error("gold flag wrong: q2-d3 is the only gold pair")
	}
}

// readCSVExport reads pairs.csv into "query doc" -> [grade, decided, split].
func readCSVExport(t *testing.T, path string) map[string][3]string {
	t.Helper()
	fh, err := os.Open(path)
	if err != nil {
		t.Fatal(err)
	}
	defer fh.Close()
	recs, err := csv.NewReader(fh).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if !slices.Equal(recs[0], export.CSVHeader) {
		t.Fatalf("header %v", recs[0])
	}
	out := map[string][3]string{}
	for _, r := range recs[1:] {
		out[r[0]+" "+r[1]] = [3]string{r[2], r[3], r[4]}
	}
	return out
}

func exportTo(t *testing.T, f *exportFixture, req ExportRequest) (string, export.Manifest) {
	t.Helper()
	ctx := context.Background()
	plan, err := f.s.PlanExport(ctx, f.project.ID, req)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	sink := &export.DirSink{Dir: dir}
	m, err := plan.Write(ctx, sink, time.Date(2025, 1, 2, 3, 4, 5, 0, time.UTC), nil)
	if err != nil {
		t.Fatal(err)
	}
	if err := sink.Close(); err != nil {
		t.Fatal(err)
	}
	return dir, m
}

func TestExportLabelPolicyFromDatabase(t *testing.T) {
	f := newExportFixture(t)
	two := 2
	policy := export.LabelPolicy{AdjudicationFirst: true, Consensus: export.ConsensusMedian, MinJudgments: 2,
		MaxDisagreement: &two, ExcludeFlagged: true, ExcludeGold: true}
	dir, m := exportTo(t, f, ExportRequest{Policy: policy, Format: FormatCSV})
	rows := readCSVExport(t, filepath.Join(dir, "pairs.csv"))

	if r := rows["q1 q1-d1"]; r[0] != "1" || r[1] != "adjudicated" {
		t.Errorf("adjudicated pair exported as %v; want grade 1, adjudicated (its judgments say 3 3 2)", r)
	}
	if r := rows["q2 q2-d2"]; r[0] != "2" || r[1] != "median of 2" {
		t.Errorf("pair with a cannot-judge answer exported as %v; want the lower median 2 of 2 grades", r)
	}
	for key, why := range map[string]string{"q1 q1-d2": "spread 4 > 2", "q1 q1-d3": "one grade < 2", "q2 q2-d1": "flagged", "q2 q2-d3": "gold"} {
		if _, ok := rows[key]; ok {
			t.Errorf("%s exported; it should be left out (%s)", key, why)
		}
	}
	if len(rows) != 14 {
		t.Errorf("%d rows exported, want 18 pairs - 4 left out = 14", len(rows))
	}
	if want := map[string]int{"disagreement": 1, "too few judgments": 1, "flagged": 1, "gold pair": 1}; !maps.Equal(m.Excluded, want) {
		t.Errorf("manifest excluded %v, want %v", m.Excluded, want)
	}
	// The manifest's counts are those of the file.
	grades := map[string]int{}
	queries := map[string]bool{}
	for key, r := range rows {
		grades[r[0]]++
		queries[strings.Fields(key)[0]] = true
	}
	if m.Rows != len(rows) || m.Queries != len(queries) || !maps.Equal(m.Grades, grades) {
		t.Errorf("manifest rows %d queries %d grades %v; file has %d rows, %d queries, grades %v", m.Rows, m.Queries, m.Grades, len(rows), len(queries), grades)
	}
	if len(m.Files) != 1 || m.Files[0].Name != "pairs.csv" || m.Files[0].Rows != len(rows) {
		t.Errorf("manifest files %+v", m.Files)
	}
	var onDisk export.Manifest
	b, err := os.ReadFile(filepath.Join(dir, ManifestFile))
	if err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &onDisk); err != nil || onDisk.Rows != m.Rows || onDisk.PolicyDescription != policy.Describe() || onDisk.Project != "Export" {
		t.Errorf("manifest.json %s (err %v) differs from the manifest returned", b, err)
	}
	for _, k := range []string{"fleiss_kappa", "krippendorff_alpha_ordinal", "mean_quadratic_kappa"} {
		if _, ok := m.Agreement[k]; !ok {
			t.Errorf("manifest agreement lacks %s: %v", k, m.Agreement)
		}
	}

	// Without adjudication first the same pair takes the median of its grades; excluding
	// cannot-judge answers leaves out q2-d2.
	dir, _ = exportTo(t, f, ExportRequest{Policy: export.LabelPolicy{Consensus: export.ConsensusMedian, ExcludeCannotJudge: true}, Format: FormatCSV})
	rows = readCSVExport(t, filepath.Join(dir, "pairs.csv"))
	if r := rows["q1 q1-d1"]; r[0] != "3" || r[1] != "median of 3" {
		t.Errorf("without adjudication first q1-d1 = %v, want median 3 of 3", r)
	}
	if _, ok := rows["q2 q2-d2"]; ok {
		t.Error("q2-d2 has a cannot-judge answer and was exported under exclude-cannot-judge")
	}
	if r := rows["q1 q1-d3"]; r[0] != "2" {
		t.Errorf("with one judgment enough, q1-d3 = %v, want 2", r)
	}
}

// splitFiles reads each .svm file of an export into its qids, by file.
func svmQIDs(t *testing.T, files map[string][]byte) map[string]map[string]bool {
	t.Helper()
	out := map[string]map[string]bool{}
	for name, b := range files {
		if !strings.HasSuffix(name, ".svm") {
			continue
		}
		out[name] = map[string]bool{}
		for line := range strings.SplitSeq(strings.TrimSpace(string(b)), "\n") {
			if line == "" {
				continue
			}
			out[name][strings.Fields(line)[1]] = true
		}
	}
	return out
}

func dirFiles(t *testing.T, dir string) map[string][]byte {
	t.Helper()
	ents, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	out := map[string][]byte{}
	for _, e := range ents {
		b, err := os.ReadFile(filepath.Join(dir, e.Name()))
		if err != nil {
			t.Fatal(err)
		}
		out[e.Name()] = b
	}
	return out
}

func TestExportSplitKeepsQueriesWhole(t *testing.T) {
	f := newExportFixture(t)
	ctx := context.Background()
	policy := export.LabelPolicy{AdjudicationFirst: true, Consensus: export.ConsensusMedian}
	req := ExportRequest{Policy: policy, Format: FormatSVMlight,
		Split: export.SplitSpec{Method: "ratio", Ratios: &export.Ratios{Train: 0.5, Validation: 0.25, Test: 0.25}, Seed: 7}}
	dir, m := exportTo(t, f, req)
	files := dirFiles(t, dir)
	for _, name := range []string{"train.svm", "train.group", "validation.svm", "validation.group", "test.svm", "test.group", QIDMapFile, ManifestFile} {
		if _, ok := files[name]; !ok {
			t.Errorf("export lacks %s; has %v", name, slices.Sorted(mapKeys(files)))
		}
	}
	// No query crosses splits, and every query is somewhere.
	where := map[string]string{}
	for name, qids := range svmQIDs(t, files) {
		for q := range qids {
			if other, dup := where[q]; dup {
				t.Errorf("%s is in both %s and %s", q, other, name)
			}
			where[q] = name
		}
	}
	if len(where) != 6 {
		t.Errorf("%d queries across the split files, want 6", len(where))
	}
	// 0.5/0.25/0.25 of 6 queries: 3, 2 (largest remainder, earlier part first), 1.
	if m.Splits["train"].Queries != 3 || m.Splits["validation"].Queries+m.Splits["test"].Queries != 3 {
		t.Errorf("split sizes %+v", m.Splits)
	}
	// Manifest rows are the files' lines; group files add up to them.
	for _, mf := range m.Files {
		lines := strings.Count(string(files[mf.Name]), "\n")
		if mf.Rows != lines {
			t.Errorf("manifest says %s has %d rows; it has %d lines", mf.Name, mf.Rows, lines)
		}
		if mf.Format == "group" {
			sum := 0
			for l := range strings.SplitSeq(strings.TrimSpace(string(files[mf.Name])), "\n") {
				n, _ := strconv.Atoi(l)
				sum += n
			}
			data := strings.TrimSuffix(mf.Name, ".group") + ".svm"
			if sum != strings.Count(string(files[data]), "\n") {
				t.Errorf("%s adds up to %d rows, %s has %d", mf.Name, sum, data, strings.Count(string(files[data]), "\n"))
			}
		}
	}

	// The same seed gives the same files, through a zip stream (one file at a time, a pass per
	// split) as through a directory.
	plan, err := f.s.PlanExport(ctx, f.project.ID, req)
	if err != nil {
		t.Fatal(err)
	}
	if plan.Passes(true) != 3 || plan.Passes(false) != 1 {
		t.Errorf("passes %d sequential, %d not; want 3 and 1", plan.Passes(true), plan.Passes(false))
	}
	var buf bytes.Buffer
	zs := export.NewZipSink(&buf, time.Now())
	if _, err := plan.Write(ctx, zs, time.Date(2025, 1, 2, 3, 4, 5, 0, time.UTC), nil); err != nil {
		t.Fatal(err)
	}
	if err := zs.Close(); err != nil {
		t.Fatal(err)
	}
	zr, err := zip.NewReader(bytes.NewReader(buf.Bytes()), int64(buf.Len()))
	if err != nil {
		t.Fatal(err)
	}
	if len(zr.File) != len(files) {
		t.Errorf("zip has %d files, directory %d", len(zr.File), len(files))
	}
	for _, zf := range zr.File {
		rc, _ := zf.Open()
		b, _ := io.ReadAll(rc)
		rc.Close()
		if zf.Name == ManifestFile {
			continue // same counts; its file order differs (group files follow each split)
		}
		if !bytes.Equal(b, files[zf.Name]) {
			t.Errorf("%s differs between the zip and the directory export", zf.Name)
		}
	}

	// A different seed moves queries; k folds put each query in exactly one fold.
	_, m2 := exportTo(t, f, ExportRequest{Policy: policy, Format: FormatQrels, Split: export.SplitSpec{Method: "k-fold", Folds: 3, Seed: 7}})
	for i := range 3 {
		if got := m2.Splits[export.FoldName(i)].Queries; got != 2 {
			t.Errorf("fold %d has %d queries, want 2 of 6", i+1, got)
		}
	}
	if m2.Rows != 18 {
		t.Errorf("k-fold qrels export has %d rows, want all 18 pairs", m2.Rows)
	}
	if _, err := f.s.PlanExport(ctx, f.project.ID, ExportRequest{Policy: policy, Format: FormatQrels, Split: export.SplitSpec{Method: "k-fold", Folds: 7}}); ErrorCode(err) != CodeInvalid {
		t.Errorf("7 folds of 6 queries: err %v, want CodeInvalid", err)
	}
	if _, err := f.s.PlanExport(ctx, f.project.ID, ExportRequest{Policy: export.LabelPolicy{Consensus: "vote"}, Format: FormatQrels}); ErrorCode(err) != CodeInvalid {
		t.Errorf("unknown consensus: err %v, want CodeInvalid", err)
	}
}

func mapKeys[V any](m map[string]V) func(func(string) bool) {
	return func(yield func(string) bool) {
		for k := range m {
			if !yield(k) {
				return
			}
		}
	}
}

func TestExportSameSeedSameSplit(t *testing.T) {
	f := newExportFixture(t)
	policy := export.LabelPolicy{Consensus: export.ConsensusMajority}
	spec := func(seed uint64) ExportRequest {
		return ExportRequest{Policy: policy, Format: FormatJSONL,
			Split: export.SplitSpec{Method: "ratio", Ratios: &export.Ratios{Train: 0.5, Validation: 0.5}, Seed: seed}}
	}
	splitOf := func(seed uint64) map[string]string {
		dir, _ := exportTo(t, f, spec(seed))
		b, err := os.ReadFile(filepath.Join(dir, "pairs.jsonl"))
		if err != nil {
			t.Fatal(err)
		}
		out := map[string]string{}
		for line := range strings.SplitSeq(strings.TrimSpace(string(b)), "\n") {
			var r struct{ QueryID, Split string }
			var raw map[string]any
			json.Unmarshal([]byte(line), &raw)
			r.QueryID, r.Split = raw["query_id"].(string), raw["split"].(string)
			if prev, ok := out[r.QueryID]; ok && prev != r.Split {
				t.Errorf("query %s in both %s and %s", r.QueryID, prev, r.Split)
			}
			out[r.QueryID] = r.Split
		}
		return out
	}
	a, b := splitOf(11), splitOf(11)
	if len(a) != 6 || !maps.Equal(a, b) {
		t.Errorf("seed 11 twice: %v and %v", a, b)
	}
	moved := false
	for seed := uint64(12); seed < 20 && !moved; seed++ {
		moved = !maps.Equal(a, splitOf(seed))
	}
	if !moved {
		t.Error("eight other seeds all gave the split of seed 11: the seed is not used")
	}
}
