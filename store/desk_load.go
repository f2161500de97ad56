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
		(j.id << 24) | CASE WHEN j.time_spent_ms < 16777215 THEN j.time_spent_ms ELSE 16777215 END, j.created_at `

// deskQuery reads all of a project's current judgments; deskNewQuery those with an id above
// the previous desk's, the new and the revised ones. CROSS JOIN makes SQLite walk that
// rowid range of judgments, not every pair of the project looking for new judgments;
// PostgreSQL has no such hint (nor CROSS JOIN ... ON) and plans the range from statistics.
const (
	deskQuery            = deskColumns + `FROM judgments j JOIN pairs p ON p.id = j.pair_id WHERE p.project_id = ?1 AND j.current = 1`
	sqliteDeskNewQuery   = deskColumns + `FROM judgments j CROSS JOIN pairs p ON p.id = j.pair_id WHERE j.id > ?2 AND p.project_id = ?1 AND j.current = 1`
	postgresDeskNewQuery = deskColumns + `FROM judgments j JOIN pairs p ON p.id = j.pair_id WHERE j.id > ?2 AND p.project_id = ?1 AND j.current = 1`
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

	// One read transaction: the rows and the marks of what they include come from one snapshot.
	tx, err := s.r.BeginTx(ctx, &sql.TxOptions{ReadOnly: true})
	if err != nil {
		return nil, err
	}
	defer tx.Rollback()
	d := &Desk{ProjectID: projectID, Scale: len(levels), users: users}
	var minLog, maxPair int64
	err = tx.QueryRowContext(ctx, `SELECT
			COALESCE((SELECT version FROM project_versions WHERE project_id = ?1), 0),
			COALESCE((SELECT MAX(id) FROM judgments), 0),
			COALESCE((SELECT MAX(seq) FROM desk_log), 0),
			COALESCE((SELECT MIN(seq) FROM desk_log), 0),
			COALESCE((SELECT MAX(id) FROM pairs), 0)`, projectID).
		Scan(&d.Version, &d.seenID, &d.seenLog, &minLog, &maxPair)
	if err != nil {
		return nil, err
	}
	if maxPair >= 1<<35 || d.seenID >= 1<<39 {
		return nil, errors.New("store: pair ids beyond 2^35 or judgment ids beyond 2^39 do not fit the desk's packing")
	}
	// Read in the same snapshot as the rows: a source's rows must never slip in.
	sources, err := sourceAccounts(ctx, tx)
	if err != nil {
		return nil, err
	}
	if d.Gold, d.goldPair, err = s.goldGrades(ctx, tx, projectID); err != nil {
		return nil, err
	}
	if d.Progress, err = s.deskProgress(ctx, tx, projectID); err != nil {
		return nil, err
	}

	incremental := old != nil && (minLog == 0 || minLog <= old.seenLog+1)
	var retired []deskRow
	if incremental {
		retired, incremental, err = deskRetired(ctx, tx, projectID, old.seenLog)
		if err != nil {
			return nil, err
		}
	}
	if incremental {
		rows, err := tx.QueryContext(ctx, s.dialect(sqliteDeskNewQuery, postgresDeskNewQuery), projectID, old.seenID)
		added, err := scanDeskRows(rows, err, 0)
		if err != nil {
			return nil, err
		}
		added = withoutSources(added, sources)
		d.rows = mergeDeskRows(old.rows, added, retired)
		d.Incremental = true
	} else {
		// Room for the judgments pairs.judged counts, so a million rows are not copied
		// over and over while the slice grows (gold pairs and sources may add a few).
		hint := d.Progress.Judgments + d.Progress.Judgments/32 + 1024
		rows, err := tx.QueryContext(ctx, deskQuery, projectID)
		if d.rows, err = scanDeskRows(rows, err, hint); err != nil {
			return nil, err
		}
		d.rows = withoutSources(d.rows, sources)
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
	d.BuiltAt = s.clock()
	d.BuildTook = time.Since(start)
	return d, nil
}

func compareDeskRows(a, b deskRow) int {
	return cmp.Compare(a.key>>4, b.key>>4)
}

// deskRetired lists the judgments of the project that stopped counting after log entry
// since (pair, user and id); ok is false when an entry asks for a rebuild from scratch.
func deskRetired(ctx context.Context, tx *sql.Tx, projectID, since int64) ([]deskRow, bool, error) {
	rows, err := tx.QueryContext(ctx, `SELECT l.kind, l.judgment_id, COALESCE(j.pair_id, 0), COALESCE(j.user_id, 0)
		FROM desk_log l LEFT JOIN judgments j ON j.id = l.judgment_id
		WHERE l.seq > ? AND l.project_id IN (?, 0)`, since, projectID)
	if err != nil {
		return nil, false, err
	}
	defer rows.Close()
	var out []deskRow
	for rows.Next() {
		var kind int
		var id, pair, user int64
		if err := rows.Scan(&kind, &id, &pair, &user); err != nil {
			return nil, false, err
		}
		if kind != 0 {
			return nil, false, nil
		}
		out = append(out, newDeskRow(pair, user, 0, id, 0, 0))
	}
	return out, true, rows.Err()
}

const (
	sqliteDeskProgressSQL = `SELECT judged, COUNT(*) FROM pairs INDEXED BY pairs_judged WHERE project_id = ?1 GROUP BY judged
		UNION ALL
		SELECT judged, -COUNT(*) FROM pairs INDEXED BY pairs_gold WHERE project_id = ?1 AND gold_grade IS NOT NULL GROUP BY judged`
	postgresDeskProgressSQL = `SELECT judged, COUNT(*) FROM pairs WHERE project_id = ?1 GROUP BY judged
		UNION ALL
		SELECT judged, -COUNT(*) FROM pairs WHERE project_id = ?1 AND gold_grade IS NOT NULL GROUP BY judged`
	sqliteGoldGradesSQL   = `SELECT id, gold_grade FROM pairs INDEXED BY pairs_gold WHERE project_id = ? AND gold_grade IS NOT NULL`
	postgresGoldGradesSQL = `SELECT id, gold_grade FROM pairs WHERE project_id = ? AND gold_grade IS NOT NULL`
)

// deskProgress counts pairs by how far their judging has come, as ProjectProgress does, from
// the pairs_judged index alone (judged per pair, counted without reading a table row) less
// the few gold pairs: a third of the time of reading every pair row.
func (s *Store) deskProgress(ctx context.Context, tx *sql.Tx, projectID int64) (Progress, error) {
	var need int
	if err := tx.QueryRowContext(ctx, `SELECT judgments_per_pair FROM projects WHERE id = ?`, projectID).Scan(&need); err != nil {
		return Progress{}, err
	}
	// Every pair by judged, then the gold pairs by judged with a negative count.
	rows, err := tx.QueryContext(ctx, s.dialect(sqliteDeskProgressSQL, postgresDeskProgressSQL), projectID)
	if err != nil {
		return Progress{}, err
	}
	defer rows.Close()
	var p Progress
	for rows.Next() {
		var judged, n int
		if err := rows.Scan(&judged, &n); err != nil {
			return Progress{}, err
		}
		p.Pairs += n
		p.Judgments += judged * n
		switch {
		case judged >= need:
			p.Done += n
		case judged > 0:
			p.InProgress += n
		default:
			p.Untouched += n
		}
	}
	if err := rows.Err(); err != nil {
		return Progress{}, err
	}
	p.Needed = p.Pairs * need
	return p, nil
}

// goldGrades reads the project's gold grades, keyed by the pair id as the agreement
// package names items and by the pair id itself.
func (s *Store) goldGrades(ctx context.Context, q querier, projectID int64) (map[string]int, map[int64]int, error) {
	gold, goldPair := map[string]int{}, map[int64]int{}
	rows, err := q.QueryContext(ctx, s.dialect(sqliteGoldGradesSQL, postgresGoldGradesSQL), projectID)
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

// scanDeskRows reads the rows of deskQuery or deskNewQuery (with the query's error) into a
// slice made with the given capacity.
func scanDeskRows(rows *sql.Rows, err error, capacity int) ([]deskRow, error) {
	if err != nil {
		return nil, err
	}
	out := make([]deskRow, 0, capacity)
	defer rows.Close()
	var a, b int64
	var at sql.RawBytes
	for rows.Next() {
		if err := rows.Scan(&a, &b, &at); err != nil {
			return nil, err
		}
		// The query packs pair, user and grade as the key does, and id with time spent.
		out = append(out, deskRow{key: uint64(a), idms: uint64(b), at: unixMillis(at)})
	}
	return out, rows.Err()
}

// sourceAccounts marks the ids of external sources' accounts (role 'source'), indexed by
// user id; nil when there are none, the common case.
func sourceAccounts(ctx context.Context, q querier) ([]bool, error) {
	ids, err := queryAll(ctx, q, `SELECT id FROM users WHERE role = 'source'`, scanValue[int64])
	if err != nil || len(ids) == 0 {
		return nil, err
	}
	marks := make([]bool, slices.Max(ids)+1)
	for _, id := range ids {
		marks[id] = true
	}
	return marks, nil
}

// withoutSources drops the rows of external sources: the desk's figures are about people,
// and sources are measured against them on the Sources page. A retired source row then
// finds nothing to drop in mergeDeskRows, which is harmless.
func withoutSources(rows []deskRow, sources []bool) []deskRow {
	if sources == nil {
		return rows
	}
	return slices.DeleteFunc(rows, func(r deskRow) bool {
		u := r.user()
		return u < int64(len(sources)) && sources[u]
	})
}

// mergeDeskRows returns old without the retired judgments and with added merged in, in
// (pair, user) order, in a new slice; old is not changed. An added row also replaces an old
// row of the same pair and user (one current judgment per assessor and pair). Each change
// is placed by binary search and the rows between changes are copied in bulk.
func mergeDeskRows(old, added, retired []deskRow) []deskRow {
	slices.SortFunc(added, compareDeskRows)
	find := func(r deskRow) int {
		i, _ := slices.BinarySearchFunc(old, r, compareDeskRows)
		return i
	}
	var drop []int // positions in old
	for _, r := range retired {
		if i := find(r); i < len(old) && old[i].id() == r.id() {
			drop = append(drop, i)
		}
	}
	for _, r := range added {
		if i := find(r); i < len(old) && compareDeskRows(old[i], r) == 0 {
			drop = append(drop, i)
		}
	}
	slices.Sort(drop)
	drop = slices.Compact(drop)

	out := make([]deskRow, 0, len(old)-len(drop)+len(added))
	next := 0 // first old row not yet copied
	copyTo := func(end int) {
		for len(drop) > 0 && drop[0] < end {
			out = append(out, old[next:drop[0]]...)
			next = drop[0] + 1
			drop = drop[1:]
		}
		out = append(out, old[next:end]...)
		next = end
	}
	for _, r := range added {
		copyTo(max(find(r), next))
		out = append(out, r)
	}
	copyTo(len(old))
	return out
}

// derive computes every figure from the rows: the agreement input and report, activity and
// the per-assessor figures.
func (d *Desk) derive() error {
	d.pairs = d.pairs[:0]
	var lastPair int64 = -1
	for i, r := range d.rows {
		if r.pair() != lastPair {
			d.pairs = append(d.pairs, i)
			lastPair = r.pair()
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
		if r.grade() >= 0 && int(r.grade()) < d.Scale {
			if err := d.Data.AddID(r.pair(), r.user(), int(r.grade())); err != nil {
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
