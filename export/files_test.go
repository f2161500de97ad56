package export

import (
	"bytes"
	"encoding/csv"
	"encoding/json"
	"errors"
	"iter"
	"reflect"
	"strings"
	"testing"
)

func sampleRows() []Row {
	js1 := []JudgmentDetail{{Assessor: "ana", Grade: 3}, {Assessor: "bo, \"jr\"", Grade: 2}, {Assessor: "cy", CannotJudge: true, Reason: "page in Finnish"}}
	js2 := []JudgmentDetail{{Assessor: "ana", Grade: 0}}
	return []Row{
		{QueryID: "q1", DocID: "d1", Grade: 2, Decided: "median of 2", Judgments: js1, Agreement: AgreementOf(js1), Split: "train", Features: []Feature{{1, 0.25}, {3, 7}}},
		{QueryID: "q1", DocID: "d2", Grade: 0, Decided: "adjudicated", Judgments: js2, Agreement: AgreementOf(js2), Split: "train"},
		{QueryID: "q2", DocID: "d1", Grade: 4, Decided: "majority of 3", Split: "test"},
	}
}

func seq(rows []Row) iter.Seq2[Row, error] {
	return func(yield func(Row, error) bool) {
		for _, r := range rows {
			if !yield(r, nil) {
				return
			}
		}
	}
}

func TestAgreementOf(t *testing.T) {
	got := AgreementOf(sampleRows()[0].Judgments)
	if got != (PairAgreement{Graded: 2, CannotJudge: 1, Spread: 1}) {
		t.Errorf("AgreementOf = %+v", got)
	}
	if got := AgreementOf([]JudgmentDetail{{Grade: 4}}); got.Spread != 0 || got.Graded != 1 {
		t.Errorf("one grade: %+v", got)
	}
}

func TestQrelsAndGroupExact(t *testing.T) {
	rows := append(sampleRows(), Row{QueryID: "q3", DocID: "x", Grade: 1}, Row{QueryID: "q3", DocID: "y", Grade: 2}, Row{QueryID: "q3", DocID: "z", Grade: 0})
	var qb, gb bytes.Buffer
	qw, gw := NewQrelsWriter(&qb), NewGroupWriter(&gb)
	n, err := WriteAll(seq(rows), qw, gw)
	if err != nil || n != 6 {
		t.Fatalf("WriteAll = %d, %v", n, err)
	}
	wantQ := "q1 0 d1 2\nq1 0 d2 0\nq2 0 d1 4\nq3 0 x 1\nq3 0 y 2\nq3 0 z 0\n"
	if qb.String() != wantQ {
		t.Errorf("qrels:\n%s\nwant\n%s", qb.String(), wantQ)
	}
	if gb.String() != "2\n1\n3\n" || gw.Groups() != 3 || qw.Rows() != 6 {
		t.Errorf("group file %q, %d groups, %d qrels rows", gb.String(), gw.Groups(), qw.Rows())
	}
}

func TestQrelsRejectsWhiteSpace(t *testing.T) {
	w := NewQrelsWriter(&bytes.Buffer{})
	for _, r := range []Row{{QueryID: "a b", DocID: "d"}, {QueryID: "q", DocID: "d\t1"}, {QueryID: "", DocID: "d"}} {
		if err := w.Write(r); err == nil {
			t.Errorf("%+v: no error", r)
		}
	}
}

func TestGroupRejectsReappearingQuery(t *testing.T) {
	w := NewGroupWriter(&bytes.Buffer{})
	var err error
	for _, q := range []string{"a", "a", "b", "a"} {
		if err = w.Write(Row{QueryID: q}); err != nil {
			break
		}
	}
	if err == nil {
		t.Fatal("query a came back after b without an error")
	}
}

func TestWriteAllStopsOnIteratorError(t *testing.T) {
	boom := errors.New("boom")
	rows := func(yield func(Row, error) bool) {
		if yield(Row{QueryID: "q", DocID: "d"}, nil) {
			yield(Row{}, boom)
		}
	}
	var b bytes.Buffer
	n, err := WriteAll(rows, NewQrelsWriter(&b))
	if n != 1 || !errors.Is(err, boom) {
		t.Fatalf("WriteAll = %d, %v", n, err)
	}
}

