package demo

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"os"

	_ "modernc.org/sqlite" // registers the pure-Go "sqlite" driver

	"veneer/catalog"
	"veneer/catalog/r2rml"
	"veneer/catalog/source"
)

// BuildSQLite creates a new SQLite database file at path and builds the demo database
// in it, in one transaction with foreign keys enforced. It refuses to touch a file that
// already exists, and removes the file again if the build fails. The file is open for
// writing only during the build; serve it read-only afterwards.
func BuildSQLite(ctx context.Context, path string) (err error) {
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE|os.O_EXCL, 0o644)
	if err != nil {
		return fmt.Errorf("demo: creating the SQLite file: %w", err)
	}
	if err := f.Close(); err != nil {
		return fmt.Errorf("demo: creating the SQLite file: %w", err)
	}
	defer func() {
		if err != nil {
			err = errors.Join(err, os.Remove(path))
		}
	}()
	db, err := sql.Open("sqlite", path)
	if err != nil {
		return fmt.Errorf("demo: opening %s: %w", path, err)
	}
	defer func() { err = errors.Join(err, db.Close()) }()
	// One connection, so that the pragma holds for the transaction that follows.
	conn, err := db.Conn(ctx)
	if err != nil {
		return fmt.Errorf("demo: opening %s: %w", path, err)
	}
	defer func() { err = errors.Join(err, conn.Close()) }()
	if _, err := conn.ExecContext(ctx, "PRAGMA foreign_keys = ON"); err != nil {
		return fmt.Errorf("demo: enabling foreign keys in %s: %w", path, err)
	}
	tx, err := conn.BeginTx(ctx, nil)
	if err != nil {
		return fmt.Errorf("demo: starting the build of %s: %w", path, err)
	}
	exec := func(ctx context.Context, query string, args ...any) error {
		_, err := tx.ExecContext(ctx, query, args...)
		return err
	}
	if err := Build(ctx, exec, "sqlite"); err != nil {
		return errors.Join(err, tx.Rollback())
	}
	if err := tx.Commit(); err != nil {
		return fmt.Errorf("demo: committing the build of %s: %w", path, err)
	}
	return nil
}

// Served is the demo as veneer serves it: the source, the mapping's catalog
// and the catalog's columns as probed on the source.
type Served struct {
	Source  source.Source
	Catalog *catalog.Catalog
	Columns *catalog.Columns
}

// OpenSQLite builds the demo database in a new SQLite file at path and opens
// it read-only with the demo mapping. The caller closes Source.
func OpenSQLite(ctx context.Context, path string) (*Served, error) {
	if err := BuildSQLite(ctx, path); err != nil {
		return nil, err
	}
	src, err := source.Open(ctx, "sqlite:"+path)
	if err != nil {
		return nil, err
	}
	cat, err := r2rml.Load("mapping.ttl", []byte(Mapping()))
	if err == nil {
		var cols *catalog.Columns
		if cols, err = catalog.ProbeColumns(ctx, src, cat); err == nil {
			return &Served{Source: src, Catalog: cat, Columns: cols}, nil
		}
	}
	return nil, errors.Join(err, src.Close())
}
