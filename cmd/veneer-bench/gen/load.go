package gen

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"io"
	"iter"
	"math/big"
	"net/url"
	"os"
	"strconv"
	"strings"
	"time"

	"github.com/go-sql-driver/mysql"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgtype"
	_ "modernc.org/sqlite" // registers the pure-Go "sqlite" driver

	"veneer/catalog/source"
	"veneer/cmd/veneer/demo"
)

// Generator is the version of the generator; a database loaded by another
// version is loaded again.
const Generator = 1

// extraIndexes are the indexes a DBA adds for a maintenance dashboard, beyond
// the keys and foreign key indexes of schema.sql: work by date and by state,
// inspections by date.
var extraIndexes = []string{
	"CREATE INDEX work_order_opened_idx ON work_order (opened_at)",
	"CREATE INDEX work_order_state_idx ON work_order (status, priority)",
	"CREATE INDEX inspection_day_idx ON inspection (inspected_on)",
}

// metaTable records which data a benchmark database holds; it is written last,
// so a database whose load broke off has none.
const metaTable = "bench_meta"

// Target is a benchmark database.
type Target struct {
	// Dialect is "sqlite", "postgres" or "mysql".
	Dialect string
	// DSN is the database's DSN as veneer's source.Open takes it.
	DSN string
	// base is the DSN the target was derived from; for postgres and mysql its
	// database is the one the benchmark database is created from.
	base string
	// name is the database name (postgres, mysql) or file path (sqlite).
	name string
}

// DatabaseName is the name of the benchmark database at scale factor sf on
// PostgreSQL and MySQL: veneer_bench_sf10, veneer_bench_sf0_01.
func DatabaseName(sf float64) string {
	return "veneer_bench_sf" + strings.ReplaceAll(strconv.FormatFloat(sf, 'f', -1, 64), ".", "_")
}

// TargetFor returns the benchmark database at scale factor sf for a DSN: for
// sqlite:PATH the file itself; for postgres:// and mysql:// the database
// DatabaseName(sf) on the same server, created from the DSN's connection.
func TargetFor(dsn string, sf float64) (Target, error) {
	scheme, _, _ := strings.Cut(dsn, ":")
	switch scheme {
	case "sqlite":
		path := strings.TrimPrefix(dsn, "sqlite:")
		if path == "" || strings.HasPrefix(path, "file:") {
			return Target{}, fmt.Errorf("the benchmark takes a plain sqlite:PATH, not %q", dsn)
		}
		return Target{Dialect: "sqlite", DSN: dsn, base: dsn, name: path}, nil
	case "postgres", "postgresql", "mysql":
		u, err := url.Parse(dsn)
		if err != nil {
			return Target{}, fmt.Errorf("parsing the DSN %s: not a valid URL", source.Redact(dsn))
		}
		name := DatabaseName(sf)
		u.Path = "/" + name
		dialect := "postgres"
		if scheme == "mysql" {
			dialect = "mysql"
		}
		return Target{Dialect: dialect, DSN: u.String(), base: dsn, name: name}, nil
	}
	return Target{}, fmt.Errorf("unsupported DSN %s (want sqlite:PATH, postgres:// or mysql://)", source.Redact(dsn))
}

// TableStat is what loading one table took.
type TableStat struct {
	Table string
	Rows  int64
	Time  time.Duration
}

// LoadStats is what a load took: each table, then indexes and statistics.
type LoadStats struct {
	Tables  []TableStat
	Indexes time.Duration
	Total   time.Duration
}

// Rows is the number of rows loaded into all tables.
func (s LoadStats) Rows() int64 {
	var n int64
	for _, t := range s.Tables {
		n += t.Rows
	}
	return n
}

