package store

import (
	"bytes"
	"compress/gzip"
	"context"
	"database/sql"
	"errors"
	"fmt"
	"io"
	"strings"
	"sync"
	"time"

	"github.com/pertinent/pertinent/estimate"
	"github.com/pertinent/pertinent/ingest"
	"github.com/pertinent/pertinent/rankeval"
)

// KeptRun is a run file kept in a project for planning judging and reading estimates.
type KeptRun struct {
	ID        int64     `json:"id"`
	Name      string    `json:"name"`
	Entries   int       `json:"entries"`
	Queries   int       `json:"queries"`
	CreatedAt time.Time `json:"created_at"`
	By        string    `json:"by,omitempty"`
}

// runProblems turns the problems ingest.ReadRun found in a run file into one Invalid a page
// shows; any other error is passed on as it is.
func runProblems(err error) error {
	var ps *ingest.Problems
	if errors.As(err, &ps) {
		return errorf(CodeInvalid, ps.Error())
	}
	return err
}

// KeepRun reads a run file, checks it line by line, and keeps it (compressed) under name. A run
// of the same name and the same entries is kept once: the existing one is returned. A file
// holds one run: a second run tag is a problem at its line.
func (s *Store) KeepRun(ctx context.Context, projectID, by int64, name string, body io.Reader) (KeptRun, error) {
	name = strings.TrimSpace(name)
	if name == "" {
		return KeptRun{}, errorf(CodeInvalid, "a kept run needs a name")
	}
	var packed bytes.Buffer
	zw := gzip.NewWriter(&packed)
	tag, tagLine := "", 0
	entries := 0
	queries := map[string]bool{}
	// The entries read here are the run a plan made next will ask for: keep them parsed.
	run := rankeval.Run{}
	err := ingest.ReadRun(io.TeeReader(body, zw), ingest.Options{File: name}, func(e ingest.RunEntry) error {
		if tag == "" {
			tag, tagLine = e.Tag, e.Line
		} else if e.Tag != tag {
			return errorf(CodeInvalid, fmt.Sprintf("%s:%d: run tag %q differs from %q at line %d; keep one run per file", name, e.Line, e.Tag, tag, tagLine))
		}
		entries++
		queries[e.QueryID] = true
		run[e.QueryID] = append(run[e.QueryID], rankeval.ScoredDoc{DocID: e.DocID, Score: e.Score})
		return nil
	})
	if err != nil {
		return KeptRun{}, runProblems(err)
	}
	if entries == 0 {
		return KeptRun{}, errorf(CodeInvalid, name+": the run has no entries")
	}
	if err := zw.Close(); err != nil {
		return KeptRun{}, err
	}
	kr := KeptRun{Name: name, Entries: entries, Queries: len(queries), CreatedAt: s.clock().UTC()}
	err = s.write(ctx, func(tx *sql.Tx) error {
		var old []byte
		err := tx.QueryRowContext(ctx, `SELECT id, body FROM runs WHERE project_id = ? AND name = ?`, projectID, name).Scan(&kr.ID, &old)
		switch {
		case err == nil:
			same, err := sameRunBody(old, packed.Bytes())
			if err != nil {
				return err
			}
			if !same {
				return errorf(CodeConflict, fmt.Sprintf("a different run named %q is kept already: rename the file to keep both", name))
			}
			return nil
		case !errors.Is(err, sql.ErrNoRows):
			return err
		}
		if err := tx.QueryRowContext(ctx, `INSERT INTO runs(project_id, name, body, entries, queries, user_id, created_at)
			VALUES (?, ?, ?, ?, ?, ?, ?) RETURNING id`,
			projectID, name, packed.Bytes(), entries, len(queries), nullID(by), timeText(kr.CreatedAt)).Scan(&kr.ID); err != nil {
			return err
		}
		return s.audit(ctx, tx, by, projectID, "run.keep", name, fmt.Sprintf("%d entries over %d queries", entries, len(queries)))
	})
	if err == nil {
		s.runs.put(kr.ID, estimate.NamedRun{Name: name, Run: run}, entries)
	}
	return kr, err
}

