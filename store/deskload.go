package store

import (
	"cmp"
	"context"
	"database/sql"
	"errors"
	"slices"
	"strconv"
	"time"

	"github.com/pertinent/pertinent/agreement"
)

// deskColumns reads a judgment with few columns, since the cost of a million rows is mostly
// per row and column read: pair, user and grade (or cannot-judge kind) in one integer,
// judgment id and time spent in another. (Two readers on halves of the pair ids were slower
// than one on two cores.)
const deskColumns = `SELECT (j.pair_id << 28) | (j.user_id << 4) |
		COALESCE(j.grade, CASE j.cannot_judge WHEN 'disturbing' THEN 14 ELSE 15 END),
		(j.id << 24) | MIN(j.time_spent_ms, 16777215), j.created_at
	FROM judgments j JOIN pairs p ON p.id = j.pair_id `

// deskQuery reads all of a project's current judgments; deskNewQuery those with an id above
// the previous desk's, the new and the revised ones (the rowid range keeps it short).
const (
	deskQuery    = deskColumns + `WHERE p.project_id = ?1 AND j.current = 1`
	deskNewQuery = deskColumns + `WHERE j.id > ?2 AND p.project_id = ?1 AND j.current = 1`
)

// loadDesk builds the project's desk. With a previous desk it reads only what changed since
// (judgments with a higher id, and the desk_log entries of judgments that stopped counting)
// and merges that into the previous rows, which stay untouched for whoever still holds them;
// it reads everything when there is no previous desk, the log holds a change it does not
// follow row by row (a deleted or edited judgment), or the log was pruned past what the
// previous desk saw. Every figure is then derived from the rows in memory.
func (s *Store) loadDesk(ctx context.Context, projectID int64, old *Desk) (*Desk, error) {
	start := time.Now()
	levels, err := s.Scale(ctx, projectID)
	if err != nil {
		return nil, err
	}
	if len(levels) < 2 {
		return nil, ErrNotFound
	}
	users, err := s.UserNames(ctx)
	if err != nil {
		return nil, err
	}
	for id := range users {
		if id >= 1<<24 {
			return nil, errors.New("store: user ids beyond 2^24 do not fit the desk's packing")
		}
	}
	progress, err := s.ProjectProgress(ctx, projectID)
	if err != nil {
		return nil, err
	}

	// One read transaction: the rows and the marks of what they include come from one snapshot.
	tx, err := s.r.BeginTx(ctx, &sql.TxOptions{ReadOnly: true})
	if err != nil {
		return nil, err
	}
	defer tx.Rollback()
	d := &Desk{ProjectID: projectID, Scale: len(levels), users: users, Progress: progress}
	var minLog, maxPair int64
	err = tx.QueryRowContext(ctx, `SELECT
			COALESCE((SELECT version FROM project_versions WHERE project_id = ?1), 0),
			COALESCE((SELECT MAX(id) FROM judgments), 0),
			COALESCE((SELECT MAX(seq) FROM desk_log), 0),
			COALESCE((SELECT MIN(seq) FROM desk_log), 0),
			COALESCE((SELECT MAX(id) FROM pairs WHERE project_id = ?1), 0)`, projectID).
		Scan(&d.Version, &d.seenID, &d.seenLog, &minLog, &maxPair)
	if err != nil {
		return nil, err
	}
	if maxPair >= 1<<35 {
		return nil, errors.New("store: pair ids beyond 2^35 do not fit the desk's packing")
	}
	if d.Gold, d.goldPair, err = goldGrades(ctx, tx, projectID); err != nil {
		return nil, err
	}

	incremental := old != nil && (minLog == 0 || minLog <= old.seenLog+1)
	var retired map[int64]bool
	if incremental {
		retired, incremental, err = deskRetired(ctx, tx, projectID, old.seenLog)
		if err != nil {
			return nil, err
		}
	}
	if incremental {
		added, err := scanDeskRows(tx.QueryContext(ctx, deskNewQuery, projectID, old.seenID))
		if err != nil {
			return nil, err
		}
		d.rows = mergeDeskRows(old.rows, added, retired)
		d.Incremental = true
	} else {
		if d.rows, err = scanDeskRows(tx.QueryContext(ctx, deskQuery, projectID)); err != nil {
			return nil, err
		}
		if !slices.IsSortedFunc(d.rows, compareDeskRows) {
			slices.SortFunc(d.rows, compareDeskRows)
		}
	}
	if err := tx.Rollback(); err != nil {
		return nil, err
	}
	if err := d.derive(); err != nil {
		return nil, err
	}
	d.BuiltAt = time.Now()
	d.BuildTook = time.Since(start)
	return d, nil
}