// Load creates the benchmark database of t anew (dropping an old one) and fills
// it with the data at scale factor sf: tables first, rows in bulk, then the
// indexes and the planner statistics. Progress lines go to progress.
func Load(ctx context.Context, t Target, sf float64, progress io.Writer) (LoadStats, error) {
	data, err := New(sf)
	if err != nil {
		return LoadStats{}, err
	}
	start := time.Now()
	var stats LoadStats
	switch t.Dialect {
	case "sqlite":
		stats, err = loadSQLite(ctx, t, data, progress)
	case "postgres":
		stats, err = loadPostgres(ctx, t, data, progress)
	case "mysql":
		stats, err = loadMySQL(ctx, t, data, progress)
	default:
		err = fmt.Errorf("unknown dialect %q", t.Dialect)
	}
	stats.Total = time.Since(start)
	if err != nil {
		return stats, fmt.Errorf("loading %s at SF %v: %w", t.name, sf, err)
	}
	return stats, nil
}

// Loaded reports whether t holds this generator's data at scale factor sf.
func Loaded(ctx context.Context, t Target, sf float64) bool {
	if t.Dialect == "sqlite" {
		if _, err := os.Stat(t.name); err != nil {
			return false
		}
	}
	src, err := source.Open(ctx, t.DSN)
	if err != nil {
		return false
	}
	defer src.Close()
	rows, err := src.Query(ctx, "SELECT scale_factor, generator FROM "+metaTable)
	if err != nil {
		return false
	}
	defer rows.Close()
	if !rows.Next() {
		return false
	}
	v := rows.Values()
	return fmt.Sprint(v[0]) == formatSF(sf) && fmt.Sprint(v[1]) == strconv.Itoa(Generator)
}

// Drop removes the benchmark database of t.
func Drop(ctx context.Context, t Target) error {
	switch t.Dialect {
	case "sqlite":
		for _, suffix := range []string{"", "-journal", "-wal", "-shm"} {
			if err := os.Remove(t.name + suffix); err != nil && !errors.Is(err, os.ErrNotExist) {
				return err
			}
		}
		return nil
	case "postgres":
		conn, err := pgx.Connect(ctx, t.base)
		if err != nil {
			return fmt.Errorf("connecting to %s: %w", source.Redact(t.base), err)
		}
		defer conn.Close(ctx)
		_, err = conn.Exec(ctx, "DROP DATABASE IF EXISTS "+source.Postgres.QuoteIdent(t.name)+" WITH (FORCE)")
		return err
	case "mysql":
		db, err := mysqlDB(t.base, "")
		if err != nil {
			return err
		}
		defer db.Close()
		_, err = db.ExecContext(ctx, "DROP DATABASE IF EXISTS "+source.MySQL.QuoteIdent(t.name))
		return err
	}
	return fmt.Errorf("unknown dialect %q", t.Dialect)
}

func formatSF(sf float64) string { return strconv.FormatFloat(sf, 'f', -1, 64) }

// ddl splits the demo schema into its CREATE TABLE statements and its indexes
// (the demo's and extraIndexes), which are cheaper to build after the rows are in.
func ddl(dialect string) (tables, indexes []string, err error) {
	stmts, err := demo.Schema(dialect)
	if err != nil {
		return nil, nil, err
	}
	for _, s := range stmts {
		if strings.HasPrefix(s, "CREATE INDEX") {
			indexes = append(indexes, s)
		} else {
			tables = append(tables, s)
		}
	}
	return tables, append(indexes, extraIndexes...), nil
}

func metaStatements(sf float64, placeholder func(int) string) (create, insert string, args []any) {
	return "CREATE TABLE " + metaTable + " (scale_factor VARCHAR(20) NOT NULL, generator INTEGER NOT NULL)",
		"INSERT INTO " + metaTable + " (scale_factor, generator) VALUES (" + placeholder(1) + ", " + placeholder(2) + ")",
		[]any{formatSF(sf), int64(Generator)}
}

func question(int) string    { return "?" }
func dollar(n int) string    { return "$" + strconv.Itoa(n) }
func (t Target) say() string { return t.Dialect + " " + t.name }

// textValue binds a generated value for SQLite and MySQL: dates and timestamps as
// ISO 8601 text without a zone, which both read into their types unchanged, and
// decimals as their digits.
func textValue(k Kind, v any) any {
	switch x := v.(type) {
	case time.Time:
		if k == Date {
			return x.Format("2006-01-02")
		}
		return x.Format("2006-01-02 15:04:05")
	case Dec:
		return x.String()
	}
	return v
}

