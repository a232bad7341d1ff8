package source

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"net/url"
	"path/filepath"
	"strings"

	// The pure-Go SQLite driver, registered as "sqlite".
	_ "modernc.org/sqlite"
)

// sqliteSource is an SQLite database file opened read-only.
type sqliteSource struct {
	db *sql.DB
}

var _ Source = (*sqliteSource)(nil)

// sqliteDSN turns sqlite:PATH or sqlite:file:PATH?params into the driver's URI
// filename, opened read-only twice over: mode=ro for the file, and the
// query_only pragma for the connection. A file that does not exist is an error
// rather than a new empty database.
func sqliteDSN(dsn string) (string, error) {
	rest := dsn[len("sqlite:"):]
	if rest == "" {
		return "", errors.New("no file name")
	}
	var u *url.URL
	if strings.HasPrefix(rest, "file:") {
		var err error
		if u, err = url.Parse(rest); err != nil {
			return "", errors.New("not a valid file: URI")
		}
	} else {
		abs, err := filepath.Abs(rest)
		if err != nil {
			return "", err
		}
		u = &url.URL{Scheme: "file", Path: abs, OmitHost: true}
	}
	q := u.Query()
	q.Set("mode", "ro")
	q.Set("_query_only", "1")
	u.RawQuery = q.Encode()
	return u.String(), nil
}

func openSQLite(dsn string, o options) (Source, error) {
	name, err := sqliteDSN(dsn)
	if err != nil {
		return nil, fmt.Errorf("parse sqlite DSN: %w", err)
	}
	db, err := sql.Open("sqlite", name)
	if err != nil {
		return nil, err
	}
	db.SetMaxOpenConns(o.poolSize())
	db.SetMaxIdleConns(o.poolSize())
	return &sqliteSource{db: db}, nil
}

// Dialect implements Source.
func (s *sqliteSource) Dialect() Dialect { return SQLite }

// Ping implements Source.
func (s *sqliteSource) Ping(ctx context.Context) error { return s.db.PingContext(ctx) }

// Close implements Source.
func (s *sqliteSource) Close() error { return s.db.Close() }

// Query implements Source. The driver interrupts the statement when ctx ends.
func (s *sqliteSource) Query(ctx context.Context, query string, args ...any) (Rows, error) {
	hints, args := splitKinds(args)
	tx, err := s.db.BeginTx(ctx, &sql.TxOptions{ReadOnly: true})
	if err != nil {
		return nil, queryError(ctx, "sqlite: begin read-only transaction", err)
	}
	finish := func() error {
		if err := tx.Rollback(); err != nil && !errors.Is(err, sql.ErrTxDone) {
			return err
		}
		return nil
	}
	rows, err := tx.QueryContext(ctx, query, args...)
	if err != nil {
		finish()
		return nil, queryError(ctx, "sqlite query", err)
	}
	return newSQLRows(ctx, SQLite, rows, hints, sqliteKind, finish)
}
