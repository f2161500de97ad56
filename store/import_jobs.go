package store

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"time"

	"github.com/pertinent/pertinent/ingest"
)

// Background imports of the web Import page are kept in import_jobs (migration 0015), so that
// every instance serving one database can show any job; the job itself runs in the instance
// that received the upload, which stamps its row as it reads and records the outcome at the end.

const (
	// ImportJobStale is how long a running job's row may go without a stamp before it reads as
	// interrupted: its instance stamps it about once a second while it runs.
	ImportJobStale = 30 * time.Second
	// ImportJobKept is how long a job is kept after its last stamp, so its report can be read again.
	ImportJobKept = time.Hour

	// ImportJobInterrupted is the failure of a job whose instance stopped without finishing it;
	// an import is one transaction, so nothing was changed.
	ImportJobInterrupted = "The import was interrupted because the server running it stopped; nothing was changed."
)

const (
	insertImportJob = `INSERT INTO import_jobs(id, project_id, kind, files, total_bytes, bytes_read, started_at, updated_at)
		VALUES (?, ?, ?, ?, ?, 0, ?, ?)`
	forgetImportJobs = `DELETE FROM import_jobs WHERE updated_at < ?`
	// A finished job keeps its outcome: a stamp that queued behind the end changes nothing.
	// The bytes read never go back (the larger of the two, written as CASE: SQLite's scalar
	// max(a, b) is GREATEST on PostgreSQL).
	stampImportJob = `UPDATE import_jobs SET bytes_read = CASE WHEN bytes_read > ?1 THEN bytes_read ELSE ?1 END, updated_at = ?2
		WHERE id = ?3 AND finished_at IS NULL`
	finishImportJob = `UPDATE import_jobs SET bytes_read = CASE WHEN bytes_read > ?1 THEN bytes_read ELSE ?1 END,
		updated_at = ?2, finished_at = ?2, outcome = ?3
		WHERE id = ?4 AND finished_at IS NULL`
	selectImportJob = `SELECT id, project_id, kind, files, total_bytes, bytes_read, started_at, updated_at,
		COALESCE(finished_at, ''), COALESCE(outcome, '')
		FROM import_jobs WHERE id = ? AND project_id = ?`
)

// ImportJob is one background import as every instance sees it.
type ImportJob struct {
	ID        string
	ProjectID int64
	Kind      ImportKind
	Files     []string
	Total     int64 // bytes uploaded
	Read      int64 // bytes read so far, as last stamped
	Started   time.Time
	Updated   time.Time // the last stamp
	// Done: the job finished, or its instance stopped stamping it (then Failure says so).
	Done     bool
	Finished time.Time
	Outcome  ImportOutcome
}

// ImportOutcome is how a job ended: a report, or the problems that rejected the files, or a
// failure message for the reader.
type ImportOutcome struct {
	Report   ImportReport     `json:"report"`
	Problems *ingest.Problems `json:"problems,omitempty"`
	Failure  string           `json:"failure,omitempty"`
}

// CreateImportJob records a job that is about to run (its ID, project, kind, files and total
// set), stamped now, and forgets the jobs last stamped more than ImportJobKept ago.
func (s *Store) CreateImportJob(ctx context.Context, job ImportJob) error {
	files, err := json.Marshal(job.Files)
	if err != nil {
		return err
	}
	now := s.clock()
	return s.write(ctx, func(tx *sql.Tx) error {
		if _, err := tx.ExecContext(ctx, forgetImportJobs, timeText(now.Add(-ImportJobKept))); err != nil {
			return err
		}
		_, err := tx.ExecContext(ctx, insertImportJob, job.ID, job.ProjectID, string(job.Kind), string(files), job.Total,
			timeText(now), timeText(now))
		return err
	})
}

// StampImportJob records how far a running job has read, and that its instance is alive.
// Callers stamp about once a second: the stamp is what keeps the job from reading as
// interrupted elsewhere, and more often would only add writes.
func (s *Store) StampImportJob(ctx context.Context, id string, read int64) error {
	return s.write(ctx, func(tx *sql.Tx) error {
		_, err := tx.ExecContext(ctx, stampImportJob, read, s.now(), id)
		return err
	})
}

// FinishImportJob records a job's outcome; a job finishes once, later calls change nothing.
func (s *Store) FinishImportJob(ctx context.Context, id string, read int64, out ImportOutcome) error {
	text, err := json.Marshal(out)
	if err != nil {
		return err
	}
	return s.write(ctx, func(tx *sql.Tx) error {
		_, err := tx.ExecContext(ctx, finishImportJob, read, s.now(), string(text), id)
		return err
	})
}

// ImportJob reads a job of the project (ErrNotFound for another project's). A running job
// whose row was last stamped more than ImportJobStale ago reads as done and interrupted.
func (s *Store) ImportJob(ctx context.Context, id string, projectID int64) (ImportJob, error) {
	var j ImportJob
	var kind, files, started, updated, finished, outcome string
	err := s.r.QueryRowContext(ctx, selectImportJob, id, projectID).
		Scan(&j.ID, &j.ProjectID, &kind, &files, &j.Total, &j.Read, &started, &updated, &finished, &outcome)
	if errors.Is(err, sql.ErrNoRows) {
		return j, ErrNotFound
	}
	if err != nil {
		return j, err
	}
	j.Kind, j.Started, j.Updated = ImportKind(kind), parseTime(started), parseTime(updated)
	if err := json.Unmarshal([]byte(files), &j.Files); err != nil {
		return j, err
	}
	switch {
	case finished != "":
		j.Done, j.Finished = true, parseTime(finished)
		if err := json.Unmarshal([]byte(outcome), &j.Outcome); err != nil {
			return j, err
		}
	case s.clock().Sub(j.Updated) > ImportJobStale:
		j.Done, j.Finished = true, j.Updated
		j.Outcome = ImportOutcome{Report: ImportReport{Kind: j.Kind, Files: j.Files}, Failure: ImportJobInterrupted}
	}
	return j, nil
}