// pgValue binds a generated value for PostgreSQL's binary COPY.
func pgValue(_ Kind, v any) any {
	if d, ok := v.(Dec); ok {
		return pgtype.Numeric{Int: big.NewInt(d.Units), Exp: int32(-d.Scale), Valid: true}
	}
	return v
}

// execer is what the INSERT loader needs of a connection or transaction.
type execer interface {
	ExecContext(ctx context.Context, query string, args ...any) (sql.Result, error)
	PrepareContext(ctx context.Context, query string) (*sql.Stmt, error)
}

// insertRows loads a table with multi-row INSERTs of batch rows each, every value
// a bind parameter; the full batches share one prepared statement.
func insertRows(ctx context.Context, db execer, tb Table, maxParams int) (int64, error) {
	batch := max(1, maxParams/len(tb.Columns))
	names := make([]string, len(tb.Columns))
	for i, c := range tb.Columns {
		names[i] = c.Name
	}
	one := "(" + strings.TrimSuffix(strings.Repeat("?, ", len(names)), ", ") + ")"
	query := func(rows int) string {
		return "INSERT INTO " + tb.Name + " (" + strings.Join(names, ", ") + ") VALUES " +
			strings.TrimSuffix(strings.Repeat(one+", ", rows), ", ")
	}
	full, err := db.PrepareContext(ctx, query(batch))
	if err != nil {
		return 0, err
	}
	defer full.Close()
	args := make([]any, 0, batch*len(names))
	var n int64
	for row := range tb.Rows {
		for i, v := range row {
			args = append(args, textValue(tb.Columns[i].Kind, v))
		}
		n++
		if len(args) == cap(args) {
			if _, err := full.ExecContext(ctx, args...); err != nil {
				return n, err
			}
			args = args[:0]
		}
	}
	if len(args) > 0 {
		if _, err := db.ExecContext(ctx, query(len(args)/len(names)), args...); err != nil {
			return n, err
		}
	}
	return n, ctx.Err()
}

// ---- SQLite ----

// sqliteMaxParams is the bind parameter limit of the SQLite the driver embeds
// (32 766 since SQLite 3.32, from memory of its documentation); the batches stay
// well below it.
const sqliteMaxParams = 30_000

func loadSQLite(ctx context.Context, t Target, data *Data, progress io.Writer) (stats LoadStats, err error) {
	if err := Drop(ctx, t); err != nil {
		return stats, err
	}
	db, err := sql.Open("sqlite", t.name)
	if err != nil {
		return stats, err
	}
	defer func() { err = errors.Join(err, db.Close()) }()
	db.SetMaxOpenConns(1)
	// The file is built once and then only read: no journal while loading.
	for _, pragma := range []string{"PRAGMA journal_mode = OFF", "PRAGMA synchronous = OFF", "PRAGMA cache_size = -262144"} {
		if _, err := db.ExecContext(ctx, pragma); err != nil {
			return stats, fmt.Errorf("%s: %w", pragma, err)
		}
	}
	tables, indexes, err := ddl("sqlite")
	if err != nil {
		return stats, err
	}
	tx, err := db.BeginTx(ctx, nil)
	if err != nil {
		return stats, err
	}
	defer tx.Rollback()
	if err := runAll(ctx, tx, tables); err != nil {
		return stats, err
	}
	for _, tb := range data.Tables() {
		start := time.Now()
		n, err := insertRows(ctx, tx, tb, sqliteMaxParams)
		if err != nil {
			return stats, fmt.Errorf("filling %s: %w", tb.Name, err)
		}
		stats.Tables = append(stats.Tables, report(progress, t, tb.Name, n, start))
	}
	start := time.Now()
	if err := runAll(ctx, tx, append(indexes, "ANALYZE")); err != nil {
		return stats, err
	}
	create, insert, args := metaStatements(data.SF, question)
	if err := runAll(ctx, tx, []string{create}); err != nil {
		return stats, err
	}
	if _, err := tx.ExecContext(ctx, insert, args...); err != nil {
		return stats, err
	}
	if err := tx.Commit(); err != nil {
		return stats, err
	}
	stats.Indexes = time.Since(start)
	fmt.Fprintf(progress, "%s: indexes and statistics in %s\n", t.say(), stats.Indexes.Round(time.Millisecond))
	return stats, nil
}

