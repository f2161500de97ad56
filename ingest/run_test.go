package ingest

import (
	"slices"
	"strings"
	"testing"
)

func runEntries(t *testing.T, src string) ([]RunEntry, error) {
	return all(t, src, func(r *strings.Reader, fn func(RunEntry) error) error {
		return ReadRun(r, Options{File: "runs.txt"}, fn)
	})
}

func TestReadRun(t *testing.T) {
	got, err := runEntries(t, "q1 Q0 d1 1 12.5 bm25\n\n  q1\t0  d2 2 -3e-1 bm25  \r\n")
	wantRead(t, got, err, []RunEntry{
		{QueryID: "q1", DocID: "d1", Rank: 1, Score: 12.5, Tag: "bm25", Line: 1},
		{QueryID: "q1", DocID: "d2", Rank: 2, Score: -0.3, Tag: "bm25", Line: 3},
	})
}

func TestReadRunProblems(t *testing.T) {
	src := "q1 Q0 d1 1 1 r\n" +
		"q1 Q0 d2 x 1 r\n" +
		"q1 Q0 d3 -1 NaN r\n" +
		"q1 Q0 d4 4 1e999 r\n" +
		"q1 Q0 d5 5 1\n" +
		"q1 Q0 d1 6 1 r\n" +
		"q1 Q0 d1 6 1 other\n" +
		"q\x01 Q0 d8 8 1 r\n" +
		"q1 Q0 d9 9 1 \xfe\n"
	got, err := runEntries(t, src)
	wantProblems(t, err,
		`runs.txt:2: column 4 (rank): "x" is not an integer`,
		`runs.txt:3: column 4 (rank): rank -1 is negative`,
		`runs.txt:3: column 5 (score): "NaN" is not a finite number`,
		`runs.txt:4: column 5 (score): "1e999" is out of range`,
		`runs.txt:5: has 5 columns, expected 6: <query-id> Q0 <doc-id> <rank> <score> <run-tag>`,
		`runs.txt:6: duplicate document "d1" for query "q1" in run "r" (first at line 1)`,
		`runs.txt:8: column 1 (query id): "q\x01" contains control character U+0001`,
		`runs.txt:9: is not valid UTF-8 at byte 14`,
	)
	mustEqual(t, len(got), 1)
}

func TestReadQrels(t *testing.T) {
	var got []Qrel
	err := ReadQrels(strings.NewReader("q1 0 d1 4\nq1 iter d2 0\n"), Options{}, func(q Qrel) error {
		got = append(got, q)
		return nil
	})
	wantRead(t, got, err, []Qrel{{QueryID: "q1", DocID: "d1", Grade: 4, Line: 1}, {QueryID: "q1", DocID: "d2", Grade: 0, Line: 2}})

	src := "q1 0 d1 1\nq1 0 d2 5\nq1 0 d3 -1\nq1 0 d4 1.0\nq1 0 d1 2\nq1 0 d5\n"
	err = ReadQrels(strings.NewReader(src), Options{File: "qrels", Scale: 5}, nil)
	wantProblems(t, err,
		`qrels:2: column 4 (grade): grade 5 is outside the scale 0..4`,
		`qrels:3: column 4 (grade): grade -1 is outside the scale 0..4`,
		`qrels:4: column 4 (grade): "1.0" is not an integer`,
		`qrels:5: duplicate pair ("q1", "d1") (first at line 1)`,
		`qrels:6: has 3 columns, expected 4 to 5: <query-id> <iteration> <doc-id> <grade> [<confidence>]`,
	)
	// The optional fifth column: a source's confidence in [0, 1].
	got = nil
	err = ReadQrels(strings.NewReader("q1 0 d1 4 0.25\nq1 0 d2 1\n"), Options{}, func(q Qrel) error {
		got = append(got, q)
		return nil
	})
	wantRead(t, got, err, []Qrel{{QueryID: "q1", DocID: "d1", Grade: 4, Confidence: 0.25, HasConfidence: true, Line: 1}, {QueryID: "q1", DocID: "d2", Grade: 1, Line: 2}})
	err = ReadQrels(strings.NewReader("q1 0 d1 4 1.5\nq1 0 d2 1 sure\nq1 0 d3 1 0.5 more\n"), Options{File: "qrels", Scale: 5}, nil)
	wantProblems(t, err,
		`qrels:1: column 5 (confidence): confidence 1.5 is outside 0..1`,
		`qrels:2: column 5 (confidence): "sure" is not a number`,
		`qrels:3: has 6 columns, expected 4 to 5: <query-id> <iteration> <doc-id> <grade> [<confidence>]`,
	)
	// A binary scale (K = 2) rejects grade 2.
	err = ReadQrels(strings.NewReader("q1 0 d1 2\n"), Options{File: "qrels", Scale: 2}, nil)
	wantProblems(t, err, `qrels:1: column 4 (grade): grade 2 is outside the scale 0..1`)
}

// fieldsInto must split every line as strings.Fields does, which run files were read with.
func TestFieldsIntoSplitsAsStringsFields(t *testing.T) {
	for _, s := range []string{
		"", " ", "q1 Q0 d1 1 2.5 run", "  q1\tQ0\vd1\f1 2.5\r run  ",
		"q1 Q0 d1 1 2.5", "q1 Q0 d1 1 2.5 run extra more",
		"q1\u00a0Q0 d1 1 2.5 run", "q1\u3000Q0\u2028d1 1 2.5 run\u0085", "qé Q0 dü 1 2.5 rün",
		"a b c d e f g h i j",
	} {
		var dst [6]string
		n := fieldsInto(dst[:], s)
		want := strings.Fields(s)
		got := dst[:min(n, len(dst))]
		if n != len(want) || !slices.Equal(got, want[:len(got)]) {
			t.Errorf("fieldsInto(%q) = %d %q; strings.Fields gives %d %q", s, n, got, len(want), want)
		}
	}
}
