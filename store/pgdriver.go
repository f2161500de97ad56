package store

import (
	"context"
	"database/sql"
	"database/sql/driver"
	"net/url"
	"strconv"
	"strings"
	"sync"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/stdlib"
)

// The store's statements are written once, with SQLite's placeholders (? and ?N). On
// PostgreSQL they reach pgx through this thin database/sql driver, which rewrites each
// statement's placeholders to $N once per text (pgText, cached) and otherwise hands
// everything to pgx's own database/sql driver. Two conversions keep the values the store
// reads and writes the same on both engines: a Go bool argument is sent as 0 or 1 (the
// schema's flags are integers on both), and a boolean result (EXISTS, a comparison) is read
// as 0 or 1, as SQLite answers it.

// openPostgres opens a pool on PostgreSQL for the connection string dsn.
func openPostgres(dsn string) (*sql.DB, error) {
	cfg, err := pgx.ParseConfig(dsn)
	if err != nil {
		return nil, err
	}
	return sql.OpenDB(pgConnector{stdlib.GetConnector(*cfg)}), nil
}

// DatabaseName is path as it may be shown or logged: a connection string without its
// password, a file path as it is.
func DatabaseName(path string) string {
	if !IsPostgres(path) {
		return path
	}
	u, err := url.Parse(path)
	if err != nil {
		return "PostgreSQL database"
	}
	return u.Redacted()
}

// IsPostgres reports whether path names a PostgreSQL database (a postgres:// or
// postgresql:// connection string) rather than a SQLite file.
func IsPostgres(path string) bool {
	return strings.HasPrefix(path, "postgres://") || strings.HasPrefix(path, "postgresql://")
}

type pgConnector struct{ base driver.Connector }

func (c pgConnector) Connect(ctx context.Context) (driver.Conn, error) {
	conn, err := c.base.Connect(ctx)
	if err != nil {
		return nil, err
	}
	return pgConn{conn.(*stdlib.Conn)}, nil
}

func (c pgConnector) Driver() driver.Driver { return c.base.Driver() }

// pgConn is pgx's connection with the store's placeholders translated. Embedding keeps
// pgx's session reset, validity check and ping.
type pgConn struct{ *stdlib.Conn }

func (c pgConn) Prepare(q string) (driver.Stmt, error) {
	return c.PrepareContext(context.Background(), q)
}

func (c pgConn) PrepareContext(ctx context.Context, q string) (driver.Stmt, error) {
	st, err := c.Conn.PrepareContext(ctx, pgText(q))
	if err != nil {
		return nil, err
	}
	return pgStmt{st.(*stdlib.Stmt)}, nil
}

func (c pgConn) ExecContext(ctx context.Context, q string, args []driver.NamedValue) (driver.Result, error) {
	return c.Conn.ExecContext(ctx, pgText(q), args)
}

func (c pgConn) QueryContext(ctx context.Context, q string, args []driver.NamedValue) (driver.Rows, error) {
	rows, err := c.Conn.QueryContext(ctx, pgText(q), args)
	if err != nil {
		return nil, err
	}
	return pgRows{rows}, nil
}

// BeginTx gives a read-only transaction one snapshot (REPEATABLE READ), as a SQLite read
// transaction under WAL has: the desk reads several statements that must agree.
func (c pgConn) BeginTx(ctx context.Context, opts driver.TxOptions) (driver.Tx, error) {
	if opts.ReadOnly && sql.IsolationLevel(opts.Isolation) == sql.LevelDefault {
		opts.Isolation = driver.IsolationLevel(sql.LevelRepeatableRead)
	}
	return c.Conn.BeginTx(ctx, opts)
}

func (c pgConn) CheckNamedValue(nv *driver.NamedValue) error {
	if b, ok := nv.Value.(bool); ok {
		nv.Value = int64(0)
		if b {
			nv.Value = int64(1)
		}
		return nil
	}
	return c.Conn.CheckNamedValue(nv)
}

type pgStmt struct{ *stdlib.Stmt }

func (s pgStmt) QueryContext(ctx context.Context, args []driver.NamedValue) (driver.Rows, error) {
	rows, err := s.Stmt.QueryContext(ctx, args)
	if err != nil {
		return nil, err
	}
	return pgRows{rows}, nil
}

func (s pgStmt) Query(args []driver.Value) (driver.Rows, error) {
	rows, err := s.Stmt.Query(args)
	if err != nil {
		return nil, err
	}
	return pgRows{rows}, nil
}

// pgRows reads booleans as SQLite's 0 and 1, so a column scans into the same Go type on both.
type pgRows struct{ driver.Rows }

func (r pgRows) Next(dest []driver.Value) error {
	if err := r.Rows.Next(dest); err != nil {
		return err
	}
	for i, v := range dest {
		if b, ok := v.(bool); ok {
			dest[i] = int64(0)
			if b {
				dest[i] = int64(1)
			}
		}
	}
	return nil
}

var pgTexts sync.Map // SQLite statement text → PostgreSQL text

// pgText is q with SQLite's placeholders as PostgreSQL's: ?N becomes $N and a bare ? the next
// number after the highest so far (SQLite's rule). Quoted text, quoted names, comments and
// dollar-quoted bodies are left as they are.
func pgText(q string) string {
	if v, ok := pgTexts.Load(q); ok {
		return v.(string)
	}
	out := translatePlaceholders(q)
	pgTexts.Store(q, out)
	return out
}

func translatePlaceholders(q string) string {
	if !strings.Contains(q, "?") {
		return q
	}
	var b strings.Builder
	b.Grow(len(q) + 8)
	highest := 0
	for i := 0; i < len(q); {
		c := q[i]
		switch {
		case c == '\'' || c == '"':
			j := i + 1
			for j < len(q) && q[j] != c {
				j++
			}
			j = min(j+1, len(q))
			b.WriteString(q[i:j])
			i = j
		case c == '-' && i+1 < len(q) && q[i+1] == '-':
			j := strings.IndexByte(q[i:], '\n')
			if j < 0 {
				j = len(q) - i
			}
			b.WriteString(q[i : i+j])
			i += j
		case c == '/' && i+1 < len(q) && q[i+1] == '*':
			j := strings.Index(q[i+2:], "*/")
			end := len(q)
			if j >= 0 {
				end = i + 2 + j + 2
			}
			b.WriteString(q[i:end])
			i = end
		case c == '$' && i+1 < len(q) && (q[i+1] == '$' || isTagStart(q[i+1])):
			// A dollar-quoted body: $$...$$ or $tag$...$tag$; $1 (a digit) is not one.
			k := i + 1
			for k < len(q) && q[k] != '$' && isTagChar(q[k]) {
				k++
			}
			if k >= len(q) || q[k] != '$' {
				b.WriteByte(c)
				i++
				continue
			}
			tag := q[i : k+1]
			end := strings.Index(q[k+1:], tag)
			stop := len(q)
			if end >= 0 {
				stop = k + 1 + end + len(tag)
			}
			b.WriteString(q[i:stop])
			i = stop
		case c == '?':
			j := i + 1
			for j < len(q) && q[j] >= '0' && q[j] <= '9' {
				j++
			}
			n := highest + 1
			if j > i+1 {
				n, _ = strconv.Atoi(q[i+1 : j])
			}
			highest = max(highest, n)
			b.WriteByte('$')
			b.WriteString(strconv.Itoa(n))
			i = j
		default:
			b.WriteByte(c)
			i++
		}
	}
	return b.String()
}

func isTagStart(c byte) bool {
	return c == '_' || (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z')
}

func isTagChar(c byte) bool { return isTagStart(c) || (c >= '0' && c <= '9') }