func TestJSONLParsesBack(t *testing.T) {
	var b bytes.Buffer
	w := NewJSONLWriter(&b)
	if _, err := WriteAll(seq(sampleRows()), w); err != nil {
		t.Fatal(err)
	}
	lines := strings.Split(strings.TrimSuffix(b.String(), "\n"), "\n")
	if len(lines) != 3 || w.Rows() != 3 {
		t.Fatalf("%d lines", len(lines))
	}
	type judgment struct {
		Assessor    string `json:"assessor"`
		Grade       *int   `json:"grade"`
		CannotJudge bool   `json:"cannot_judge"`
		Reason      string `json:"reason"`
	}
	var first struct {
		QueryID   string         `json:"query_id"`
		DocID     string         `json:"doc_id"`
		Grade     int            `json:"grade"`
		Decided   string         `json:"decided"`
		Split     string         `json:"split"`
		Judgments []judgment     `json:"judgments"`
		Agreement map[string]int `json:"agreement"`
		Features  [][2]float64   `json:"features"`
	}
	dec := json.NewDecoder(strings.NewReader(lines[0]))
	dec.DisallowUnknownFields()
	if err := dec.Decode(&first); err != nil {
		t.Fatal(err)
	}
	if first.QueryID != "q1" || first.DocID != "d1" || first.Grade != 2 || first.Decided != "median of 2" || first.Split != "train" {
		t.Errorf("first row %+v", first)
	}
	if len(first.Judgments) != 3 || *first.Judgments[0].Grade != 3 || first.Judgments[1].Assessor != "bo, \"jr\"" ||
		first.Judgments[2].Grade != nil || !first.Judgments[2].CannotJudge || first.Judgments[2].Reason != "page in Finnish" {
		t.Errorf("judgments %+v", first.Judgments)
	}
	if !reflect.DeepEqual(first.Agreement, map[string]int{"graded": 2, "cannot_judge": 1, "spread": 1}) {
		t.Errorf("agreement %v", first.Agreement)
	}
	if !reflect.DeepEqual(first.Features, [][2]float64{{1, 0.25}, {3, 7}}) {
		t.Errorf("features %v", first.Features)
	}
	// a grade of 0 must still be written, not dropped as empty
	if !strings.Contains(lines[1], `"judgments":[{"assessor":"ana","grade":0}]`) {
		t.Errorf("second row %s", lines[1])
	}
}

func TestCSVParsesBack(t *testing.T) {
	var b bytes.Buffer
	w := NewCSVWriter(&b)
	if _, err := WriteAll(seq(sampleRows()), w); err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(&b).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(recs) != 4 || !reflect.DeepEqual(recs[0], CSVHeader) {
		t.Fatalf("records %v", recs)
	}
	want := []string{"q1", "d1", "2", "median of 2", "train", "2", "1", "1",
		`[{"assessor":"ana","grade":3},{"assessor":"bo, \"jr\"","grade":2},{"assessor":"cy","cannot_judge":true,"reason":"page in Finnish"}]`}
	if !reflect.DeepEqual(recs[1], want) {
		t.Errorf("row 1\n got %q\nwant %q", recs[1], want)
	}
	if recs[3][0] != "q2" || recs[3][2] != "4" || recs[3][8] != "[]" {
		t.Errorf("row 3 %q", recs[3])
	}
	var js []map[string]any
	if err := json.Unmarshal([]byte(recs[1][8]), &js); err != nil || len(js) != 3 {
		t.Errorf("judgments cell does not parse: %v", err)
	}
}

func TestCSVHeaderOnlyWhenEmpty(t *testing.T) {
	var b bytes.Buffer
	if err := NewCSVWriter(&b).Close(); err != nil {
		t.Fatal(err)
	}
	if b.String() != strings.Join(CSVHeader, ",")+"\n" {
		t.Errorf("empty CSV %q", b.String())
	}
}

func TestQIDMap(t *testing.T) {
	m, err := QIDMapFrom(map[string]int{"old-a": 4, "old-b": 2})
	if err != nil {
		t.Fatal(err)
	}
	if m.QID("old-a") != 4 || m.QID("new-1") != 5 || m.QID("new-2") != 6 || m.QID("new-1") != 5 || m.Len() != 4 {
		t.Fatalf("numbers %v", m.Map())
	}
	var b bytes.Buffer
	if err := m.WriteTSV(&b); err != nil {
		t.Fatal(err)
	}
	if b.String() != "2\told-b\n4\told-a\n5\tnew-1\n6\tnew-2\n" {
		t.Errorf("tsv %q", b.String())
	}
	back, err := ReadQIDMapTSV(&b)
	if err != nil || !reflect.DeepEqual(back.Map(), m.Map()) {
		t.Errorf("read back %v, %v", back.Map(), err)
	}
	for _, bad := range []map[string]int{{"a": 0}, {"a": 1, "b": 1}, {"a\tb": 1}} {
		if _, err := QIDMapFrom(bad); err == nil {
			t.Errorf("%v accepted", bad)
		}
	}
	if _, err := ReadQIDMapTSV(strings.NewReader("1\ta\n2\ta\n")); err == nil {
		t.Error("query listed twice accepted")
	}
}
