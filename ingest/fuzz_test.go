package ingest

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// Each target checks that a reader never panics and that every record it
// accepts, written back out in the same format, reads back identically.

// fuzzRead returns the records read accepts from data, under a line limit fuzzing can reach.
func fuzzRead[T any](data []byte, read func(io.Reader, Options, func(T) error) error) []T {
	var out []T
	_ = read(bytes.NewReader(data), Options{MaxLineBytes: 4096}, func(v T) error {
		out = append(out, v)
		return nil
	})
	return out
}

// roundTrip re-reads src, written out from one accepted record, and fails unless it gives
// back want alone (that record with its line numbers in src).
func roundTrip[T any](t *testing.T, src string, want T, read func(io.Reader, Options, func(T) error) error) {
	t.Helper()
	var back []T
	err := read(strings.NewReader(src), Options{}, func(v T) error {
		back = append(back, v)
		return nil
	})
	if err != nil || len(back) != 1 {
		t.Fatalf("re-reading %q: %v %v", src, back, err)
	}
	if fmt.Sprintf("%#v", back[0]) != fmt.Sprintf("%#v", want) {
		t.Fatalf("round trip of %q:\n got %#v\nwant %#v", src, back[0], want)
	}
}

// inFormat fixes the format of a reader of several.
func inFormat[T any](f Format, read func(io.Reader, Format, Options, func(T) error) error) func(io.Reader, Options, func(T) error) error {
	return func(r io.Reader, o Options, fn func(T) error) error { return read(r, f, o, fn) }
}

func csvQuote(fields ...string) string {
	q := make([]string, len(fields))
	for i, f := range fields {
		q[i] = `"` + strings.ReplaceAll(f, `"`, `""`) + `"`
	}
	return strings.Join(q, ",") + "\n"
}

func optInt(n, none int) string {
	if n == none {
		return ""
	}
	return strconv.Itoa(n)
}

func FuzzPairRowsCSV(f *testing.F) {
	f.Add([]byte("query_id,query_text,doc_id,title,url,body,body_format,priority,gold_grade,lang\nq1,text,d1,T,http://x,\"<b>b\nody</b>\",html,3,4,en\n"))
	f.Add([]byte("doc_id,query_text,query_id\r\nd1,\"a,\"\"b\"\"\",q1\r\nd2,c,q1\r\n"))
	f.Add([]byte("query_id,query_text,doc_id,extra\n\"q\n1\",x,d,\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		read := inFormat(CSV, ReadPairRows)
		for _, r := range fuzzRead(data, read) {
			header := []string{"query_id", "query_text", "query_need", "doc_id", "title", "url", "body", "body_format", "priority", "gold_grade"}
			vals := []string{r.Query.ID, r.Query.Text, r.Query.Need, r.Document.ID, r.Document.Title, r.Document.URL, r.Document.Body,
				r.Document.BodyFormat, strconv.Itoa(r.Pair.Priority), optInt(r.Pair.GoldGrade, NoGrade)}
			keys := make([]string, 0, len(r.Document.Meta))
			for k := range r.Document.Meta {
				keys = append(keys, k)
			}
			slices.Sort(keys)
			for _, k := range keys {
				header = append(header, k)
				vals = append(vals, r.Document.Meta[k])
			}
			want := r
			want.Query.Line, want.Document.Line, want.Pair.Line = 2, 2, 2
			want.NewQuery, want.NewDocument, want.DocumentIndex = true, true, 0
			roundTrip(t, csvQuote(header...)+csvQuote(vals...), want, read)
		}
	})
}

