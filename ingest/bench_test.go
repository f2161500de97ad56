package ingest

import (
	"bytes"
	"fmt"
	"io"
	"testing"
)

// pairRowsCSV builds a combined file of n rows, 1,000 documents per query,
// each document appearing under two queries with identical content.
func pairRowsCSV(n int) []byte {
	var b bytes.Buffer
	b.WriteString("query_id,query_text,doc_id,title,url,body,body_format,priority,lang\n")
	for i := range n {
		q := i / 1000
		d := (i % 1000) + (q/2)*1000 // queries 2k and 2k+1 share documents
		fmt.Fprintf(&b, "q%d,cheap flights to city %d,doc-%d,\"Title %d, with comma\",https://example.org/d/%d,"+
			"\"Body of document %d: some ordinary text that runs for a while, with \"\"quotes\"\" and <b>markup</b>.\",html,%d,en\n",
			q, q, d, d, d, d, i%100)
	}
	return b.Bytes()
}

func BenchmarkPairRowsCSV(b *testing.B) {
	const rows = 1_000_000
	data := pairRowsCSV(rows)
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		n := 0
		err := ReadPairRows(bytes.NewReader(data), CSV, Options{}, func(r PairRow) error {
			n++
			return nil
		})
		if err != nil || n != rows {
			b.Fatalf("%d rows, %v", n, err)
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N*rows), "ns/row")
}

// TestPairRowsCSVGenerator guards the benchmark's input: every row valid.
func TestPairRowsCSVGenerator(t *testing.T) {
	news := 0
	err := ReadPairRows(bytes.NewReader(pairRowsCSV(4000)), CSV, Options{}, func(r PairRow) error {
		if r.NewDocument {
			news++
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	mustEqual(t, news, 2000)
	if err := ReadPairRows(io.LimitReader(bytes.NewReader(pairRowsCSV(10)), 0), CSV, Options{}, nil); err == nil {
		t.Fatal("empty input accepted")
	}
}
