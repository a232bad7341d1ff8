package source

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
	_ "github.com/jackc/pgx/v5/stdlib" // the "pgx" database/sql driver, for test set-up
)

// The environment variables that name the test servers (DESIGN.md, Testing).
const (
	envPostgres = "VENEER_TEST_POSTGRES"
	envMySQL    = "VENEER_TEST_MYSQL"
)

// noDatabase skips a test that needs a database server it cannot have, or, in CI
// (CI=true), fails it. The message starts with "no database:", the marker .ci/run
// looks for in skips.
func noDatabase(t *testing.T, format string, args ...any) {
	t.Helper()
	msg := "no database: " + fmt.Sprintf(format, args...)
	if os.Getenv("CI") == "true" {
		t.Fatal(msg + " (CI=true: a database test may not be skipped)")
	}
	t.Skip(msg)
}

// testDB is a throw-away place for a test's tables: a schema (PostgreSQL), a
// database (MySQL) or a file (SQLite), dropped when the test ends.
type testDB struct {
	dialect Dialect
	// dsn opens the place through Open; unqualified table names resolve in it.
	dsn string
	// admin can write there, to set the test up.
	admin *sql.DB
}

// exec runs set-up statements, failing the test on the first error.
func (db *testDB) exec(t *testing.T, stmts ...string) {
	t.Helper()
	for _, s := range stmts {
		if _, err := db.admin.Exec(s); err != nil {
			t.Fatalf("%s set-up: %s: %v", db.dialect, s, err)
		}
	}
}

// open opens the test place as a Source, closed when the test ends.
func (db *testDB) open(t *testing.T, opts ...Option) Source {
	t.Helper()
	src, err := Open(context.Background(), db.dsn, opts...)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { src.Close() })
	return src
}

// forEachDB runs f as a subtest on each dialect, each with a new testDB.
func forEachDB(t *testing.T, f func(t *testing.T, db *testDB)) {
	for _, d := range []Dialect{Postgres, MySQL, SQLite} {
		t.Run(d.String(), func(t *testing.T) {
			var db *testDB
			switch d {
			case Postgres:
				db = postgresDB(t)
			case MySQL:
				db = mysqlDB(t)
			case SQLite:
				db = sqliteDB(t)
			}
			f(t, db)
		})
	}
}

func throwAwayName() string { return fmt.Sprintf("veneer_t_%016x", rand.Uint64()) }

// serverDSN reads a server's DSN from the environment and checks that the
// server answers, with the driver given.
func serverDSN(t *testing.T, env, driver string, driverDSN func(string) (string, error)) (string, *sql.DB) {
	t.Helper()
	dsn := os.Getenv(env)
	if dsn == "" {
		noDatabase(t, "%s is not set", env)
	}
	ddsn, err := driverDSN(dsn)
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
		noDatabase(t, "%s (%s) does not answer: %v", env, Redact(dsn), tidy(err, password(dsn)))
	}
	return dsn, admin
}

// postgresDB creates a schema, and a DSN whose search_path is that schema.
func postgresDB(t *testing.T) *testDB {
	dsn, server := serverDSN(t, envPostgres, "pgx", func(s string) (string, error) { return s, nil })
	schema := throwAwayName()
	if _, err := server.Exec("CREATE SCHEMA " + schema); err != nil {
		t.Fatalf("create schema: %v", err)
	}
	u, _ := url.Parse(dsn)
	q := u.Query()
	q.Set("search_path", schema)
	u.RawQuery = q.Encode()
	db := &testDB{dialect: Postgres, dsn: u.String()}
	var err error
	if db.admin, err = sql.Open("pgx", db.dsn); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() {
		db.admin.Close()
		defer server.Close()
		if _, err := server.Exec("DROP SCHEMA " + schema + " CASCADE"); err != nil {
			t.Errorf("drop schema %s: %v", schema, err)
		}
	})
	return db
}

// mysqlDB creates a database, and a DSN that names it.
func mysqlDB(t *testing.T) *testDB {
	toDriver := func(s string) (string, error) {
		cfg, err := mysqlConfig(s, options{connectTimeout: 5 * time.Second})
		if err != nil {
			return "", err
		}
		return cfg.FormatDSN(), nil
	}
	dsn, server := serverDSN(t, envMySQL, "mysql", toDriver)
	name := throwAwayName()
	if _, err := server.Exec("CREATE DATABASE " + name + " CHARACTER SET utf8mb4"); err != nil {
		t.Fatalf("create database: %v", err)
	}
	u, _ := url.Parse(dsn)
	u.Path = "/" + name
	db := &testDB{dialect: MySQL, dsn: u.String()}
	cfg, _ := mysqlConfig(db.dsn, options{connectTimeout: 5 * time.Second})
	c, err := mysql.NewConnector(cfg)
	if err != nil {
		t.Fatal(err)
	}
	db.admin = sql.OpenDB(c)
	t.Cleanup(func() {
		db.admin.Close()
		defer server.Close()
		if _, err := server.Exec("DROP DATABASE " + name); err != nil {
			t.Errorf("drop database %s: %v", name, err)
		}
	})
	return db
}

// sqliteDB creates a database file in the test's temporary directory.
func sqliteDB(t *testing.T) *testDB {
	path := filepath.Join(t.TempDir(), "wind.db")
	admin, err := sql.Open("sqlite", path)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { admin.Close() })
	if err := admin.Ping(); err != nil { // creates the file
		t.Fatal(err)
	}
	return &testDB{dialect: SQLite, dsn: "sqlite:" + path, admin: admin}
}

// collect runs a query and returns the rows' values, failing the test on error.
func collect(t *testing.T, src Source, query string, args ...any) ([]Column, [][]any) {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	rows, err := src.Query(ctx, query, args...)
	if err != nil {
		t.Fatalf("%s: %v", query, err)
	}
	defer rows.Close()
	var out [][]any
	for rows.Next() {
		out = append(out, append([]any(nil), rows.Values()...))
	}
	if err := rows.Err(); err != nil {
		t.Fatalf("%s: %v", query, err)
	}
	if err := rows.Close(); err != nil {
		t.Fatalf("%s: close: %v", query, err)
	}
	return rows.Columns(), out
}
