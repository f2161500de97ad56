package store

import (
	"bytes"
	"compress/gzip"
	"context"
	"fmt"
	"io"
	"math/rand/v2"
	"path/filepath"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/estimate"
	"github.com/pertinent/pertinent/ingest"
)

// planBench is a project of 1,000 queries, each with 50 pairs of one judgment (50,000
// judgments), and 20 kept runs ranking those 50 documents per query (1,000,000 run lines) under
// one depth design.
type planBench struct {
	s      *Store
	p      Project
	design int64
	texts  []string
}

func newPlanBench(b *testing.B) *planBench {
	b.Helper()
	ctx := context.Background()
	s, err := Open(ctx, filepath.Join(b.TempDir(), "bench.db"))
	if err != nil {
		b.Fatal(err)
	}
	b.Cleanup(func() { s.Close() })
	p, lead := leadProject(b, s, NewProject{Name: "bench"})
	rng := rand.New(rand.NewPCG(3, 4))
	const queries, docs = 1000, 50
	err = s.Load(ctx, p.ID, func(l *Loader) error {
		for q := 0; q < queries; q++ {
			qid, err := l.Query(Query{ExternalID: fmt.Sprintf("q%04d", q), Text: "q"})
			if err != nil {
				return err
			}
			for d := 0; d < docs; d++ {
				did, err := l.Document(Document{ExternalID: fmt.Sprintf("q%04d-d%03d", q, d)})
				if err != nil {
					return err
				}
				pid, err := l.Pair(PairSpec{QueryID: qid, DocumentID: did})
				if err != nil {
					return err
				}
				g := max(0, 4-d/5-rng.IntN(3))
				if err := l.Judgment(RecordedJudgment{PairID: pid, UserID: lead.ID, Grade: &g}); err != nil {
					return err
				}
			}
		}
		return nil
	})
	if err != nil {
		b.Fatal(err)
	}
	pb := &planBench{s: s, p: p}
	var ids []int64
	for r := 0; r < 20; r++ {
		var t strings.Builder
		for q := 0; q < queries; q++ {
			for rank, d := range rng.Perm(docs) {
				fmt.Fprintf(&t, "q%04d Q0 q%04d-d%03d %d %d.%03d r%d\n", q, q, d, rank+1, 1000-rank, r, r)
			}
		}
		pb.texts = append(pb.texts, t.String())
		kr, err := s.KeepRun(ctx, p.ID, lead.ID, fmt.Sprintf("r%02d.run", r), strings.NewReader(t.String()))
		if err != nil {
			b.Fatal(err)
		}
		ids = append(ids, kr.ID)
	}
	// Every pair exists already (judged in full): the design records the runs and adds nothing.
	out, err := s.PlanJudging(ctx, p.ID, lead.ID, PlanRequest{Runs: ids, Settings: DesignSettings{
		Design: estimate.Design{Kind: estimate.KindDepth, Depth: docs, K: 10}}})
	if err != nil {
		b.Fatal(err)
	}
	if out.Added != 0 {
		b.Fatalf("the design added %d pairs; every pair should exist", out.Added)
	}
	pb.design = out.DesignID
	return pb
}

// BenchmarkDesignEstimate times "how sure are we?" for 20 runs over 50,000 judgments: warm (the
// kept runs parsed and cached, as on every view but the first) and cold (the first view after a
// start, which parses the kept runs), beside reading the same 20 run files with ingest.ReadRun
// alone, measured in the same run.
func BenchmarkDesignEstimate(b *testing.B) {
	pb := newPlanBench(b)
	ctx := context.Background()
	b.Run("warm", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			if _, err := pb.s.DesignEstimate(ctx, pb.p.ID, pb.design); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("cold", func(b *testing.B) {
		for i := 0; i < b.N; i++ {
			pb.s.runs = runCache{}
			if _, err := pb.s.DesignEstimate(ctx, pb.p.ID, pb.design); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("readrun-reference", func(b *testing.B) {
		var packed [][]byte
		for _, t := range pb.texts {
			var buf bytes.Buffer
			zw := gzip.NewWriter(&buf)
			io.WriteString(zw, t)
			zw.Close()
			packed = append(packed, buf.Bytes())
		}
		b.ResetTimer()
		for i := 0; i < b.N; i++ {
			n := 0
			for _, p := range packed {
				zr, _ := gzip.NewReader(bytes.NewReader(p))
				if err := ingest.ReadRun(zr, ingest.Options{}, func(ingest.RunEntry) error { n++; return nil }); err != nil {
					b.Fatal(err)
				}
			}
			if n != 1000000 {
				b.Fatalf("read %d entries", n)
			}
		}
	})
}
