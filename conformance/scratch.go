package conformance

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"math/rand/v2"
	"net/url"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/go-sql-driver/mysql"
	_ "github.com/jackc/pgx/v5/stdlib" // the "pgx" database/sql driver, for writable set-up connections
	_ "modernc.org/sqlite"             // the "sqlite" database/sql driver, likewise

	"veneer/catalog/source"
)

// ParseDialect returns the dialect a database name stands for: sqlite,
// postgres or mysql (MySQL and MariaDB).
func ParseDialect(name string) (source.Dialect, error) {
	for _, d := range []source.Dialect{source.SQLite, source.Postgres, source.MySQL} {
		if d.String() == name {
			return d, nil
		}
	}
	return 0, fmt.Errorf("unknown database %q (want sqlite, postgres or mysql)", name)
}

// Server makes throw-away databases of one dialect: a schema on a PostgreSQL
// server, a database on a MySQL server, a file in a temporary directory for
// SQLite. veneer's sources are read-only on purpose, so the set-up writes
// through connections of its own.
type Server struct {
	Dialect source.Dialect
	// dsn is the server's DSN (PostgreSQL, MySQL).
	dsn   string
	admin *sql.DB
	// sqlMode is the MySQL session sql_mode of scratch databases.
	sqlMode string
	// dir holds the SQLite files.
	dir string
}

// OpenServer connects to the server that dsn names (postgres://…, mysql://…);
// for SQLite dsn is ignored and the databases are files in a new temporary
// directory. Errors never show the DSN's password.
func OpenServer(ctx context.Context, d source.Dialect, dsn string) (*Server, error) {
	s := &Server{Dialect: d, dsn: dsn}
	switch d {
	case source.SQLite:
		dir, err := os.MkdirTemp("", "veneer-w3c-")
		if err != nil {
			return nil, err
		}
		s.dir = dir
		return s, nil
	case source.Postgres:
		db, err := sql.Open("pgx", dsn)
		if err != nil {
			return nil, fmt.Errorf("postgres server %s: %w", source.Redact(dsn), scrub(err, dsn))
		}
		s.admin = db
	case source.MySQL:
		db, err := openMySQL(dsn)
		if err != nil {
			return nil, fmt.Errorf("mysql server %s: %w", source.Redact(dsn), err)
		}
		s.admin = db
	default:
		return nil, fmt.Errorf("no scratch databases for dialect %v", d)
	}
	pingCtx, cancel := context.WithTimeout(ctx, 10*time.Second)
	defer cancel()
	if err := s.admin.PingContext(pingCtx); err != nil {
		s.admin.Close()
		return nil, fmt.Errorf("%s server %s does not answer: %w", d, source.Redact(dsn), scrub(err, dsn))
	}
	if d == source.MySQL {
		// The scripts and the mappings' SQL queries delimit identifiers with double
		// quotes, as standard SQL does; MySQL reads them so under ANSI_QUOTES.
		var mode string
		if err := s.admin.QueryRowContext(pingCtx, "SELECT @@SESSION.sql_mode").Scan(&mode); err != nil {
			s.admin.Close()
			return nil, fmt.Errorf("mysql server %s: reading sql_mode: %w", source.Redact(dsn), scrub(err, dsn))
		}
		if !strings.Contains(","+mode+",", ",ANSI_QUOTES,") {
			mode = strings.TrimPrefix(mode+",ANSI_QUOTES", ",")
		}
		s.sqlMode = mode
	}
	return s, nil
}

// Close releases the server connection (or removes the SQLite directory).
func (s *Server) Close() error {
	if s.dir != "" {
		return os.RemoveAll(s.dir)
	}
	return s.admin.Close()
}

// Name is the database's short name: sqlite, postgres or mysql.
func (s *Server) Name() string { return s.Dialect.String() }

// scratchName returns a new name for a throw-away schema, database or file.
func scratchName() string { return fmt.Sprintf("veneer_w3c_%016x", rand.Uint64()) }