func runAll(ctx context.Context, db execer, stmts []string) error {
	for _, s := range stmts {
		if _, err := db.ExecContext(ctx, s); err != nil {
			first, _, _ := strings.Cut(s, "\n")
			return fmt.Errorf("%s: %w", first, err)
		}
	}
	return nil
}

func report(w io.Writer, t Target, table string, n int64, start time.Time) TableStat {
	s := TableStat{Table: table, Rows: n, Time: time.Since(start)}
	fmt.Fprintf(w, "%s: %-10s %9d rows in %s\n", t.say(), table, n, s.Time.Round(time.Millisecond))
	return s
}

// ---- PostgreSQL ----

func loadPostgres(ctx context.Context, t Target, data *Data, progress io.Writer) (LoadStats, error) {
	var stats LoadStats
	if err := Drop(ctx, t); err != nil {
		return stats, err
	}
	admin, err := pgx.Connect(ctx, t.base)
	if err != nil {
		return stats, fmt.Errorf("connecting to %s: %w", source.Redact(t.base), err)
	}
	_, err = admin.Exec(ctx, "CREATE DATABASE "+source.Postgres.QuoteIdent(t.name))
	admin.Close(ctx)
	if err != nil {
		return stats, err
	}
	conn, err := pgx.Connect(ctx, t.DSN)
	if err != nil {
		return stats, fmt.Errorf("connecting to %s: %w", source.Redact(t.DSN), err)
	}
	defer conn.Close(context.WithoutCancel(ctx))
	tables, indexes, err := ddl("postgres")
	if err != nil {
		return stats, err
	}
	for _, s := range tables {
		if _, err := conn.Exec(ctx, s); err != nil {
			return stats, err
		}
	}
	for _, tb := range data.Tables() {
		start := time.Now()
		names := make([]string, len(tb.Columns))
		for i, c := range tb.Columns {
			names[i] = c.Name
		}
		n, err := conn.CopyFrom(ctx, pgx.Identifier{tb.Name}, names, newCopySource(tb))
		if err != nil {
			return stats, fmt.Errorf("copying into %s: %w", tb.Name, err)
		}
		stats.Tables = append(stats.Tables, report(progress, t, tb.Name, n, start))
	}
	start := time.Now()
	create, insert, args := metaStatements(data.SF, dollar)
	// VACUUM after a bulk load, as a DBA runs it: it sets the visibility map
	// (index-only scans) and the tuples' hint bits, which the first readers
	// would otherwise write while the benchmark measures them.
	for _, s := range append(indexes, "VACUUM (ANALYZE)", create) {
		if _, err := conn.Exec(ctx, s); err != nil {
			return stats, fmt.Errorf("%s: %w", s, err)
		}
	}
	if _, err := conn.Exec(ctx, insert, args...); err != nil {
		return stats, err
	}
	stats.Indexes = time.Since(start)
	fmt.Fprintf(progress, "%s: indexes and statistics in %s\n", t.say(), stats.Indexes.Round(time.Millisecond))
	return stats, nil
}

// copySource feeds a table's row stream to pgx's CopyFrom, which pulls.
type copySource struct {
	tb   Table
	next func() ([]any, bool)
	stop func()
	row  []any
}

func newCopySource(tb Table) *copySource {
	c := &copySource{tb: tb}
	c.next, c.stop = iter.Pull(tb.Rows)
	return c
}

// Next implements pgx.CopyFromSource: it pulls the next row and binds its values.
func (c *copySource) Next() bool {
	row, ok := c.next()
	if !ok {
		c.stop()
		return false
	}
	for i, v := range row {
		row[i] = pgValue(c.tb.Columns[i].Kind, v)
	}
	c.row = row
	return true
}

