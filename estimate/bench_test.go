package estimate

import (
	"bytes"
	"fmt"
	"runtime"
	"strconv"
	"sync"
	"testing"

	"github.com/pertinent/pertinent/ingest"
)

// benchCollection: 20 runs × 1,000 queries × depth 100 (2,000,000 entries),
// invented as in invent from 400 documents per query, the runs' noise from
// 0.1 to 0.48 so that their top 10s overlap as real runs' do.
var benchCollection = sync.OnceValue(func() collection {
	noise := make([]float64, 20)
	for i := range noise {
		noise[i] = 0.1 + 0.02*float64(i)
	}
	return invent(77, 1000, 400, 100, noise)
})

var benchDesign = Design{Kind: KindStratified, Depth: 10, MaxDepth: 100, Budget: 50000, Seed: 1}

// reportMB reports the bytes allocated per operation in MB.
func reportMB(b *testing.B, before runtime.MemStats) {
	var after runtime.MemStats
	runtime.ReadMemStats(&after)
	b.ReportMetric(float64(after.TotalAlloc-before.TotalAlloc)/float64(b.N)/1e6, "MB/op")
}

func BenchmarkPlan(b *testing.B) {
	c := benchCollection()
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	b.ResetTimer()
	var p Plan
	for b.Loop() {
		var err error
		if p, err = MakePlan(benchDesign, c.runs, nil); err != nil {
			b.Fatal(err)
		}
	}
	reportMB(b, ms)
	b.ReportMetric(float64(len(p.Choices)), "choices")
	b.ReportMetric(p.Strata[0].Expected, "top-pairs")
}

func BenchmarkEstimate(b *testing.B) {
	c := benchCollection()
	p, err := MakePlan(benchDesign, c.runs, nil)
	if err != nil {
		b.Fatal(err)
	}
	labels := labelsOf(c.truth, p.Choices, nil)
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	b.ResetTimer()
	for b.Loop() {
		if _, err := Estimate(c.runs, labels, Options{K: 10, MaxGrade: 4, RBPDepth: 100}); err != nil {
			b.Fatal(err)
		}
	}
	reportMB(b, ms)
	b.ReportMetric(float64(len(p.Choices)), "labels")
}

// BenchmarkReadRunReference reads the same 2,000,000 entries as run-file
// text with ingest.ReadRun: what reading the runs costs before any plan.
func BenchmarkReadRunReference(b *testing.B) {
	c := benchCollection()
	var buf bytes.Buffer
	for _, r := range c.runs {
		for _, q := range sortedKeys(r.Run) {
			for i, d := range r.Run[q] {
				fmt.Fprintf(&buf, "%s Q0 %s %d %s %s\n", q, d.DocID, i+1, strconv.FormatFloat(d.Score, 'g', -1, 64), r.Name)
			}
		}
	}
	text := buf.Bytes()
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	b.ResetTimer()
	for b.Loop() {
		n := 0
		if err := ingest.ReadRun(bytes.NewReader(text), ingest.Options{}, func(ingest.RunEntry) error { n++; return nil }); err != nil {
			b.Fatal(err)
		}
		if n != 2000000 {
			b.Fatalf("%d entries", n)
		}
	}
	reportMB(b, ms)
	b.ReportMetric(float64(len(text))/1e6, "text-MB")
}
