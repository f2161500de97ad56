package store

import (
	"context"
	"errors"
	"reflect"
	"testing"
	"time"

	"github.com/pertinent/pertinent/ingest"
)

// A job reads back as it was recorded, only within its project; stamps move its byte count
// and keep it running; its outcome, problems included, comes back whole; a stamp queued
// behind the end changes nothing; and an hour after its last stamp it is forgotten.
func TestImportJobLifecycle(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	now := time.Date(2026, 12, 1, 10, 0, 0, 0, time.UTC)
	s.SetClock(func() time.Time { return now })
	p, lead := leadProject(t, s, NewProject{Name: "Kettles"})
	other, err := s.CreateProject(ctx, NewProject{Name: "Mugs"}, lead.ID)
	if err != nil {
		t.Fatal(err)
	}
	job := ImportJob{ID: "a1", ProjectID: p.ID, Kind: ImportPairs, Files: []string{"p.csv", "q.csv"}, Total: 2048}
	if err := s.CreateImportJob(ctx, job); err != nil {
		t.Fatal(err)
	}
	got, err := s.ImportJob(ctx, "a1", p.ID)
	if err != nil {
		t.Fatal(err)
	}
	if got.Done || got.Read != 0 || got.Total != 2048 || got.Kind != ImportPairs || !reflect.DeepEqual(got.Files, job.Files) ||
		!got.Started.Equal(now) || !got.Updated.Equal(now) {
		t.Fatalf("new job read back as %+v", got)
	}
	if _, err := s.ImportJob(ctx, "a1", other.ID); !errors.Is(err, ErrNotFound) {
		t.Fatalf("the job through another project: %v, want not found", err)
	}
	if _, err := s.ImportJob(ctx, "nope", p.ID); !errors.Is(err, ErrNotFound) {
		t.Fatalf("an unknown job: %v, want not found", err)
	}

	// Stamped every second for a minute: still running, the last byte count shown.
	for i := range 60 {
		now = now.Add(time.Second)
		if err := s.StampImportJob(ctx, "a1", int64(i*10)); err != nil {
			t.Fatal(err)
		}
	}
	if got, _ = s.ImportJob(ctx, "a1", p.ID); got.Done || got.Read != 590 || !got.Updated.Equal(now) {
		t.Fatalf("after a minute of stamps: done=%v read=%d updated=%v", got.Done, got.Read, got.Updated)
	}

	out := ImportOutcome{Problems: &ingest.Problems{List: []ingest.Problem{
		{File: "p.csv", Line: 2, Field: "doc_id", Reason: `no document "nowhere" in this project`},
		{File: "q.csv", Reason: "empty file"},
	}, More: 3}}
	out.Report = ImportReport{Kind: ImportPairs, Files: job.Files}
	now = now.Add(time.Second)
	end := now
	if err := s.FinishImportJob(ctx, "a1", 2048, out); err != nil {
		t.Fatal(err)
	}
	// A stamp and a second outcome arriving late change nothing.
	now = now.Add(time.Second)
	if err := s.StampImportJob(ctx, "a1", 100); err != nil {
		t.Fatal(err)
	}
	if err := s.FinishImportJob(ctx, "a1", 0, ImportOutcome{Failure: "late"}); err != nil {
		t.Fatal(err)
	}
	// Long after the end it still reads as finished, not interrupted.
	now = now.Add(10 * time.Minute)
	got, err = s.ImportJob(ctx, "a1", p.ID)
	if err != nil {
		t.Fatal(err)
	}
	if !got.Done || got.Read != 2048 || !got.Finished.Equal(end) || !reflect.DeepEqual(got.Outcome, out) {
		t.Fatalf("finished job read back as done=%v read=%d finished=%v outcome=%+v, want %+v", got.Done, got.Read, got.Finished, got.Outcome, out)
	}

	// A second job, finished with counts and notes, kept while the first is forgotten.
	now = end.Add(ImportJobKept)
	rep := ImportOutcome{Report: ImportReport{Kind: ImportRows, DryRun: true, Files: []string{"rows.csv"},
		Counts: []ImportCount{{What: "queries", New: 1, Unchanged: 1}, {What: "pairs", New: 2}}, Notes: []string{"2 rows skipped"}}}
	if err := s.CreateImportJob(ctx, ImportJob{ID: "b2", ProjectID: p.ID, Kind: ImportRows, Files: []string{"rows.csv"}, Total: 10}); err != nil {
		t.Fatal(err)
	}
	if err := s.FinishImportJob(ctx, "b2", 10, rep); err != nil {
		t.Fatal(err)
	}
	if got, _ := s.ImportJob(ctx, "a1", p.ID); !got.Done {
		t.Fatal("a job an hour old to the millisecond is forgotten already")
	}
	now = now.Add(time.Millisecond)
	if err := s.CreateImportJob(ctx, ImportJob{ID: "c3", ProjectID: other.ID, Kind: ImportRuns, Files: []string{}, Total: 0}); err != nil {
		t.Fatal(err)
	}
	if _, err := s.ImportJob(ctx, "a1", p.ID); !errors.Is(err, ErrNotFound) {
		t.Fatalf("a job finished more than an hour ago: %v, want forgotten", err)
	}
	if got, err := s.ImportJob(ctx, "b2", p.ID); err != nil || !reflect.DeepEqual(got.Outcome, rep) {
		t.Fatalf("the recent job: %+v (%v), want its report %+v", got.Outcome, err, rep)
	}
}

// A job left running by an instance that stopped (its row no longer stamped) reads as
// interrupted once the row is ImportJobStale old, and not before.
func TestStaleRunningImportJobReadsAsInterrupted(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	now := time.Date(2026, 12, 1, 10, 0, 0, 0, time.UTC)
	s.SetClock(func() time.Time { return now })
	p, _ := leadProject(t, s, NewProject{Name: "Kettles"})
	if err := s.CreateImportJob(ctx, ImportJob{ID: "r1", ProjectID: p.ID, Kind: ImportRows, Files: []string{"big.csv"}, Total: 1 << 20}); err != nil {
		t.Fatal(err)
	}
	now = now.Add(5 * time.Second)
	if err := s.StampImportJob(ctx, "r1", 4096); err != nil {
		t.Fatal(err)
	}
	last := now
	now = last.Add(ImportJobStale)
	if got, _ := s.ImportJob(ctx, "r1", p.ID); got.Done || got.Outcome.Failure != "" {
		t.Fatalf("a job stamped %v ago reads as done=%v failure=%q", ImportJobStale, got.Done, got.Outcome.Failure)
	}
	now = now.Add(time.Millisecond)
	got, err := s.ImportJob(ctx, "r1", p.ID)
	if err != nil {
		t.Fatal(err)
	}
	if !got.Done || got.Outcome.Failure != ImportJobInterrupted || !got.Finished.Equal(last) || got.Read != 4096 ||
		got.Outcome.Problems != nil || got.Outcome.Report.Changed() {
		t.Fatalf("stale job reads as %+v, want done and interrupted at its last stamp", got)
	}
	const want = "The import was interrupted because the server running it stopped; nothing was changed."
	if got.Outcome.Failure != want {
		t.Errorf("failure %q, want %q", got.Outcome.Failure, want)
	}
}
