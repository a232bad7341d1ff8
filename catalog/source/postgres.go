package source

import (
	"context"
	"encoding/hex"
	"errors"
	"fmt"
	"net/url"
	"strings"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgconn/ctxwatch"
	"github.com/jackc/pgx/v5/pgtype"
	"github.com/jackc/pgx/v5/pgxpool"
)

// pgSource is a PostgreSQL source on a pgx pool.
type pgSource struct {
	pool *pgxpool.Pool
	// maxConns is the pool's size.
	maxConns int32
}

var _ Source = (*pgSource)(nil)

// pgRuntimeParams fix the session settings that the text form of values depends
// on, so that decoding does not depend on the server's configuration, and make
// every session read-only from its start: each statement then runs as its own
// read-only transaction, with no BEGIN and ROLLBACK around it (two round trips
// fewer per query), and SQL sent over the extended protocol holds one
// statement, so no statement of ours can turn the setting off. The time zone is
// left alone: timestamptz values keep the session's zone.
var pgRuntimeParams = map[string]string{
	"default_transaction_read_only": "on",
	"datestyle":                     "ISO, YMD",
	"intervalstyle":                 "iso_8601",
	"bytea_output":                  "hex",
	"extra_float_digits":            "3",
}

// postgresConfig turns a postgres:// DSN into a pool configuration.
func postgresConfig(dsn string, o options) (*pgxpool.Config, error) {
	u, err := url.Parse(dsn)
	if err != nil {
		return nil, errors.New("not a valid URL")
	}
	cfg, err := pgxpool.ParseConfig(dsn)
	if err != nil {
		return nil, err
	}
	if o.maxConns > 0 || !u.Query().Has("pool_max_conns") {
		cfg.MaxConns = int32(o.poolSize())
	}
	cc := cfg.ConnConfig
	cc.ConnectTimeout = o.connectTimeout
	for k, v := range pgRuntimeParams {
		cc.RuntimeParams[k] = v
	}
	// On cancellation, ask the server to cancel the statement at once (the
	// default only breaks the client's connection, and the statement runs on).
	cc.BuildContextWatcherHandler = func(c *pgconn.PgConn) ctxwatch.Handler {
		return &pgconn.CancelRequestContextWatcherHandler{Conn: c, DeadlineDelay: 2 * time.Second}
	}
	return cfg, nil
}

func openPostgres(dsn string, o options) (Source, error) {
	cfg, err := postgresConfig(dsn, o)
	if err != nil {
		return nil, fmt.Errorf("parse postgres DSN: %w", err)
	}
	pool, err := pgxpool.NewWithConfig(context.Background(), cfg)
	if err != nil {
		return nil, err
	}
	return &pgSource{pool: pool, maxConns: cfg.MaxConns}, nil
}

// Dialect implements Source.
func (s *pgSource) Dialect() Dialect { return Postgres }

// Ping implements Source.
func (s *pgSource) Ping(ctx context.Context) error { return s.pool.Ping(ctx) }

// Close implements Source.
func (s *pgSource) Close() error {
	s.pool.Close()
	return nil
}

// Query implements Source. Results are requested in the text format, whose
// decoding is exact for every type (numeric digits, shortest floats) and gives
// types without a TypeKind their PostgreSQL spelling.
func (s *pgSource) Query(ctx context.Context, sql string, args ...any) (Rows, error) {
	hints, args := splitKinds(args)
	rows, more, err := s.query(ctx, sql, append([]any{pgx.QueryResultFormats{pgx.TextFormatCode}}, args...))
	if err != nil {
		return nil, queryError(ctx, "postgres query", err)
	}
	r := &pgRows{ctx: ctx, rows: rows, pending: more}
	fields := rows.FieldDescriptions()
	r.cols = make([]Column, len(fields))
	for i, f := range fields {
		name := pgTypeName(f.DataTypeOID)
		r.cols[i] = Column{Name: f.Name, DatabaseType: strings.ToUpper(name), Kind: pgKind(name)}
	}
	applyKinds(r.cols, hints)
	r.vals = make([]any, len(fields))
	r.plain = make([]bool, len(fields))
	return r, nil
}

// query starts a statement and reads its first row (more: there is one). A
// pooled connection that the server closed while it sat idle (a restart,
// pg_terminate_backend) fails on its first use, before any row came, and the
// pool drops it; so a failure of an existing connection is tried again, once
// per connection the pool may hold, while a failure to connect is not.
func (s *pgSource) query(ctx context.Context, sql string, args []any) (rows pgx.Rows, more bool, err error) {
	var connectErr *pgconn.ConnectError
	for range s.maxConns + 1 {
		rows, err = s.pool.Query(ctx, sql, args...)
		if err == nil {
			if more = rows.Next(); !more {
				err = rows.Err()
			}
		}
		if err == nil {
			return rows, more, nil
		}
		rows.Close()
		if ctx.Err() != nil || !IsUnavailable(err) || errors.As(err, &connectErr) {
			break
		}
	}
	return nil, false, err
}

