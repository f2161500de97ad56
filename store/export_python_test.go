package store

import (
	"bytes"
	"encoding/json"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/export"
	"github.com/pertinent/pertinent/internal/reference"
)

// sklearnRoundTrip loads each file with sklearn.datasets.load_svmlight_file(path,
// query_id=True) and prints labels, qids and dense rows as JSON, values as repr() strings so
// no digit is lost on the way back.
const sklearnRoundTrip = `
import json, sys
from sklearn.datasets import load_svmlight_file
out = {}
for path in sys.argv[1:]:
    X, y, qid = load_svmlight_file(path, query_id=True, zero_based=False, n_features=5)
    X = X.toarray()
    out[path] = {"y": [repr(float(v)) for v in y], "qid": [int(q) for q in qid],
                 "X": [[repr(float(v)) for v in row] for row in X]}
print(json.dumps(out))
`

// TestSVMlightRoundTripThroughSklearn exports a project as SVMlight with features and reads
// the files back with scikit-learn's reader: labels, query ids (through the qid map) and
// feature values must equal what the database holds.
func TestSVMlightRoundTripThroughSklearn(t *testing.T) {
	refPython := reference.RequirePython(t, "sklearn")
	f := newExportFixture(t)
	policy := export.LabelPolicy{AdjudicationFirst: true, Consensus: export.ConsensusMedian}
	dir, _ := exportTo(t, f, ExportRequest{Policy: policy, Format: FormatSVMlight,
		Split: export.SplitSpec{Method: "ratio", Ratios: &export.Ratios{Train: 0.5, Validation: 0.5}, Seed: 3}})

	// Expected labels, straight from the fixture: median of the current grades, except the
	// adjudicated pair.
	want := map[string]int{"q1 q1-d1": 1, "q1 q1-d2": 1, "q1 q1-d3": 2, "q2 q2-d1": 4, "q2 q2-d2": 2, "q2 q2-d3": 3}
	for qi := 3; qi <= 6; qi++ {
		for di := 1; di <= 3; di++ {
			want["q"+strconv.Itoa(qi)+" q"+strconv.Itoa(qi)+"-d"+strconv.Itoa(di)] = (qi + di) % 5
		}
	}

	qidOf := map[int]string{}
	tsv, err := os.ReadFile(filepath.Join(dir, QIDMapFile))
	if err != nil {
		t.Fatal(err)
	}
	for line := range strings.SplitSeq(strings.TrimSpace(string(tsv)), "\n") {
		n, q, _ := strings.Cut(line, "\t")
		k, _ := strconv.Atoi(n)
		qidOf[k] = q
	}
	paths := []string{filepath.Join(dir, "train.svm"), filepath.Join(dir, "validation.svm")}
	cmd := exec.Command(refPython, append([]string{"-c", sklearnRoundTrip}, paths...)...)
	var out, errb bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &errb
	if err := cmd.Run(); err != nil {
		t.Fatalf("python: %v\n%s", err, errb.String())
	}
	var got map[string]struct {
		Y   []string   `json:"y"`
		QID []int      `json:"qid"`
		X   [][]string `json:"X"`
	}
	if err := json.Unmarshal(out.Bytes(), &got); err != nil {
		t.Fatal(err)
	}
	rows := 0
	for _, path := range paths {
		// The document ids are in the comments, which sklearn drops: take them from the file.
		b, _ := os.ReadFile(path)
		var docs []string
		for line := range strings.SplitSeq(strings.TrimSpace(string(b)), "\n") {
			_, doc, _ := strings.Cut(line, " # ")
			docs = append(docs, doc)
		}
		r := got[path]
		if len(r.Y) != len(docs) || len(r.QID) != len(docs) {
			t.Fatalf("%s: sklearn read %d labels, %d qids; the file has %d rows", path, len(r.Y), len(r.QID), len(docs))
		}
		for i, doc := range docs {
			q, ok := qidOf[r.QID[i]]
			if !ok {
				t.Errorf("%s row %d: qid %d not in the qid map", path, i+1, r.QID[i])
				continue
			}
			key := q + " " + doc
			if y, _ := strconv.ParseFloat(r.Y[i], 64); y != float64(want[key]) {
				t.Errorf("%s: label %s, want %d", key, r.Y[i], want[key])
			}
			dense := make([]float64, 5)
			for _, ft := range f.feats[key] {
				dense[ft.Index-1] = ft.Value
			}
			for j, s := range r.X[i] {
				v, err := strconv.ParseFloat(s, 64)
				if err != nil || v != dense[j] {
					t.Errorf("%s feature %d: sklearn read %s, database holds %v", key, j+1, s, dense[j])
				}
			}
			rows++
		}
	}
	if rows != 18 {
		t.Errorf("sklearn read %d rows over the split files, want 18", rows)
	}
}
