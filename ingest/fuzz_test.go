package ingest

import (
	"bytes"
	"encoding/json"
	"fmt"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// Each target checks that a reader never panics and that every record it
// accepts, written back out in the same format, reads back identically.

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
		var rows []PairRow
		_ = ReadPairRows(bytes.NewReader(data), CSV, Options{MaxLineBytes: 4096}, func(r PairRow) error {
			rows = append(rows, r)
			return nil
		})
		for _, r := range rows {
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
			src := csvQuote(header...) + csvQuote(vals...)
			var back []PairRow
			err := ReadPairRows(strings.NewReader(src), CSV, Options{}, func(r PairRow) error {
				back = append(back, r)
				return nil
			})
			if err != nil || len(back) != 1 {
				t.Fatalf("%q: re-reading %q: %v", data, src, err)
			}
			want := r
			want.Query.Line, want.Document.Line, want.Pair.Line = 2, 2, 2
			want.NewQuery, want.NewDocument, want.DocumentIndex = true, true, 0
			if fmt.Sprintf("%#v", back[0]) != fmt.Sprintf("%#v", want) {
				t.Fatalf("round trip of %q:\n got %#v\nwant %#v", src, back[0], want)
			}
		}
	})
}

func FuzzDocumentsJSONL(f *testing.F) {
	f.Add([]byte(`{"doc_id":"d1","title":"<script>x</script>","body":"b\u00e9","body_format":"html","meta":{"n":1.5,"b":true,"s":"x"}}` + "\n"))
	f.Add([]byte(`{"doc_id":7,"url":null}` + "\n\n" + `{"doc_id":"d2","meta":{}}`))
	f.Fuzz(func(t *testing.T, data []byte) {
		var docs []Document
		_ = ReadDocuments(bytes.NewReader(data), JSONL, Options{MaxLineBytes: 4096}, func(d Document) error {
			docs = append(docs, d)
			return nil
		})
		for _, d := range docs {
			obj := map[string]any{"doc_id": d.ID, "title": d.Title, "url": d.URL, "body": d.Body, "body_format": d.BodyFormat}
			if d.Meta != nil {
				obj["meta"] = d.Meta
			}
			line, err := json.Marshal(obj)
			if err != nil {
				t.Fatal(err)
			}
			var back []Document
			err = ReadDocuments(bytes.NewReader(line), JSONL, Options{}, func(d Document) error {
				back = append(back, d)
				return nil
			})
			if err != nil || len(back) != 1 {
				t.Fatalf("%q: re-reading %s: %v", data, line, err)
			}
			want := d
			want.Line = 1
			if fmt.Sprintf("%#v", back[0]) != fmt.Sprintf("%#v", want) {
				t.Fatalf("round trip of %s:\n got %#v\nwant %#v", line, back[0], want)
			}
		}
	})
}

func FuzzRun(f *testing.F) {
	f.Add([]byte("q1 Q0 d1 1 12.5 bm25\nq1 Q0 d2 2 -0.3 bm25\n"))
	f.Add([]byte("301\t0\tdoc-9\t0\t1e-300\trun\r\n\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		var es []RunEntry
		_ = ReadRun(bytes.NewReader(data), Options{MaxLineBytes: 4096}, func(e RunEntry) error {
			es = append(es, e)
			return nil
		})
		for _, e := range es {
			line := fmt.Sprintf("%s Q0 %s %d %s %s\n", e.QueryID, e.DocID, e.Rank, strconv.FormatFloat(e.Score, 'g', -1, 64), e.Tag)
			var back []RunEntry
			err := ReadRun(strings.NewReader(line), Options{}, func(e RunEntry) error {
				back = append(back, e)
				return nil
			})
			want := e
			want.Line = 1
			if err != nil || len(back) != 1 || back[0] != want {
				t.Fatalf("round trip of %q: %v %v", line, back, err)
			}
		}
	})
}

func FuzzQrels(f *testing.F) {
	f.Add([]byte("q1 0 d1 4\nq1 0 d2 0\n"))
	f.Add([]byte("q1 x d1 -1\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		var qs []Qrel
		_ = ReadQrels(bytes.NewReader(data), Options{MaxLineBytes: 4096}, func(q Qrel) error {
			qs = append(qs, q)
			return nil
		})
		for _, q := range qs {
			if q.Grade < 0 || q.Grade > 4 {
				t.Fatalf("grade %d accepted on a 0..4 scale", q.Grade)
			}
			line := fmt.Sprintf("%s 0 %s %d\n", q.QueryID, q.DocID, q.Grade)
			var back []Qrel
			err := ReadQrels(strings.NewReader(line), Options{}, func(q Qrel) error {
				back = append(back, q)
				return nil
			})
			want := q
			want.Line = 1
			if err != nil || len(back) != 1 || back[0] != want {
				t.Fatalf("round trip of %q: %v %v", line, back, err)
			}
		}
	})
}

func FuzzSVMlight(f *testing.F) {
	f.Add([]byte("2 qid:q1 1:0.5 3:-1e-3 10:7 # d1 extra\n# comment\n0 qid:2 #d2\n"))
	f.Add([]byte("1 qid:1 2:1 2:1 # d\n"))
	f.Fuzz(func(t *testing.T, data []byte) {
		var rows []FeatureRow
		_ = ReadFeatures(bytes.NewReader(data), SVMlight, Options{MaxLineBytes: 4096}, func(r FeatureRow) error {
			rows = append(rows, r)
			return nil
		})
		for _, r := range rows {
			var b strings.Builder
			fmt.Fprintf(&b, "%d qid:%s", r.Grade, r.QueryID)
			for i, x := range r.Features {
				if i > 0 && x.Index <= r.Features[i-1].Index {
					t.Fatalf("indexes not ascending: %v", r.Features)
				}
				fmt.Fprintf(&b, " %d:%s", x.Index, strconv.FormatFloat(x.Value, 'g', -1, 64))
			}
			fmt.Fprintf(&b, " # %s\n", r.DocID)
			var back []FeatureRow
			err := ReadFeatures(strings.NewReader(b.String()), SVMlight, Options{}, func(r FeatureRow) error {
				back = append(back, r)
				return nil
			})
			want := r
			want.Line = 1
			if err != nil || len(back) != 1 || fmt.Sprintf("%#v", back[0]) != fmt.Sprintf("%#v", want) {
				t.Fatalf("round trip of %q: %v %v", b.String(), back, err)
			}
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