func compareDeskRows(a, b deskRow) int {
	if c := cmp.Compare(a.pair, b.pair); c != 0 {
		return c
	}
	return cmp.Compare(a.user, b.user)
}

// deskRetired lists the judgments of the project that stopped counting after log entry
// since; ok is false when an entry asks for a rebuild from scratch.
func deskRetired(ctx context.Context, tx *sql.Tx, projectID, since int64) (map[int64]bool, bool, error) {
	rows, err := tx.QueryContext(ctx, `SELECT judgment_id, kind FROM desk_log WHERE seq > ? AND project_id IN (?, 0)`, since, projectID)
	if err != nil {
		return nil, false, err
	}
	defer rows.Close()
	out := map[int64]bool{}
	for rows.Next() {
		var id, kind int64
		if err := rows.Scan(&id, &kind); err != nil {
			return nil, false, err
		}
		if kind != 0 {
			return nil, false, nil
		}
		out[id] = true
	}
	return out, true, rows.Err()
}

func goldGrades(ctx context.Context, tx *sql.Tx, projectID int64) (map[string]int, map[int64]int, error) {
	gold, goldPair := map[string]int{}, map[int64]int{}
	rows, err := tx.QueryContext(ctx, `SELECT id, gold_grade FROM pairs WHERE project_id = ? AND gold_grade IS NOT NULL`, projectID)
	if err != nil {
		return nil, nil, err
	}
	defer rows.Close()
	for rows.Next() {
		var id int64
		var g int
		if err := rows.Scan(&id, &g); err != nil {
			return nil, nil, err
		}
		gold[strconv.FormatInt(id, 10)] = g
		goldPair[id] = g
	}
	return gold, goldPair, rows.Err()
}

func scanDeskRows(rows *sql.Rows, err error) ([]deskRow, error) {
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	var out []deskRow
	var a, b int64
	var at sql.RawBytes
	for rows.Next() {
		if err := rows.Scan(&a, &b, &at); err != nil {
			return nil, err
		}
		out = append(out, deskRow{
			pair:  a >> 28,
			user:  (a >> 4) & (1<<24 - 1),
			grade: int8(a & 15),
			id:    b >> 24,
			ms:    int32(b & (1<<24 - 1)),
			at:    unixMillis(at),
		})
	}
	return out, rows.Err()
}

// mergeDeskRows returns old without the retired judgments and with added merged in, in
// (pair, user) order, in a new slice. An added row also replaces an old row of the same pair
// and user: one current judgment per assessor and pair.
func mergeDeskRows(old, added []deskRow, retired map[int64]bool) []deskRow {
	slices.SortFunc(added, compareDeskRows)
	out := make([]deskRow, 0, len(old)+len(added))
	keep := func(r deskRow) {
		if len(retired) == 0 || !retired[r.id] {
			out = append(out, r)
		}
	}
	i := 0
	for _, a := range added {
		for i < len(old) && compareDeskRows(old[i], a) < 0 {
			keep(old[i])
			i++
		}
		if i < len(old) && compareDeskRows(old[i], a) == 0 {
			i++
		}
		keep(a)
	}
	for _, r := range old[i:] {
		keep(r)
	}
	return out
}

// derive computes every figure from the rows: the agreement input and report, activity and
// the per-assessor figures.
func (d *Desk) derive() error {
	d.pairs = d.pairs[:0]
	var lastPair int64 = -1
	for i, r := range d.rows {
		if r.pair != lastPair {
			d.pairs = append(d.pairs, i)
			lastPair = r.pair
		}
	}
	d.pairs = append(d.pairs, len(d.rows))

	// Items by pair id and raters by username, added in pair order: the same Data as
	// AgreementData's string keys, without a string per row.
	d.Data = agreement.NewData(d.Scale)
	var unnamed int64 = -1
	if err := d.Data.NameRaters(func(id int64) string {
		n := d.users[id]
		if n == "" {
			unnamed = id
		}
		return n
	}); err != nil {
		return err
	}
	d.Data.Grow(len(d.rows))
	for _, r := range d.rows {
		if r.grade >= 0 && int(r.grade) < d.Scale {
			if err := d.Data.AddID(r.pair, r.user, int(r.grade)); err != nil {
				return err
			}
		}
	}
	d.Report = agreement.Compute(d.Data, agreement.Options{Gold: d.Gold})
	if unnamed >= 0 {
		return errors.New("store: judgment by unknown user " + strconv.FormatInt(unnamed, 10))
	}
	d.BootstrapCount = BootstrapReplicates(d.Report.Judgments)
	d.activity()
	d.assessorFigures()
	return nil
}
