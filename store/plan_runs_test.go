package store

import (
	"bytes"
	"compress/gzip"
	"context"
	"fmt"
	"reflect"
	"strings"
	"testing"
	"unsafe"

	"github.com/pertinent/pertinent/rankeval"
)

func gzipped(t *testing.T, text string, level int) []byte {
	t.Helper()
	var b bytes.Buffer
	zw, err := gzip.NewWriterLevel(&b, level)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := zw.Write([]byte(text)); err != nil {
		t.Fatal(err)
	}
	if err := zw.Close(); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

// sameRunBody reads both bodies 64 KiB at a time: lengths at, around and between those
// blocks, and bodies compressed differently, must compare by their text alone.
func TestSameRunBodyComparesText(t *testing.T) {
	long := strings.Repeat("q1 Q0 d1 1 1.5 run\n", 10000) // 190,000 bytes
	block := long[:64<<10]
	cases := []struct {
		a, b string
		same bool
	}{
		{long, long, true},
		{"", "", true},
		{block, block, true},
		{block, block + "x", false},
		{block + "x", block, false},
		{long, long[:len(long)-1], false},
		{long, long[:len(long)-1] + "X", false},
		{long, "", false},
		{block + block, block + block[:len(block)-1] + "!", false},
	}
	for i, c := range cases {
		got, err := sameRunBody(gzipped(t, c.a, gzip.BestSpeed), gzipped(t, c.b, gzip.BestCompression))
		if err != nil || got != c.same {
			t.Errorf("case %d (%d and %d bytes): %v, %v; want %v", i, len(c.a), len(c.b), got, err, c.same)
		}
	}
	if _, err := sameRunBody([]byte("not gzip"), gzipped(t, long, gzip.DefaultCompression)); err == nil {
		t.Error("a body that is not gzip compared without an error")
	}
}

// A cached run holds each query's documents in file order, even when the file interleaves its
// queries, the same on the first view after a start (parsed from the kept body), with one copy
// of each id across runs and no query's documents able to grow into the next's.
func TestCachedRunsInFileOrderWithSharedIDs(t *testing.T) {
	f := newPlanFixture(t)
	ctx := context.Background()
	var texts [2]strings.Builder
	want := [2]rankeval.Run{{}, {}}
	for i := 0; i < 30; i++ {
		q := fmt.Sprintf("q%d", 1+i%3)
		doc := fmt.Sprintf("%s-d%02d", q, 1+i/3)
		for r := range texts {
			score := float64(i*(r+1)%17) + float64(i)/100
			fmt.Fprintf(&texts[r], "%s Q0 %s %d %g interleaved%d\n", q, doc, 1+i/3, score, r)
			want[r][q] = append(want[r][q], rankeval.ScoredDoc{DocID: doc, Score: score})
		}
	}
	var ids []int64
	for r := range texts {
		kr, err := f.s.KeepRun(ctx, f.project.ID, f.lead.ID, fmt.Sprintf("interleaved%d.txt", r), strings.NewReader(texts[r].String()))
		if err != nil {
			t.Fatal(err)
		}
		if kr.Entries != 30 || kr.Queries != 3 {
			t.Errorf("kept %+v; want 30 entries over 3 queries", kr)
		}
		ids = append(ids, kr.ID)
	}
	for _, view := range []string{"kept", "first view after a start"} {
		if view != "kept" {
			f.s.runs = runCache{}
		}
		runs, err := f.s.loadRuns(ctx, f.project.ID, ids)
		if err != nil {
			t.Fatal(err)
		}
		for r, nr := range runs {
			if nr.Name != fmt.Sprintf("interleaved%d.txt", r) || !reflect.DeepEqual(nr.Run, want[r]) {
				t.Errorf("%s: run %d is %q %v; want %v", view, r, nr.Name, nr.Run, want[r])
			}
			for q, docs := range nr.Run {
				if cap(docs) != len(docs) {
					t.Errorf("%s: run %d query %s: %d documents with room for %d", view, r, q, len(docs), cap(docs))
				}
			}
		}
		a, b := runs[0].Run["q2"][4].DocID, runs[1].Run["q2"][4].DocID
		if a != b || unsafe.StringData(a) != unsafe.StringData(b) {
			t.Errorf("%s: document %q of two runs is held twice", view, a)
		}
	}
}
