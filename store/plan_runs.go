package store

import (
	"bytes"
	"compress/gzip"
	"context"
	"database/sql"
	"errors"
	"fmt"
	"io"
	"slices"
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
	// The fastest level: at the default, compressing was 40% of keeping 20 runs of 100,000
	// lines (1.9 s of 4.3), for bodies 14% smaller. Bodies compare by content, so runs kept
	// at another level still match.
	zw, err := gzip.NewWriterLevel(&packed, gzip.BestSpeed)
	if err != nil {
		return KeptRun{}, err
	}
	tag, tagLine := "", 0
	// The entries read here are the run a plan made next will ask for: keep them parsed.
	var run runBuilder
	err = ingest.ReadRun(io.TeeReader(body, zw), ingest.Options{File: name}, func(e ingest.RunEntry) error {
		if tag == "" {
			tag, tagLine = e.Tag, e.Line
		} else if e.Tag != tag {
			return errorf(CodeInvalid, fmt.Sprintf("%s:%d: run tag %q differs from %q at line %d; keep one run per file", name, e.Line, e.Tag, tag, tagLine))
		}
		run.add(e)
		return nil
	})
	if err != nil {
		return KeptRun{}, runProblems(err)
	}
	entries, queries := run.entries, len(run.queries)
	if entries == 0 {
		return KeptRun{}, errorf(CodeInvalid, name+": the run has no entries")
	}
	if err := zw.Close(); err != nil {
		return KeptRun{}, err
	}
	kr := KeptRun{Name: name, Entries: entries, Queries: queries, CreatedAt: s.clock().UTC()}
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
			projectID, name, packed.Bytes(), entries, queries, nullID(by), timeText(kr.CreatedAt)).Scan(&kr.ID); err != nil {
			return err
		}
		return s.audit(ctx, tx, by, projectID, "run.keep", name, fmt.Sprintf("%d entries over %d queries", entries, queries))
	})
	if err == nil {
		s.runs.put(kr.ID, name, &run)
	}
	return kr, err
}

// sameRunBody compares two kept bodies by content, not by their compressed bytes. It reads
// both a block at a time: a kept run's text is many times its compressed size.
func sameRunBody(a, b []byte) (bool, error) {
	za, err := gzip.NewReader(bytes.NewReader(a))
	if err != nil {
		return false, err
	}
	zb, err := gzip.NewReader(bytes.NewReader(b))
	if err != nil {
		return false, err
	}
	ba, bb := make([]byte, 64<<10), make([]byte, 64<<10)
	for {
		na, erra := io.ReadFull(za, ba)
		nb, errb := io.ReadFull(zb, bb)
		if erra != nil && erra != io.EOF && erra != io.ErrUnexpectedEOF {
			return false, erra
		}
		if errb != nil && errb != io.EOF && errb != io.ErrUnexpectedEOF {
			return false, errb
		}
		if !bytes.Equal(ba[:na], bb[:nb]) {
			return false, nil
		}
		if erra != nil || errb != nil {
			// A short block ends its body; the other must end there too.
			return erra != nil && errb != nil, nil
		}
	}
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
	// ids holds one copy of every query and document id of the cached runs: runs of one
	// collection name mostly the same documents, and an id cut from its line would otherwise
	// keep the whole line alive (a 16-byte id, a 48-byte line; 2,000,000 entries of 20 runs
	// held 90 MB of lines).
	ids map[string]string
}

// runCacheEntries bounds the cache (about 30 bytes an entry, and the ids).
const runCacheEntries = 4 << 20

func (c *runCache) get(id int64) (estimate.NamedRun, bool) {
	c.mu.Lock()
	defer c.mu.Unlock()
	r, ok := c.runs[id]
	return r, ok
}

// put lays out a parsed run with the cache's ids and keeps it, unless it is held already.
func (c *runCache) put(id int64, name string, b *runBuilder) estimate.NamedRun {
	c.mu.Lock()
	defer c.mu.Unlock()
	if r, ok := c.runs[id]; ok {
		return r
	}
	if c.runs == nil || c.size+b.entries > runCacheEntries {
		c.runs, c.size, c.ids = map[int64]estimate.NamedRun{}, 0, map[string]string{}
	}
	r := estimate.NamedRun{Name: name, Run: b.build(c.intern)}
	c.runs[id] = r
	c.size += b.entries
	return r
}

// intern returns the cache's copy of s, making one if there is none. The caller holds c.mu.
func (c *runCache) intern(s string) string {
	if v, ok := c.ids[s]; ok {
		return v
	}
	s = strings.Clone(s)
	c.ids[s] = s
	return s
}

// runBuilder gathers a run's entries in file order, to lay them out once all are read: one
// array for the whole run, cut per query, instead of a slice per query grown by appending
// (up to twice the entries' size when a query's last append doubles it). The entries are
// gathered in blocks of a fixed size, so that gathering them leaves no grown-out copies.
type runBuilder struct {
	blocks  [][]builderEntry
	entries int
	queries []string
	index   map[string]int32
}

type builderEntry struct {
	doc   rankeval.ScoredDoc
	query int32 // index in queries
}

const builderBlock = 4096

func (b *runBuilder) add(e ingest.RunEntry) {
	q, ok := b.index[e.QueryID]
	if !ok {
		if b.index == nil {
			b.index = map[string]int32{}
		}
		q = int32(len(b.queries))
		b.index[e.QueryID] = q
		b.queries = append(b.queries, e.QueryID)
	}
	if n := len(b.blocks); n == 0 || len(b.blocks[n-1]) == builderBlock {
		b.blocks = append(b.blocks, make([]builderEntry, 0, builderBlock))
	}
	last := &b.blocks[len(b.blocks)-1]
	*last = append(*last, builderEntry{rankeval.ScoredDoc{DocID: e.DocID, Score: e.Score}, q})
	b.entries++
}

// build returns the run, each query's documents in file order, every id passed through intern.
func (b *runBuilder) build(intern func(string) string) rankeval.Run {
	start := make([]int, len(b.queries)+1)
	for _, block := range b.blocks {
		for _, e := range block {
			start[e.query+1]++
		}
	}
	for q := range b.queries {
		start[q+1] += start[q]
	}
	all := make([]rankeval.ScoredDoc, b.entries)
	next := slices.Clone(start[:len(b.queries)])
	for _, block := range b.blocks {
		for _, e := range block {
			all[next[e.query]] = rankeval.ScoredDoc{DocID: intern(e.doc.DocID), Score: e.doc.Score}
			next[e.query]++
		}
	}
	run := make(rankeval.Run, len(b.queries))
	for q, qid := range b.queries {
		// Capped, so that appending to one query's documents never writes into the next.
		run[intern(qid)] = all[start[q]:start[q+1]:start[q+1]]
	}
	return run
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
		err := s.r.QueryRowContext(ctx, `SELECT name, body FROM runs WHERE id = ? AND project_id = ?`, id, projectID).Scan(&name, &body)
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
		var run runBuilder
		err = ingest.ReadRun(zr, ingest.Options{File: name}, func(e ingest.RunEntry) error {
			run.add(e)
			return nil
		})
		if err != nil {
			return nil, fmt.Errorf("store: kept run %d: %w", id, err)
		}
		out = append(out, s.runs.put(id, name, &run))
	}
	return out, nil
}
