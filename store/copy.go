package store

import (
	"context"
	"crypto/sha256"
	"database/sql"
	"encoding/binary"
	"errors"
	"fmt"
	"math"
	"strconv"

	"github.com/jackc/pgx/v5"
)

// copyTable is one table as Copy moves it (copy_tables.go lists them).
type copyTable struct {
	name     string
	columns  []string
	read     string // every row, every stored column, in columns' order
	clear    string
	identity string // the column PostgreSQL numbers, whose sequence is set past the copied rows
	// disable and enable switch the table's row triggers off while its rows arrive: the rows
	// that the triggers would write (progress, versions, the desk log) are copied as they are.
	disable, enable string
}

// CopiedTable is what Copy did with one table: rows read from the source, and the checksum of
// those rows as read back from the target, which matched the source's.
type CopiedTable struct {
	Name     string `json:"name"`
	Rows     int64  `json:"rows"`
	Checksum string `json:"checksum"`
}

const (
	copyTargetHoldsData = `SELECT EXISTS (SELECT 1 FROM users) OR EXISTS (SELECT 1 FROM projects)`
	copyColumnTypes     = `SELECT column_name, data_type FROM information_schema.columns WHERE table_schema = current_schema() AND table_name = $1`
	copySetSequence     = `SELECT setval(pg_get_serial_sequence($1, $2), $3)`
)

// Copy moves every row of the SQLite store from into the PostgreSQL store to, which must be
// migrated to the same version and hold no accounts and no projects yet. It runs in one
// transaction on the target: after each table's rows arrive (through COPY), they are read back
// and their count and checksum compared with what was read from the source, and any
// difference rolls everything back. The source is read in one snapshot, so a server still
// running on it cannot tear the copy; stop it anyway, or its later writes stay behind.
func Copy(ctx context.Context, from, to *Store) ([]CopiedTable, error) {
	if from.pg || !to.pg {
		return nil, errorf(CodeInvalid, "copy moves a SQLite file into a PostgreSQL database: give --from a file and --to a postgres:// connection string")
	}
	vf, err := from.SchemaVersion(ctx)
	if err != nil {
		return nil, err
	}
	vt, err := to.SchemaVersion(ctx)
	if err != nil {
		return nil, err
	}
	if vf != vt {
		return nil, errorf(CodeConflict, fmt.Sprintf("the file is at schema version %d and the database at %d: run the same pertinent on both", vf, vt))
	}
	var full bool
	if err := to.w.QueryRowContext(ctx, copyTargetHoldsData).Scan(&full); err != nil {
		return nil, err
	}
	if full {
		return nil, errorf(CodeConflict, "the PostgreSQL database already holds accounts or projects: copy into a freshly migrated, empty database")
	}
	src, err := from.r.BeginTx(ctx, &sql.TxOptions{ReadOnly: true})
	if err != nil {
		return nil, err
	}
	defer src.Rollback()
	conn, err := to.w.Conn(ctx)
	if err != nil {
		return nil, err
	}
	defer conn.Close()
	var out []CopiedTable
	err = conn.Raw(func(dc any) error {
		pc, ok := dc.(pgConn)
		if !ok {
			return errors.New("store: copy needs pgx underneath the target")
		}
		// pgx itself, for COPY: the rows go in as a stream, not a statement each.
		tx, err := pc.Conn.Conn().Begin(ctx)
		if err != nil {
			return err
		}
		defer tx.Rollback(context.WithoutCancel(ctx))
		if out, err = copyAll(ctx, src, tx); err != nil {
			return err
		}
		return tx.Commit(ctx)
	})
	if err != nil {
		return nil, err
	}
	return out, nil
}

func copyAll(ctx context.Context, src *sql.Tx, tx pgx.Tx) ([]CopiedTable, error) {
	// What the target's migrations put in (settings they seed) makes way for the source's.
	for i := len(copyTables) - 1; i >= 0; i-- {
		t := copyTables[i]
		if _, err := tx.Exec(ctx, t.clear); err != nil {
			return nil, err
		}
	}
	var out []CopiedTable
	for _, t := range copyTables {
		if t.disable != "" {
			if _, err := tx.Exec(ctx, t.disable); err != nil {
				return nil, err
			}
		}
		c, err := copyTableRows(ctx, src, tx, t)
		if err != nil {
			return nil, fmt.Errorf("copy %s: %w", t.name, err)
		}
		if t.enable != "" {
			if _, err := tx.Exec(ctx, t.enable); err != nil {
				return nil, err
			}
		}
		out = append(out, c)
	}
	return out, nil
}