// Values implements pgx.CopyFromSource.
func (c *copySource) Values() ([]any, error) { return c.row, nil }

// Err implements pgx.CopyFromSource; generating rows cannot fail.
func (c *copySource) Err() error { return nil }

// ---- MySQL / MariaDB ----

// mysqlMaxParams is the bind parameter limit of a MySQL prepared statement
// (65 535, from memory of its documentation).
const mysqlMaxParams = 60_000

// mysqlRowsPerCommit bounds a transaction of the load, so that the undo log
// stays small.
const mysqlRowsPerCommit = 100_000

func mysqlDB(dsn, database string) (*sql.DB, error) {
	cfg, err := source.MySQLConfig(dsn)
	if err != nil {
		return nil, err
	}
	cfg.DBName = database
	cfg.MaxAllowedPacket = 0 // read the server's limit
	c, err := mysql.NewConnector(cfg)
	if err != nil {
		return nil, err
	}
	db := sql.OpenDB(c)
	db.SetMaxOpenConns(1)
	return db, nil
}

func loadMySQL(ctx context.Context, t Target, data *Data, progress io.Writer) (stats LoadStats, err error) {
	if err := Drop(ctx, t); err != nil {
		return stats, err
	}
	admin, err := mysqlDB(t.base, "")
	if err != nil {
		return stats, err
	}
	_, err = admin.ExecContext(ctx, "CREATE DATABASE "+source.MySQL.QuoteIdent(t.name)+
		" CHARACTER SET utf8mb4 COLLATE utf8mb4_bin")
	admin.Close()
	if err != nil {
		return stats, err
	}
	db, err := mysqlDB(t.base, t.name)
	if err != nil {
		return stats, err
	}
	defer func() { err = errors.Join(err, db.Close()) }()
	// The generated rows satisfy every key: a bulk load checks none of them.
	if err := runAll(ctx, db, []string{"SET foreign_key_checks = 0", "SET unique_checks = 0"}); err != nil {
		return stats, err
	}
	tables, indexes, err := ddl("mysql")
	if err != nil {
		return stats, err
	}
	if err := runAll(ctx, db, tables); err != nil {
		return stats, err
	}
	for _, tb := range data.Tables() {
		start := time.Now()
		n, err := insertCommitted(ctx, db, tb)
		if err != nil {
			return stats, fmt.Errorf("filling %s: %w", tb.Name, err)
		}
		stats.Tables = append(stats.Tables, report(progress, t, tb.Name, n, start))
	}
	start := time.Now()
	analyze := "ANALYZE TABLE " + strings.Join(demo.Tables(), ", ")
	create, insert, args := metaStatements(data.SF, question)
	if err := runAll(ctx, db, append(indexes, analyze, create, "SET foreign_key_checks = 1")); err != nil {
		return stats, err
	}
	if _, err := db.ExecContext(ctx, insert, args...); err != nil {
		return stats, err
	}
	stats.Indexes = time.Since(start)
	fmt.Fprintf(progress, "%s: indexes and statistics in %s\n", t.say(), stats.Indexes.Round(time.Millisecond))
	return stats, nil
}

// insertCommitted loads a table in transactions of mysqlRowsPerCommit rows.
func insertCommitted(ctx context.Context, db *sql.DB, tb Table) (int64, error) {
	next, stop := iter.Pull(tb.Rows)
	defer stop()
	var total int64
	for {
		tx, err := db.BeginTx(ctx, nil)
		if err != nil {
			return total, err
		}
		done := false
		chunk := tb
		chunk.Rows = func(yield func([]any) bool) {
			for range mysqlRowsPerCommit {
				row, ok := next()
				if !ok {
					done = true
					return
				}
				if !yield(row) {
					return
				}
			}
		}
		n, err := insertRows(ctx, tx, chunk, mysqlMaxParams)
		total += n
		if err != nil {
			return total, errors.Join(err, tx.Rollback())
		}
		if err := tx.Commit(); err != nil {
			return total, err
		}
		if done {
			return total, nil
		}
	}
}
