package store

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"os"
	"os/exec"
	"path/filepath"
	"slices"
	"testing"
	"time"

	"github.com/pertinent/pertinent/export"
	"github.com/pertinent/pertinent/internal/reference"
)

// refineFixture is a preference project of two queries of five documents, two assessors
// answering every comparison. Query A: Aa, Ab graded 4, Ac, Ad graded 3, Ae 2; both assessors
// hold Ab > Ad > Aa > Ac, so the fit puts Ad (grade 3) above Aa (grade 4). Query B: Ba, Bb
// graded 4, Bc 3, Bd 1, Be 0, every comparison answered "neither relevant", so nothing of B
// is ordered.
func refineFixture(t *testing.T) (*Store, Project) {
	t.Helper()
	s := openTest(t)
	ctx := context.Background()
	grades := [][]int{{4, 4, 3, 3, 2}, {4, 4, 3, 1, 0}}
	p, _, users := prefFixture(t, s, 2, 5, 2, func(q, d int) int { return grades[q][d] })
	rank := map[string]int{"Ab": 0, "Ad": 1, "Aa": 2, "Ac": 3}
	for round := 0; ; round++ {
		if round > 200 {
			t.Fatal("the comparisons never ran out")
		}
		answered := false
		for _, u := range users {
			v, err := s.NextComparison(ctx, p.ID, u)
			if errors.Is(err, ErrNoWork) {
				continue
			}
			if err != nil {
				t.Fatal(err)
			}
			outcome := "neither"
			if v.Query.ExternalID == "A" {
				outcome = "right"
				if rank[v.Left.ExternalID] < rank[v.Right.ExternalID] {
					outcome = "left"
				}
			}
			answer(t, s, v, u, outcome)
			answered = true
		}
		if !answered {
			break
		}
	}
	return s, p
}

var refinePolicy = export.LabelPolicy{AdjudicationFirst: true, Consensus: export.ConsensusMedian, MinJudgments: 1}

// refineExport writes an export into a folder at a fixed time and reads every file back.
func refineExport(t *testing.T, s *Store, p Project, req ExportRequest) (map[string][]byte, export.Manifest) {
	t.Helper()
	ctx := context.Background()
	plan, err := s.PlanExport(ctx, p.ID, req)
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	sink := &export.DirSink{Dir: dir}
	m, err := plan.Write(ctx, sink, time.Date(2026, 1, 2, 3, 4, 5, 0, time.UTC), nil)
	if err != nil {
		t.Fatal(err)
	}
	if err := sink.Close(); err != nil {
		t.Fatal(err)
	}
	return dirFiles(t, dir), m
}

// Without the option the SVMlight export is byte for byte what it was before refining existed:
// testdata/refine-off holds the files written then (same project, same clock).
func TestExportWithoutRefinementIsUnchanged(t *testing.T) {
	s, p := refineFixture(t)
	files, _ := refineExport(t, s, p, ExportRequest{Policy: refinePolicy, Format: FormatSVMlight})
	dir := filepath.Join("testdata", "refine-off")
	if os.Getenv("PERTINENT_WRITE_GOLDEN") != "" {
		for name, b := range files {
			if err := os.WriteFile(filepath.Join(dir, name), b, 0o644); err != nil {
				t.Fatal(err)
			}
		}
	}
	want := dirFiles(t, dir)
	names := slices.Sorted(mapKeys(files))
	if !slices.Equal(names, slices.Sorted(mapKeys(want))) {
		t.Fatalf("files %v, want %v", names, slices.Sorted(mapKeys(want)))
	}
	for _, name := range names {
		if !bytes.Equal(files[name], want[name]) {
			t.Errorf("%s changed:\n%s\nwant:\n%s", name, files[name], want[name])
		}
	}
}

