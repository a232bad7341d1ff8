// Package sourcetest gives tests throw-away databases on the three dialects:
// a schema on the PostgreSQL server that VENEER_TEST_POSTGRES names, a
// database on the MySQL server that VENEER_TEST_MYSQL names, or an SQLite file.
// Without a server, a test skips with a message that starts with "no
// database:"; with CI=true it fails instead (.ci/run relies on both).
package sourcetest

import (
	"context"
	"database/sql"
	"fmt"
	"math/rand/v2"
	"net/url"
	"os"
	"path/filepath"
	"testing"
	"time"

	"github.com/go-sql-driver/mysql"
	_ "github.com/jackc/pgx/v5/stdlib" // the "pgx" database/sql driver, for set-up
	_ "modernc.org/sqlite"

	"veneer/catalog/source"
)

// The environment variables that name the test servers.
const (
	EnvPostgres = "VENEER_TEST_POSTGRES"
	EnvMySQL    = "VENEER_TEST_MYSQL"
)

// Dialects lists the dialects in the order ForEach runs them.
var Dialects = []source.Dialect{source.Postgres, source.MySQL, source.SQLite}

// NoDatabase skips t for want of a database server, or fails it when CI=true.
func NoDatabase(t testing.TB, format string, args ...any) {
	t.Helper()
	msg := "no database: " + fmt.Sprintf(format, args...)
	if os.Getenv("CI") == "true" {
		t.Fatal(msg + " (CI=true: a database test may not be skipped)")
	}
	t.Skip(msg)
}

// DB is a throw-away place for one test's tables, dropped when the test ends.
type DB struct {
	Dialect source.Dialect
	// DSN opens the place with source.Open; unqualified table names resolve
	// in it (for PostgreSQL through the search_path it sets).
	DSN string
	// Name is the schema (PostgreSQL), database (MySQL) or "main" (SQLite).
	Name string
	// Admin may write there, to set a test up. MySQL's Admin session has
	// sql_mode ANSI_QUOTES, so that "quoted" identifiers work as elsewhere.
	Admin *sql.DB
}

// New creates a DB of the given dialect.
func New(t testing.TB, d source.Dialect) *DB {
	t.Helper()
	switch d {
	case source.Postgres:
		return newPostgres(t)
	case source.MySQL:
		return newMySQL(t)
	case source.SQLite:
		return newSQLite(t)
	}
	t.Fatalf("sourcetest: unknown dialect %v", d)
	return nil
}

// ForEach runs f as a subtest named after each dialect, each with a new DB.
func ForEach(t *testing.T, f func(t *testing.T, db *DB)) {
	for _, d := range Dialects {
		t.Run(d.String(), func(t *testing.T) { f(t, New(t, d)) })
	}
}

// Exec runs set-up statements, failing the test on the first error.
func (db *DB) Exec(t testing.TB, stmts ...string) {
	t.Helper()
	for _, s := range stmts {
		if _, err := db.Admin.Exec(s); err != nil {
			t.Fatalf("%s set-up: %s: %v", db.Dialect, s, err)
		}
	}
}

// Open opens the DB as a Source, closed when the test ends.
func (db *DB) Open(t testing.TB, opts ...source.Option) source.Source {
	t.Helper()
	src, err := source.Open(context.Background(), db.DSN, opts...)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { src.Close() })
	return src
}

// Name returns a fresh name for a throw-away object.
func Name() string { return fmt.Sprintf("veneer_t_%016x", rand.Uint64()) }

// server opens the server that env names, or skips the test.
func server(t testing.TB, env, driver string, toDriver func(string) (string, error)) (string, *sql.DB) {
	t.Helper()
	dsn := os.Getenv(env)
	if dsn == "" {
		NoDatabase(t, "%s is not set", env)
	}
	ddsn, err := toDriver(dsn)
	if err != nil {
		t.Fatalf("%s: %v", env, err)
	}
	admin, err := sql.Open(driver, ddsn)
	if err != nil {
		t.Fatalf("%s: %v", env, err)
	}
	ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
	defer cancel()
	if err := admin.PingContext(ctx); err != nil {
		admin.Close()
		NoDatabase(t, "%s (%s) does not answer: %v", env, source.Redact(dsn), err)
	}
	return dsn, admin
}

func newPostgres(t testing.TB) *DB {
	dsn, srv := server(t, EnvPostgres, "pgx", func(s string) (string, error) { return s, nil })
	t.Cleanup(func() { srv.Close() })
	schema := Name()
	if _, err := srv.Exec("CREATE SCHEMA " + schema); err != nil {
		t.Fatalf("create schema: %v", err)
	}
	t.Cleanup(func() {
		if _, err := srv.Exec("DROP SCHEMA " + schema + " CASCADE"); err != nil {
			t.Errorf("drop schema %s: %v", schema, err)
		}
	})
	u, err := url.Parse(dsn)
	if err != nil {
		t.Fatalf("%s: not a URL", EnvPostgres)
	}
	q := u.Query()
	q.Set("search_path", schema)
	u.RawQuery = q.Encode()
	db := &DB{Dialect: source.Postgres, DSN: u.String(), Name: schema}
	if db.Admin, err = sql.Open("pgx", db.DSN); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Admin.Close() })
	return db
}

func newMySQL(t testing.TB) *DB {
	toDriver := func(s string) (string, error) {
		cfg, err := source.MySQLConfig(s)
		if err != nil {
			return "", err
		}
		return cfg.FormatDSN(), nil
	}
	dsn, srv := server(t, EnvMySQL, "mysql", toDriver)
	t.Cleanup(func() { srv.Close() })
	name := Name()
	if _, err := srv.Exec("CREATE DATABASE " + name + " CHARACTER SET utf8mb4"); err != nil {
		t.Fatalf("create database: %v", err)
	}
	t.Cleanup(func() {
		if _, err := srv.Exec("DROP DATABASE " + name); err != nil {
			t.Errorf("drop database %s: %v", name, err)
		}
	})
	u, _ := url.Parse(dsn)
	u.Path = "/" + name
	db := &DB{Dialect: source.MySQL, DSN: u.String(), Name: name}
	cfg, err := source.MySQLConfig(db.DSN)
	if err != nil {
		t.Fatal(err)
	}
	if cfg.Params == nil {
		cfg.Params = map[string]string{}
	}
	cfg.Params["sql_mode"] = "CONCAT(@@sql_mode, ',ANSI_QUOTES')"
	c, err := mysql.NewConnector(cfg)
	if err != nil {
		t.Fatal(err)
	}
	db.Admin = sql.OpenDB(c)
	t.Cleanup(func() { db.Admin.Close() })
	return db
}

func newSQLite(t testing.TB) *DB {
	path := filepath.Join(t.TempDir(), "test.db")
	admin, err := sql.Open("sqlite", path)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { admin.Close() })
	if err := admin.Ping(); err != nil { // creates the file
		t.Fatal(err)
	}
	return &DB{Dialect: source.SQLite, DSN: "sqlite:" + path, Name: "main", Admin: admin}
}
