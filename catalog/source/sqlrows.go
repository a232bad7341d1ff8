package source

import (
	"context"
	"database/sql"
	"fmt"
)

// sqlRows is the cursor of a statement run through database/sql (MySQL and
// SQLite), together with what must be released after it.
type sqlRows struct {
	ctx  context.Context
	name string // the dialect, for errors
	rows *sql.Rows
	cols []Column
	// raw receives each row's driver values; scan holds pointers into raw.
	raw, scan []any
	vals      []any
	// peeked says that raw already holds the first row, read ahead to find
	// the kinds of columns whose kind comes from their values.
	peeked bool
	err    error
	// finish ends the transaction and releases the connection.
	finish func() error
	closed bool
}

// newSQLRows wraps rows. kindOf gives a column's kind from its reported type
// name, and false when the kind must come from the values instead (SQLite
// expressions); such a column takes the kind of its value in the first row.
func newSQLRows(ctx context.Context, d Dialect, rows *sql.Rows, hints Kinds, kindOf func(string) (TypeKind, bool), finish func() error) (*sqlRows, error) {
	r := &sqlRows{ctx: ctx, name: d.String(), rows: rows, finish: finish}
	types, err := rows.ColumnTypes()
	if err != nil {
		r.Close()
		return nil, queryError(ctx, r.name+" query", err)
	}
	r.cols = make([]Column, len(types))
	byValue := make([]bool, len(types))
	for i, t := range types {
		k, ok := kindOf(t.DatabaseTypeName())
		r.cols[i] = Column{Name: t.Name(), DatabaseType: t.DatabaseTypeName(), Kind: k}
		byValue[i] = !ok && (i >= len(hints) || hints[i] == TypeOther)
	}
	applyKinds(r.cols, hints)
	r.raw = make([]any, len(types))
	r.scan = make([]any, len(types))
	for i := range r.raw {
		r.scan[i] = &r.raw[i]
	}
	r.vals = make([]any, len(types))
	for i, b := range byValue {
		if !b {
			continue
		}
		if !r.peeked {
			if !r.read() {
				break
			}
			r.peeked = true
		}
		r.cols[i].Kind = sqliteValueKind(r.raw[i])
	}
	return r, nil
}

// read scans the next row into raw.
func (r *sqlRows) read() bool {
	if r.err != nil || !r.rows.Next() {
		return false
	}
	if err := r.rows.Scan(r.scan...); err != nil {
		r.err = queryError(r.ctx, r.name+" query", err)
		return false
	}
	return true
}

// Columns implements Rows.
func (r *sqlRows) Columns() []Column { return r.cols }

// Next implements Rows.
func (r *sqlRows) Next() bool {
	if r.peeked {
		r.peeked = false
	} else if !r.read() {
		return false
	}
	for i, v := range r.raw {
		n, err := normalize(r.cols[i].Kind, v)
		if err != nil {
			r.err = fmt.Errorf("%s: column %q: %w", r.name, r.cols[i].Name, err)
			return false
		}
		r.vals[i] = n
	}
	return true
}

// Values implements Rows.
func (r *sqlRows) Values() []any { return r.vals }

// Err implements Rows.
func (r *sqlRows) Err() error {
	if r.err != nil {
		return r.err
	}
	return queryError(r.ctx, r.name+" query", r.rows.Err())
}

// Close implements Rows.
func (r *sqlRows) Close() error {
	if r.closed {
		return nil
	}
	r.closed = true
	err := r.rows.Close()
	if ferr := r.finish(); err == nil {
		err = ferr
	}
	if err != nil && r.ctx.Err() == nil {
		return fmt.Errorf("%s: close statement: %w", r.name, err)
	}
	return nil
}