// With the option, query A's labels follow the fit within each grade and never cross a
// grade: Ad, preferred to Aa by both assessors, stays below it because Aa is graded 4 and Ad
// 3. Query B, with no order from its answers, keeps its grades. The manifest says so.
func TestExportRefinesLabelsWithinGrades(t *testing.T) {
	s, p := refineFixture(t)
	files, m := refineExport(t, s, p, ExportRequest{Policy: refinePolicy, Format: FormatSVMlight, RefineByPreferences: true})
	// Worked by hand from export.RefineRule: Ae 2; grade 3 takes 3 (Ac) and 4 (Ad); grade 4
	// then starts at 5 (Aa) and Ab gets 6.
	got := map[string]string{}
	for _, line := range bytes.Split(bytes.TrimSpace(files["all.svm"]), []byte("\n")) {
		f := bytes.Fields(line)
		got[string(f[len(f)-1])] = string(f[0])
	}
	for doc, label := range map[string]string{"Aa": "5", "Ab": "6", "Ac": "3", "Ad": "4", "Ae": "2",
		"Ba": "4", "Bb": "4", "Bc": "3", "Bd": "1", "Be": "0"} {
		if got[doc] != label {
			t.Errorf("%s: label %s, want %s", doc, got[doc], label)
		}
	}
	r := m.Refinement
	if r == nil || r.By != "bradley-terry" || r.Threshold != 3 || r.Queries != 1 || r.Grades != 2 || r.Documents != 4 ||
		r.Skipped != 0 || r.MaxLabel != 6 || r.Rule != export.RefineRule {
		t.Fatalf("manifest refinement %+v", r)
	}
	if !bytes.Contains(files["manifest.json"], []byte(`"label_refinement": {`)) || !bytes.Contains(files["manifest.json"], []byte(`"max_label": 6`)) {
		t.Errorf("manifest.json does not state the refinement:\n%s", files["manifest.json"])
	}
	// The manifest's grades are still the final grades, and the group file and qid map are
	// those of the plain export.
	plain, _ := refineExport(t, s, p, ExportRequest{Policy: refinePolicy, Format: FormatSVMlight})
	for _, name := range []string{"all.group", "qid-map.tsv"} {
		if !bytes.Equal(files[name], plain[name]) {
			t.Errorf("%s differs from the plain export", name)
		}
	}
	if m.Grades["4"] != 4 || m.Grades["3"] != 3 {
		t.Errorf("manifest grades %v", m.Grades)
	}
}

func TestExportRefinementIsForSVMlightOnly(t *testing.T) {
	s, p := refineFixture(t)
	_, err := s.PlanExport(context.Background(), p.ID, ExportRequest{Policy: refinePolicy, Format: FormatQrels, RefineByPreferences: true})
	if code := ErrorCode(err); code != CodeInvalid {
		t.Fatalf("qrels with refinement: %v (code %v)", err, code)
	}
}

// sklearnLabels prints the labels and query ids scikit-learn's SVMlight reader finds in a file.
const sklearnLabels = `
import json, sys
from sklearn.datasets import load_svmlight_file
X, y, qid = load_svmlight_file(sys.argv[1], query_id=True, zero_based=False, n_features=1)
print(json.dumps({"y": [float(v) for v in y], "qid": [int(q) for q in qid]}))
`

// A reader ranking trainers use (scikit-learn's load_svmlight_file with query_id) takes the
// refined file as it is: whole-number labels, in the file's order, with the queries grouped.
func TestRefinedLabelsReadBySklearn(t *testing.T) {
	refPython := reference.RequirePython(t, "sklearn")
	s, p := refineFixture(t)
	dir := t.TempDir()
	files, _ := refineExport(t, s, p, ExportRequest{Policy: refinePolicy, Format: FormatSVMlight, RefineByPreferences: true})
	path := filepath.Join(dir, "all.svm")
	if err := os.WriteFile(path, files["all.svm"], 0o644); err != nil {
		t.Fatal(err)
	}
	out, err := exec.Command(refPython, "-c", sklearnLabels, path).Output()
	if err != nil {
		t.Fatalf("python: %v", err)
	}
	var got struct {
		Y   []float64 `json:"y"`
		QID []int     `json:"qid"`
	}
	if err := json.Unmarshal(out, &got); err != nil {
		t.Fatal(err)
	}
	// Aa Ab Ac Ad Ae, then Ba … Be, as TestExportRefinesLabelsWithinGrades works them out.
	wantY := []float64{5, 6, 3, 4, 2, 4, 4, 3, 1, 0}
	wantQ := []int{1, 1, 1, 1, 1, 2, 2, 2, 2, 2}
	if !slices.Equal(got.Y, wantY) || !slices.Equal(got.QID, wantQ) {
		t.Errorf("sklearn read labels %v qids %v, want %v %v", got.Y, got.QID, wantY, wantQ)
	}
}
