package ingest

import (
	"math"
	"strings"
	"testing"
)

func features(t *testing.T, f Format, src string) ([]FeatureRow, error) {
	return all(t, src, func(r *strings.Reader, fn func(FeatureRow) error) error {
		return ReadFeatures(r, f, Options{File: "f"}, fn)
	})
}

func TestSVMlight(t *testing.T) {
	src := "# exported features\n" +
		"2 qid:q1 1:0.5 3:-1e-3 10:7 # d1 extra words\n" +
		"0 qid:301 #d2\n"
	got, err := features(t, SVMlight, src)
	wantRead(t, got, err, []FeatureRow{
		{QueryID: "q1", DocID: "d1", Grade: 2, Features: []Feature{{1, 0.5}, {3, -0.001}, {10, 7}}, Line: 2},
		{QueryID: "301", DocID: "d2", Grade: 0, Features: []Feature{}, Line: 3},
	})
}

func TestSVMlightProblems(t *testing.T) {
	src := "1 qid:q1 1:1 # d1\n" +
		"1 qid:q1 1:1\n" +
		"1 q1 1:1 # d3\n" +
		"x qid:q1 1:1 # d4\n" +
		"1 qid:q1 2:1 2:3 # d5\n" +
		"1 qid:q1 0:1 # d6\n" +
		"1 qid:q1 1:inf # d7\n" +
		"1 qid:q1 1 # d8\n" +
		"1 qid:q1 1:1 # d1\n" +
		"1 qid:q1 4294967296:1 # d10\n" +
		"1 # d11\n"
	_, err := features(t, SVMlight, src)
	wantProblems(t, err,
		`f:2: no document id: end the line with # <doc-id>`,
		`f:3: column 2 (qid): "q1" does not start with qid:`,
		`f:4: column 1 (grade): "x" is not an integer`,
		`f:5: column 4 (feature): index 2 does not follow 2: indexes must be strictly ascending`,
		`f:6: column 3 (feature): index "0" is not an integer from 1 to 4294967295`,
		`f:7: column 3 (feature): value "inf" is not a finite number`,
		`f:8: column 3 (feature): "1" is not <index>:<value>`,
		`f:9: duplicate pair ("q1", "d1") (first at line 1)`,
		`f:10: column 3 (feature): index "4294967296" is not an integer from 1 to 4294967295`,
		`f:11: expected <grade> qid:<query-id> before the features`,
	)
}

func TestFeatureCSV(t *testing.T) {
	src := "bm25,query_id,doc_id,clicks\n1.5,q1,d1,\n,q1,d2,3\n"
	got, err := features(t, CSV, src)
	if err != nil {
		t.Fatal(err)
	}
	names := []string{"bm25", "clicks"}
	mustEqual(t, got, []FeatureRow{
		{QueryID: "q1", DocID: "d1", Grade: NoGrade, Features: []Feature{{1, 1.5}}, Names: names, Line: 2},
		{QueryID: "q1", DocID: "d2", Grade: NoGrade, Features: []Feature{{2, 3}}, Names: names, Line: 3},
	})
	_, err = features(t, CSV, "query_id,doc_id,bm25\nq1,d1,high\nq1,,1\n")
	wantProblems(t, err,
		`f:2: column 3 (bm25): "high" is not a number`,
		`f:3: column 2 (doc_id): is empty`,
	)
	_, err = features(t, CSV, "query_id,doc_id\nq1,d1\n")
	wantProblems(t, err, `f:1: no feature columns besides query_id and doc_id`)
	_, err = features(t, JSONL, "{}\n")
	mustEqual(t, err.Error(), "f: features come as SVMlight or CSV, not JSONL")
}

func TestFeatureBlob(t *testing.T) {
	fs := []Feature{{1, 0.1}, {200, -2.5}, {math.MaxUint32, math.SmallestNonzeroFloat64}}
	b := EncodeFeatures(fs)
	// 1 version + 1 count + (1+8) + (2+8) + (5+8) bytes.
	mustEqual(t, len(b), 34)
	back, err := DecodeFeatures(b)
	if err != nil {
		t.Fatal(err)
	}
	mustEqual(t, back, fs)
	empty, err := DecodeFeatures(EncodeFeatures(nil))
	if err != nil || len(empty) != 0 {
		t.Fatalf("empty: %v %v", empty, err)
	}
	for _, bad := range [][]byte{nil, {2, 0}, {1, 5, 1}, b[:len(b)-1], append(append([]byte{}, b...), 0)} {
		if _, err := DecodeFeatures(bad); err == nil {
			t.Errorf("DecodeFeatures(%v) accepted a corrupt blob", bad)
		}
	}
}