func FuzzDocumentsJSONL(f *testing.F) {
	f.Add([]byte(`{"doc_id":"d1","title":"<script>x</script>","body":"b\u00e9","body_format":"html","meta":{"n":1.5,"b":true,"s":"x"}}` + "\n"))
	f.Add([]byte(`{"doc_id":7,"url":null}` + "\n\n" + `{"doc_id":"d2","meta":{}}`))
	f.Fuzz(func(t *testing.T, data []byte) {
		read := inFormat(JSONL, ReadDocuments)
		for _, d := range fuzzRead(data, read) {
			obj := map[string]any{"doc_id": d.ID, "title": d.Title, "url": d.URL, "body": d.Body, "body_format": d.BodyFormat}
			if d.Meta != nil {
				obj["meta"] = d.Meta
			}
			line, err := json.Marshal(obj)
			if err != nil {
				t.Fatal(err)
			}
			want := d
			want.Line = 1
			roundTrip(t, string(line), want, read)
		}
	})
}

func FuzzRun(f *testing.F) {
	f.Add([]byte("q1 Q0 d1 1 12.5 bm25\nq1 Q0 d2 2 -0.3 bm25\n"))
	f.Add([]byte("301\t0\tdoc-9\t0\t1e-300\trun\r\n\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		for _, e := range fuzzRead(data, ReadRun) {
			line := fmt.Sprintf("%s Q0 %s %d %s %s\n", e.QueryID, e.DocID, e.Rank, strconv.FormatFloat(e.Score, 'g', -1, 64), e.Tag)
			want := e
			want.Line = 1
			roundTrip(t, line, want, ReadRun)
		}
	})
}

func FuzzQrels(f *testing.F) {
	f.Add([]byte("q1 0 d1 4\nq1 0 d2 0\n"))
	f.Add([]byte("q1 x d1 -1\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		for _, q := range fuzzRead(data, ReadQrels) {
			if q.Grade < 0 || q.Grade > 4 {
				t.Fatalf("grade %d accepted on a 0..4 scale", q.Grade)
			}
			line := fmt.Sprintf("%s 0 %s %d\n", q.QueryID, q.DocID, q.Grade)
			want := q
			want.Line = 1
			roundTrip(t, line, want, ReadQrels)
		}
	})
}

func FuzzSVMlight(f *testing.F) {
	f.Add([]byte("2 qid:q1 1:0.5 3:-1e-3 10:7 # d1 extra\n# comment\n0 qid:2 #d2\n"))
	f.Add([]byte("1 qid:1 2:1 2:1 # d\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		read := inFormat(SVMlight, ReadFeatures)
		for _, r := range fuzzRead(data, read) {
			var b strings.Builder
			fmt.Fprintf(&b, "%d qid:%s", r.Grade, r.QueryID)
			for i, x := range r.Features {
				if i > 0 && x.Index <= r.Features[i-1].Index {
					t.Fatalf("indexes not ascending: %v", r.Features)
				}
				fmt.Fprintf(&b, " %d:%s", x.Index, strconv.FormatFloat(x.Value, 'g', -1, 64))
			}
			fmt.Fprintf(&b, " # %s\n", r.DocID)
			want := r
			want.Line = 1
			roundTrip(t, b.String(), want, read)
			// The stored form keeps every value bit for bit.
			dec, err := DecodeFeatures(EncodeFeatures(r.Features))
			if err != nil || fmt.Sprintf("%#v", dec) != fmt.Sprintf("%#v", r.Features) {
				t.Fatalf("blob round trip of %v: %v %v", r.Features, dec, err)
			}
		}
	})
}

func FuzzDecodeFeatures(f *testing.F) {
	f.Add(EncodeFeatures([]Feature{{1, 0.5}, {300, -1}}))
	f.Add([]byte{1, 0xff, 0xff, 0xff, 0xff, 0x0f})
	f.Fuzz(func(t *testing.T, b []byte) {
		fs, err := DecodeFeatures(b)
		if err != nil {
			return
		}
		again, err := DecodeFeatures(EncodeFeatures(fs))
		if err != nil || fmt.Sprintf("%#v", again) != fmt.Sprintf("%#v", fs) {
			t.Fatalf("re-encoding %v: %v %v", fs, again, err)
		}
	})
}