// pgTypeName returns the name of the type with the given OID as pgx knows it,
// or "OID n" for types that are not built in (enums, composite types): looking
// them up would need a second connection while the statement holds its own.
func pgTypeName(oid uint32) string {
	if t, ok := pgTypes.TypeForOID(oid); ok {
		return t.Name
	}
	return fmt.Sprintf("oid %d", oid)
}

// pgTypes names PostgreSQL's built-in types; it is only read.
var pgTypes = pgtype.NewMap()

// pgRows is the cursor of a PostgreSQL statement; pending says that the
// statement's first row has been read (by query) and not yet handed out. A
// value in plain text (see TextRows) is decoded only when Values is asked for.
type pgRows struct {
	ctx     context.Context
	rows    pgx.Rows
	pending bool
	cols    []Column
	raw     [][]byte
	plain   []bool // by column: raw holds the value in its plain form
	vals    []any
	lazy    bool // vals lacks the values of the plain columns
	err     error
	closed  bool
}

var _ TextRows = (*pgRows)(nil)

// Columns implements Rows.
func (r *pgRows) Columns() []Column { return r.cols }

// Next implements Rows.
func (r *pgRows) Next() bool {
	if r.err != nil {
		return false
	}
	if r.pending {
		r.pending = false
	} else if !r.rows.Next() {
		return false
	}
	r.raw, r.lazy = r.rows.RawValues(), false
	for i, raw := range r.raw {
		if r.plain[i] = plainText(r.cols[i].Kind, raw); r.plain[i] {
			r.lazy = true
			continue
		}
		if r.vals[i], r.err = pgValue(r.cols[i].Kind, raw); r.err != nil {
			r.err = fmt.Errorf("postgres: column %q: %w", r.cols[i].Name, r.err)
			return false
		}
	}
	return true
}

// Values implements Rows.
func (r *pgRows) Values() []any {
	if r.lazy {
		r.lazy = false
		for i, plain := range r.plain {
			if !plain {
				continue
			}
			var err error
			// Plain text always decodes; were it not to, the error ends the rows.
			if r.vals[i], err = pgValue(r.cols[i].Kind, r.raw[i]); err != nil && r.err == nil {
				r.err = fmt.Errorf("postgres: column %q: %w", r.cols[i].Name, err)
			}
		}
	}
	return r.vals
}

// Text implements TextRows.
func (r *pgRows) Text(i int) ([]byte, bool) { return r.raw[i], r.plain[i] }

// plainText reports whether raw is NULL or in the plain text form of kind k
// (see TextRows).
func plainText(k TypeKind, raw []byte) bool {
	switch {
	case raw == nil || k == TypeString:
		return true
	case k == TypeInteger:
		digits := raw
		if len(digits) > 1 && digits[0] == '-' {
			digits = digits[1:]
		}
		_, ok := plainInteger(raw)
		return ok && (digits[0] != '0' || len(digits) == 1) && string(raw) != "-0"
	case k == TypeTimestamp:
		_, ok := plainTimestamp(raw)
		return ok
	case k == TypeDecimal:
		return isDecimal(raw)
	}
	return false
}

// Err implements Rows.
func (r *pgRows) Err() error {
	if r.err != nil {
		return r.err
	}
	return queryError(r.ctx, "postgres query", r.rows.Err())
}

// Close implements Rows; the connection goes back to the pool.
func (r *pgRows) Close() error {
	if r.closed {
		return nil
	}
	r.closed = true
	r.rows.Close()
	return nil
}

// pgValue decodes the text form of a PostgreSQL value (nil for NULL).
func pgValue(k TypeKind, raw []byte) (any, error) {
	if raw == nil {
		return nil, nil
	}
	// The common forms of large answers, read without a string of their own.
	switch k {
	case TypeInteger:
		if n, ok := plainInteger(raw); ok {
			return n, nil
		}
	case TypeTimestamp, TypeTimestampTZ:
		if t, ok := plainTimestamp(raw); ok {
			return t, nil // no zone: UTC
		}
	}
	s := string(raw)
	switch k {
	case TypeBinary:
		h, ok := strings.CutPrefix(s, `\x`)
		if !ok {
			return nil, fmt.Errorf("bytea value not in hex format")
		}
		return hex.DecodeString(h)
	case TypeBoolean:
		switch s {
		case "t":
			return true, nil
		case "f":
			return false, nil
		}
	}
	return fromText(k, s)
}