// Create makes a new empty throw-away database.
func (s *Server) Create(ctx context.Context) (*Scratch, error) {
	name := scratchName()
	sc := &Scratch{Dialect: s.Dialect, server: s}
	switch s.Dialect {
	case source.SQLite:
		path := filepath.Join(s.dir, name+".db")
		sc.DSN = "sqlite:" + path
		db, err := sql.Open("sqlite", path)
		if err != nil {
			return nil, err
		}
		if err := db.PingContext(ctx); err != nil { // creates the file
			db.Close()
			return nil, fmt.Errorf("creating %s: %w", path, err)
		}
		sc.db = db
		sc.drop = func() error { return os.Remove(path) }
	case source.Postgres:
		quoted := source.Postgres.QuoteIdent(name)
		if _, err := s.admin.ExecContext(ctx, "CREATE SCHEMA "+quoted); err != nil {
			return nil, fmt.Errorf("creating schema %s: %w", name, scrub(err, s.dsn))
		}
		sc.drop = func() error {
			_, err := s.admin.Exec("DROP SCHEMA " + quoted + " CASCADE")
			return scrub(err, s.dsn)
		}
		dsn, err := withQuery(s.dsn, "", "search_path", name)
		if err != nil {
			sc.drop()
			return nil, err
		}
		sc.DSN = dsn
		if sc.db, err = sql.Open("pgx", dsn); err != nil {
			sc.drop()
			return nil, fmt.Errorf("opening schema %s: %w", name, scrub(err, s.dsn))
		}
	case source.MySQL:
		quoted := source.MySQL.QuoteIdent(name)
		if _, err := s.admin.ExecContext(ctx, "CREATE DATABASE "+quoted+" CHARACTER SET utf8mb4"); err != nil {
			return nil, fmt.Errorf("creating database %s: %w", name, scrub(err, s.dsn))
		}
		sc.drop = func() error {
			_, err := s.admin.Exec("DROP DATABASE " + quoted)
			return scrub(err, s.dsn)
		}
		dsn, err := withQuery(s.dsn, "/"+name, "sql_mode", "'"+s.sqlMode+"'")
		if err != nil {
			sc.drop()
			return nil, err
		}
		sc.DSN = dsn
		if sc.db, err = openMySQL(dsn); err != nil {
			sc.drop()
			return nil, fmt.Errorf("opening database %s: %w", name, scrub(err, s.dsn))
		}
	}
	// One connection: the statements of a script run in order on one session.
	sc.db.SetMaxOpenConns(1)
	return sc, nil
}

// withQuery returns dsn with its path replaced (unless path is empty) and the
// query parameter key set to value.
func withQuery(dsn, path, key, value string) (string, error) {
	u, err := url.Parse(dsn)
	if err != nil {
		return "", fmt.Errorf("server DSN %s is not a URL", source.Redact(dsn))
	}
	if path != "" {
		u.Path = path
	}
	q := u.Query()
	q.Set(key, value)
	u.RawQuery = q.Encode()
	return u.String(), nil
}

// openMySQL opens a writable pool on the MySQL database that dsn names.
func openMySQL(dsn string) (*sql.DB, error) {
	cfg, err := source.MySQLConfig(dsn)
	if err != nil {
		return nil, err
	}
	c, err := mysql.NewConnector(cfg)
	if err != nil {
		return nil, scrub(err, dsn)
	}
	return sql.OpenDB(c), nil
}

// scrub removes dsn's password from an error's text, keeping nil as nil.
func scrub(err error, dsn string) error {
	if err == nil {
		return nil
	}
	u, perr := url.Parse(dsn)
	if perr != nil || u.User == nil {
		return err
	}
	pass, ok := u.User.Password()
	if !ok || pass == "" || !strings.Contains(err.Error(), pass) {
		return err
	}
	return errors.New(strings.ReplaceAll(err.Error(), pass, "xxxxx"))
}

// Scratch is a throw-away database: a PostgreSQL schema, a MySQL database or an
// SQLite file, removed by Close.
type Scratch struct {
	Dialect source.Dialect
	// DSN opens the database through source.Open; unqualified table names
	// resolve in it (PostgreSQL: by a search_path parameter; MySQL: with the
	// session's sql_mode including ANSI_QUOTES, as the scripts need).
	DSN    string
	db     *sql.DB
	drop   func() error
	src    source.Source
	server *Server // that made it
	// closers stop what the set-up started over the database (a server),
	// before Close closes the source.
	closers []func() error
}

// Load runs an SQL script, translated for the dialect (TranslateScript), one
// statement at a time; name is used in errors.
func (s *Scratch) Load(ctx context.Context, name string, script []byte) error {
	stmts, err := TranslateScript(name, script, s.Dialect)
	if err != nil {
		return err
	}
	for i, st := range stmts {
		if _, err := s.db.ExecContext(ctx, st); err != nil {
			return fmt.Errorf("%s: statement %d on %s: %w\n%s", name, i+1, s.Dialect, scrub(err, s.DSN), st)
		}
	}
	return nil
}

// Source returns veneer's read-only source on the database, opened on first use.
func (s *Scratch) Source(ctx context.Context) (source.Source, error) {
	if s.src == nil {
		src, err := source.Open(ctx, s.DSN)
		if err != nil {
			return nil, fmt.Errorf("opening the scratch database as a source: %w", err)
		}
		s.src = src
	}
	return s.src, nil
}

// Another makes one more throw-away database on the server that made s,
// closed and removed when s is: for a set-up that needs several databases.
func (s *Scratch) Another(ctx context.Context) (*Scratch, error) {
	o, err := s.server.Create(ctx)
	if err != nil {
		return nil, err
	}
	s.atClose(o.Close)
	return o, nil
}

// atClose has Close call f first, for something that uses the database.
func (s *Scratch) atClose(f func() error) { s.closers = append(s.closers, f) }

// Close stops what was started over the database, closes the connections and
// removes the database.
func (s *Scratch) Close() error {
	var errs []error
	for _, f := range s.closers {
		errs = append(errs, f())
	}
	if s.src != nil {
		errs = append(errs, s.src.Close())
	}
	errs = append(errs, s.db.Close(), s.drop())
	return errors.Join(errs...)
}
