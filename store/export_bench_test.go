package store

import (
	"context"
	"database/sql"
	"fmt"
	"io"
	"math/rand/v2"
	"os"
	"runtime"
	"runtime/metrics"
	"strconv"
	"sync/atomic"
	"testing"
	"time"

	"github.com/pertinent/pertinent/export"
	"github.com/pertinent/pertinent/ingest"
)

// benchProject fills a project with n pairs (100 documents per query), three current grades
// each and 136 dense features: the shape of a common learning-to-rank benchmark set.
func benchProject(b *testing.B, n int) (*Store, int64) {
	b.Helper()
	ctx := context.Background()
	s, err := Open(ctx, b.TempDir()+"/bench.db")
	if err != nil {
		b.Fatal(err)
	}
	b.Cleanup(func() { s.Close() })
	p, err := s.CreateProject(ctx, NewProject{Name: "bench"}, 0)
	if err != nil {
		b.Fatal(err)
	}
	var users [3]int64
	for i := range users {
		u, err := s.CreateUser(ctx, "a"+strconv.Itoa(i), "", RoleAssessor, "a long enough password")
		if err != nil {
			b.Fatal(err)
		}
		users[i] = u.ID
	}
	rng := rand.New(rand.NewPCG(1, 2))
	at := s.now()
	err = s.write(ctx, func(tx *sql.Tx) error {
		q, _ := tx.PrepareContext(ctx, `INSERT INTO queries(project_id, external_id, text) VALUES (?, ?, 'q') RETURNING id`)
		d, _ := tx.PrepareContext(ctx, `INSERT INTO documents(project_id, external_id) VALUES (?, ?) RETURNING id`)
		pr, _ := tx.PrepareContext(ctx, `INSERT INTO pairs(project_id, query_id, document_id, judged, created_at) VALUES (?, ?, ?, 3, ?) RETURNING id`)
		j, _ := tx.PrepareContext(ctx, `INSERT INTO judgments(pair_id, user_id, grade, created_at) VALUES (?, ?, ?, ?)`)
		f, _ := tx.PrepareContext(ctx, `INSERT INTO pair_features(pair_id, data) VALUES (?, ?)`)
		feats := make([]ingest.Feature, 136)
		var qid int64
		for i := range n {
			if i%100 == 0 {
				if err := q.QueryRowContext(ctx, p.ID, fmt.Sprintf("q%06d", i/100)).Scan(&qid); err != nil {
					return err
				}
			}
			var did, pid int64
			if err := d.QueryRowContext(ctx, p.ID, fmt.Sprintf("d%07d", i)).Scan(&did); err != nil {
				return err
			}
			if err := pr.QueryRowContext(ctx, p.ID, qid, did, at).Scan(&pid); err != nil {
				return err
			}
			g := rng.IntN(5)
			for k, u := range users {
				if _, err := j.ExecContext(ctx, pid, u, min(g+k/2, 4), at); err != nil {
					return err
				}
			}
			for k := range feats {
				feats[k] = ingest.Feature{Index: uint32(k + 1), Value: float64(rng.IntN(1_000_000)) / 1000}
			}
			if _, err := f.ExecContext(ctx, pid, ingest.EncodeFeatures(feats)); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		b.Fatal(err)
	}
	return s, p.ID
}

// peakHeap samples the live heap every few milliseconds until stop is called and returns
// the highest sample in bytes.
func peakHeap() (stop func() uint64) {
	var peak atomic.Uint64
	done := make(chan struct{})
	finished := make(chan struct{})
	sample := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
	go func() {
		defer close(finished)
		t := time.NewTicker(2 * time.Millisecond)
		defer t.Stop()
		for {
			metrics.Read(sample)
			if v := sample[0].Value.Uint64(); v > peak.Load() {
				peak.Store(v)
			}
			select {
			case <-done:
				return
			case <-t.C:
			}
		}
	}()
	return func() uint64 {
		close(done)
		<-finished
		return peak.Load()
	}
}

type discardSink struct{}

func (discardSink) Create(string) (io.Writer, error) { return io.Discard, nil }
func (discardSink) Sequential() bool                 { return true }

// BenchmarkExportSVMlightFromStore measures the whole path: SQL read of pairs, judgments and
// feature blobs, label policy, SVMlight formatting, group files and manifest. Pairs default
// to 100,000 (PERTINENT_BENCH_PAIRS overrides). Reports rows/s (planning included) and the
// peak live heap while planning and while writing.
//
//	go test ./store/ -run '^$' -bench ExportSVMlightFromStore -benchtime 3x
func BenchmarkExportSVMlightFromStore(b *testing.B) {
	n := 100_000
	if v, err := strconv.Atoi(os.Getenv("PERTINENT_BENCH_PAIRS")); err == nil && v > 0 {
		n = v
	}
	s, project := benchProject(b, n)
	ctx := context.Background()
	for _, bc := range []struct {
		name  string
		split export.SplitSpec
		zip   bool
	}{
		{"dir", export.SplitSpec{Method: "none"}, false},
		{"zip-split-3-passes", export.SplitSpec{Method: "ratio", Ratios: &export.Ratios{Train: 0.8, Validation: 0.1, Test: 0.1}, Seed: 1}, true},
	} {
		b.Run(bc.name, func(b *testing.B) {
			req := ExportRequest{Policy: export.LabelPolicy{AdjudicationFirst: true, Consensus: export.ConsensusMedian}, Format: FormatSVMlight, Split: bc.split}
			runtime.GC()
			var planPeak, writePeak uint64
			rows := 0
			for b.Loop() {
				stop := peakHeap()
				plan, err := s.PlanExport(ctx, project, req)
				if err != nil {
					b.Fatal(err)
				}
				planPeak = max(planPeak, stop())
				runtime.GC()
				stop = peakHeap()
				var sink export.Sink = &export.DirSink{Dir: b.TempDir()}
				if bc.zip {
					zs := export.NewZipSink(io.Discard, time.Now())
					sink = zs
					defer zs.Close()
				}
				m, err := plan.Write(ctx, sink, time.Now(), nil)
				if err != nil {
					b.Fatal(err)
				}
				if ds, ok := sink.(*export.DirSink); ok {
					ds.Close()
				}
				rows += m.Rows
				writePeak = max(writePeak, stop())
			}
			b.ReportMetric(float64(rows)/b.Elapsed().Seconds(), "rows/s")
			// The plan holds the agreement figures' input (every current grade); the stream
			// itself should not grow with the pair count.
			b.ReportMetric(float64(planPeak)/(1<<20), "plan-peak-heap-MiB")
			b.ReportMetric(float64(writePeak)/(1<<20), "write-peak-heap-MiB")
		})
	}
}
