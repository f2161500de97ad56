package store

import (
	"context"
	"database/sql"
)

// querier is what reads rows: the reader pool, the writer, a transaction, or readerFunc.
type querier interface {
	QueryContext(context.Context, string, ...any) (*sql.Rows, error)
}

// readerFunc lets the reader pool's prepared statements (readRows) serve as a querier: the
// scale is read on every judging request, and parsing its statement each time showed in
// profiles.
type readerFunc func(ctx context.Context, q string, args ...any) (*sql.Rows, error)

func (f readerFunc) QueryContext(ctx context.Context, q string, args ...any) (*sql.Rows, error) {
	return f(ctx, q, args...)
}

// rowScanner is what *sql.Row and *sql.Rows share, so one scan function serves a single-row
// read and a list.
type rowScanner = interface{ Scan(...any) error }

// eachRow runs query (a constant, as every statement of the store) and calls fn on every
// row in order, stopping at fn's first error. The rows are closed when it returns, so the
// caller may use the same connection again at once.
func eachRow(ctx context.Context, q querier, query string, fn func(rowScanner) error, args ...any) error {
	rows, err := q.QueryContext(ctx, query, args...)
	if err != nil {
		return err
	}
	defer rows.Close()
	for rows.Next() {
		if err := fn(rows); err != nil {
			return err
		}
	}
	return rows.Err()
}

// queryAll is eachRow collecting what scan makes of each row, in order.
func queryAll[T any](ctx context.Context, q querier, query string, scan func(rowScanner) (T, error), args ...any) ([]T, error) {
	var out []T
	err := eachRow(ctx, q, query, func(r rowScanner) error {
		v, err := scan(r)
		out = append(out, v)
		return err
	}, args...)
	if err != nil {
		return nil, err
	}
	return out, nil
}

// scanValue reads a row of one column.
func scanValue[T any](r rowScanner) (T, error) {
	var v T
	err := r.Scan(&v)
	return v, err
}

// gradeOf is a grade column that may be NULL as the *int the store's types carry.
func gradeOf(g sql.NullInt64) *int {
	if !g.Valid {
		return nil
	}
	v := int(g.Int64)
	return &v
}