// sameRunBody compares two kept bodies by content, not by their compressed bytes.
func sameRunBody(a, b []byte) (bool, error) {
	ua, err := gunzip(a)
	if err != nil {
		return false, err
	}
	ub, err := gunzip(b)
	if err != nil {
		return false, err
	}
	return bytes.Equal(ua, ub), nil
}

func gunzip(b []byte) ([]byte, error) {
	zr, err := gzip.NewReader(bytes.NewReader(b))
	if err != nil {
		return nil, err
	}
	return io.ReadAll(zr)
}

// KeptRuns lists a project's kept runs by name.
func (s *Store) KeptRuns(ctx context.Context, projectID int64) ([]KeptRun, error) {
	return queryAll(ctx, s.r, `SELECT r.id, r.name, r.entries, r.queries, r.created_at, COALESCE(u.username, '')
		FROM runs r LEFT JOIN users u ON u.id = r.user_id WHERE r.project_id = ? ORDER BY r.name`, func(r rowScanner) (KeptRun, error) {
		var kr KeptRun
		var at string
		err := r.Scan(&kr.ID, &kr.Name, &kr.Entries, &kr.Queries, &at, &kr.By)
		kr.CreatedAt = parseTime(at)
		return kr, err
	}, projectID)
}

// runCache keeps parsed runs by id: a kept run never changes, and parsing a large one takes
// longer than the estimate made from it.
type runCache struct {
	mu   sync.Mutex
	runs map[int64]estimate.NamedRun
	size int // entries held
}

// runCacheEntries bounds the cache (about 100 bytes an entry).
const runCacheEntries = 4 << 20

func (c *runCache) get(id int64) (estimate.NamedRun, bool) {
	c.mu.Lock()
	defer c.mu.Unlock()
	r, ok := c.runs[id]
	return r, ok
}

func (c *runCache) put(id int64, r estimate.NamedRun, entries int) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if c.runs == nil || c.size+entries > runCacheEntries {
		c.runs, c.size = map[int64]estimate.NamedRun{}, 0
	}
	c.runs[id] = r
	c.size += entries
}

// loadRuns returns the kept runs of the project with the given ids, in that order.
func (s *Store) loadRuns(ctx context.Context, projectID int64, ids []int64) ([]estimate.NamedRun, error) {
	out := make([]estimate.NamedRun, 0, len(ids))
	for _, id := range ids {
		if r, ok := s.runs.get(id); ok {
			out = append(out, r)
			continue
		}
		var name string
		var body []byte
		var entries int
		err := s.r.QueryRowContext(ctx, `SELECT name, body, entries FROM runs WHERE id = ? AND project_id = ?`, id, projectID).Scan(&name, &body, &entries)
		if errors.Is(err, sql.ErrNoRows) {
			return nil, errorf(CodeNotFound, fmt.Sprintf("there is no kept run %d in this project", id))
		}
		if err != nil {
			return nil, err
		}
		zr, err := gzip.NewReader(bytes.NewReader(body))
		if err != nil {
			return nil, fmt.Errorf("store: kept run %d: %w", id, err)
		}
		run := rankeval.Run{}
		err = ingest.ReadRun(zr, ingest.Options{File: name}, func(e ingest.RunEntry) error {
			run[e.QueryID] = append(run[e.QueryID], rankeval.ScoredDoc{DocID: e.DocID, Score: e.Score})
			return nil
		})
		if err != nil {
			return nil, fmt.Errorf("store: kept run %d: %w", id, err)
		}
		nr := estimate.NamedRun{Name: name, Run: run}
		s.runs.put(id, nr, entries)
		out = append(out, nr)
	}
	return out, nil
}