// copyTableRows streams one table into the target with COPY and checks it on the way back.
func copyTableRows(ctx context.Context, src *sql.Tx, tx pgx.Tx, t copyTable) (CopiedTable, error) {
	floats := map[int]bool{} // columns PostgreSQL keeps as double precision
	rows, err := tx.Query(ctx, copyColumnTypes, t.name)
	if err != nil {
		return CopiedTable{}, err
	}
	types := map[string]string{}
	for rows.Next() {
		var c, ty string
		if err := rows.Scan(&c, &ty); err != nil {
			rows.Close()
			return CopiedTable{}, err
		}
		types[c] = ty
	}
	rows.Close()
	if err := rows.Err(); err != nil {
		return CopiedTable{}, err
	}
	idCol := -1
	for i, c := range t.columns {
		if _, ok := types[c]; !ok {
			return CopiedTable{}, fmt.Errorf("the target has no column %s", c)
		}
		floats[i] = types[c] == "double precision"
		if c == t.identity {
			idCol = i
		}
	}
	srcRows, err := src.QueryContext(ctx, t.read)
	if err != nil {
		return CopiedTable{}, err
	}
	defer srcRows.Close()
	feed := &copyFeed{rows: srcRows, vals: make([]any, len(t.columns)), floats: floats, idCol: idCol}
	n, err := tx.CopyFrom(ctx, pgx.Identifier{t.name}, t.columns, feed)
	if err == nil {
		err = feed.err
	}
	if err != nil {
		return CopiedTable{}, err
	}
	if n != feed.n {
		return CopiedTable{}, fmt.Errorf("%d rows read, %d written", feed.n, n)
	}
	// Read back what arrived, and compare.
	back, err := tx.Query(ctx, t.read)
	if err != nil {
		return CopiedTable{}, err
	}
	var sum rowSum
	var m int64
	for back.Next() {
		vals, err := back.Values()
		if err != nil {
			back.Close()
			return CopiedTable{}, err
		}
		sum.add(vals)
		m++
	}
	back.Close()
	if err := back.Err(); err != nil {
		return CopiedTable{}, err
	}
	if m != feed.n || sum != feed.sum {
		return CopiedTable{}, fmt.Errorf("%d rows read back of %d copied, checksum %s against the source's %s", m, feed.n, sum, feed.sum)
	}
	if idCol >= 0 && feed.n > 0 {
		if _, err := tx.Exec(ctx, copySetSequence, t.name, t.identity, feed.maxID); err != nil {
			return CopiedTable{}, err
		}
	}
	return CopiedTable{Name: t.name, Rows: feed.n, Checksum: sum.String()}, nil
}

// copyFeed hands the source's rows to COPY, summing them as it goes.
type copyFeed struct {
	rows   *sql.Rows
	vals   []any
	ptrs   []any
	floats map[int]bool
	idCol  int
	maxID  int64
	n      int64
	sum    rowSum
	err    error
}

func (f *copyFeed) Next() bool {
	if !f.rows.Next() {
		f.err = f.rows.Err()
		return false
	}
	if f.ptrs == nil {
		f.ptrs = make([]any, len(f.vals))
		for i := range f.vals {
			f.ptrs[i] = &f.vals[i]
		}
	}
	if f.err = f.rows.Scan(f.ptrs...); f.err != nil {
		return false
	}
	for i, v := range f.vals {
		// SQLite hands back an integer where a REAL column holds a whole number it was given
		// as one; PostgreSQL's double precision column wants a float.
		if x, ok := v.(int64); ok && f.floats[i] {
			f.vals[i] = float64(x)
		}
	}
	if f.idCol >= 0 {
		if id, ok := f.vals[f.idCol].(int64); ok && id > f.maxID {
			f.maxID = id
		}
	}
	f.sum.add(f.vals)
	f.n++
	return true
}

func (f *copyFeed) Values() ([]any, error) { return f.vals, nil }
func (f *copyFeed) Err() error             { return f.err }

// rowSum is an order-free checksum of a table's rows: the sum, modulo 2^64 in each of four
// lanes, of the SHA-256 of every row in a canonical text. Order-free, because the two
// engines need not return rows in one order (text keys sort by collation).
type rowSum [4]uint64

func (s *rowSum) add(vals []any) {
	h := sha256.New()
	var b []byte
	for _, v := range vals {
		b = b[:0]
		switch x := v.(type) {
		case nil:
			b = append(b, 'n')
		case int64:
			b = strconv.AppendInt(append(b, 'i'), x, 10)
		case int32:
			b = strconv.AppendInt(append(b, 'i'), int64(x), 10)
		case float64:
			if x == math.Trunc(x) && math.Abs(x) < 1<<53 {
				b = strconv.AppendInt(append(b, 'f'), int64(x), 10)
			} else {
				b = strconv.AppendFloat(append(b, 'f'), x, 'g', -1, 64)
			}
		case string:
			b = append(append(b, 's'), x...)
		case []byte:
			b = append(append(b, 'b'), x...)
		case bool:
			b = append(b, 'i', '0')
			if x {
				b[len(b)-1] = '1'
			}
		default:
			b = fmt.Appendf(append(b, '?'), "%v", x)
		}
		var l [8]byte
		binary.LittleEndian.PutUint64(l[:], uint64(len(b)))
		h.Write(l[:])
		h.Write(b)
	}
	d := h.Sum(nil)
	for i := range s {
		s[i] += binary.LittleEndian.Uint64(d[8*i:])
	}
}

func (s rowSum) String() string { return fmt.Sprintf("%016x%016x%016x%016x", s[0], s[1], s[2], s[3]) }
