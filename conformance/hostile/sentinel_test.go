package hostile

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"math/rand/v2"
	"strings"
	"testing"
	"time"

	"veneer/catalog/source"
	"veneer/catalog/source/sourcetest"
)

// sentinel is a table beside the demo tables that no mapping exposes: a query
// that reaches it has escaped the planner. Writes to it are logged by
// triggers into sentinel_log on every database. Reads are counted by
// PostgreSQL's statistics (pg_stat_user_tables); SQLite cannot show reads
// through database/sql (it has no authorizer there), nor can a MariaDB server
// with userstat and performance_schema off, which the test may not turn on on
// a shared server. Every check also compares the table's rows with what was
// put in, and the test looks for the rows' secret in every answer.
type sentinel struct {
	db *sourcetest.DB
	// conn is the one session that sets the sentinel up and reads it, so that
	// on PostgreSQL pg_stat_force_next_flush applies to its own reads.
	conn *sql.Conn
	// marker is the secret the sentinel's rows hold.
	marker string
	// appName is the application name of veneer's PostgreSQL sessions.
	appName string
	// rows, logged and counts are what the last check saw.
	rows    string
	logged  int
	counts  pgCounts
	checked string
}

// pgCounts are the sentinel's row in pg_stat_user_tables.
type pgCounts struct{ seqScan, idxScan, ins, upd, del int64 }

const sentinelTable = "sentinel_vault"

func newSentinel(t *testing.T, db *sourcetest.DB) *sentinel {
	ctx := context.Background()
	conn, err := db.Admin.Conn(ctx)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { conn.Close() })
	s := &sentinel{db: db, conn: conn, marker: fmt.Sprintf("sentinel-secret-%016x", rand.Uint64()), appName: sourcetest.Name()}
	stmts := []string{
		"CREATE TABLE sentinel_vault (id INTEGER NOT NULL PRIMARY KEY, secret VARCHAR(64) NOT NULL)",
		"CREATE TABLE sentinel_log (what VARCHAR(16) NOT NULL)",
		fmt.Sprintf("INSERT INTO sentinel_vault (id, secret) VALUES (1, '%[1]s-1'), (2, '%[1]s-2'), (3, '%[1]s-3')", s.marker),
	}
	ops := []string{"INSERT", "UPDATE", "DELETE"}
	switch db.Dialect {
	case source.SQLite:
		for _, op := range ops {
			stmts = append(stmts, fmt.Sprintf("CREATE TRIGGER sentinel_%[1]s AFTER %[1]s ON sentinel_vault BEGIN INSERT INTO sentinel_log (what) VALUES ('%[1]s'); END", op))
		}
		s.checked = "write triggers and the rows; SQLite's reads cannot be observed through database/sql (no authorizer), so reads are not checked"
	case source.MySQL:
		for _, op := range ops {
			stmts = append(stmts, fmt.Sprintf("CREATE TRIGGER sentinel_%[1]s AFTER %[1]s ON sentinel_vault FOR EACH ROW INSERT INTO sentinel_log (what) VALUES ('%[1]s')", op))
		}
		var userstat, perf string
		if err := conn.QueryRowContext(ctx, "SELECT @@userstat, @@performance_schema").Scan(&userstat, &perf); err != nil {
			t.Fatal(err)
		}
		s.checked = fmt.Sprintf("write triggers and the rows; reads are not checked: the server has userstat=%s and performance_schema=%s, "+
			"and turning them on would reconfigure a shared server", userstat, perf)
	case source.Postgres:
		stmts = append(stmts,
			"CREATE FUNCTION sentinel_note() RETURNS trigger LANGUAGE plpgsql AS $$ BEGIN INSERT INTO sentinel_log (what) VALUES (TG_OP); RETURN NULL; END $$",
			"CREATE TRIGGER sentinel_write AFTER INSERT OR UPDATE OR DELETE OR TRUNCATE ON sentinel_vault FOR EACH STATEMENT EXECUTE FUNCTION sentinel_note()")
		s.checked = "seq_scan, idx_scan, n_tup_ins, n_tup_upd and n_tup_del of pg_stat_user_tables, a write trigger and the rows"
	}
	for _, q := range stmts {
		if _, err := conn.ExecContext(ctx, q); err != nil {
			t.Fatalf("setting up the sentinel: %s: %v", q, err)
		}
	}
	if err := s.look(ctx); err != nil {
		t.Fatal(err)
	}
	return s
}

// checks says what check looks at.
func (s *sentinel) checks() string { return s.checked }

// look reads what the sentinel is now, and on PostgreSQL its statistics after
// those reads.
func (s *sentinel) look(ctx context.Context) error {
	rows, err := s.conn.QueryContext(ctx, "SELECT id, secret FROM sentinel_vault ORDER BY id")
	if err != nil {
		return fmt.Errorf("reading the sentinel table: %w", err)
	}
	var b strings.Builder
	for rows.Next() {
		var id int
		var secret string
		if err := rows.Scan(&id, &secret); err != nil {
			rows.Close()
			return err
		}
		fmt.Fprintf(&b, "%d=%s;", id, secret)
	}
	if err := errors.Join(rows.Err(), rows.Close()); err != nil {
		return err
	}
	s.rows = b.String()
	if err := s.conn.QueryRowContext(ctx, "SELECT count(*) FROM sentinel_log").Scan(&s.logged); err != nil {
		return fmt.Errorf("reading the sentinel's log: %w", err)
	}
	if s.db.Dialect != source.Postgres {
		return nil
	}
	// The statistics of a session reach the shared statistics when it
	// reports them, at most once a second or when it ends. Force this
	// session's report, which it makes before it says it is ready again.
	if _, err := s.conn.ExecContext(ctx, "SELECT pg_stat_force_next_flush()"); err != nil {
		return err
	}
	s.counts, err = s.pgCounts(ctx)
	return err
}

func (s *sentinel) pgCounts(ctx context.Context) (pgCounts, error) {
	var c pgCounts
	err := s.conn.QueryRowContext(ctx, `SELECT seq_scan, COALESCE(idx_scan, 0), n_tup_ins, n_tup_upd, n_tup_del
		FROM pg_stat_user_tables WHERE schemaname = $1 AND relname = $2`, s.db.Name, sentinelTable).
		Scan(&c.seqScan, &c.idxScan, &c.ins, &c.upd, &c.del)
	if err != nil {
		return c, fmt.Errorf("reading pg_stat_user_tables: %w", err)
	}
	return c, nil
}

// check reports what was done to the sentinel since the last check (or its
// set-up); veneer's sessions must have been closed before.
func (s *sentinel) check(ctx context.Context) error {
	var errs []error
	if s.db.Dialect == source.Postgres {
		now, err := s.pgSettled(ctx)
		if err != nil {
			return err
		}
		if now != s.counts {
			errs = append(errs, fmt.Errorf("pg_stat_user_tables changed from %+v to %+v", s.counts, now))
		}
	}
	rows, logged := s.rows, s.logged
	if err := s.look(ctx); err != nil {
		return errors.Join(append(errs, err)...)
	}
	if s.rows != rows {
		errs = append(errs, fmt.Errorf("its rows changed from %q to %q", rows, s.rows))
	}
	if s.logged != logged {
		errs = append(errs, fmt.Errorf("its triggers logged %d writes", s.logged-logged))
	}
	return errors.Join(errs...)
}

// pgSettled waits until the sessions named appName have ended, which reports
// their statistics, and returns the sentinel's counts once they differ from
// the last check's or a second has passed: a session's report comes a moment
// after it leaves pg_stat_activity.
func (s *sentinel) pgSettled(ctx context.Context) (pgCounts, error) {
	deadline := time.Now().Add(10 * time.Second)
	for {
		var n int
		if err := s.conn.QueryRowContext(ctx, "SELECT count(*) FROM pg_stat_activity WHERE application_name = $1", s.appName).Scan(&n); err != nil {
			return pgCounts{}, err
		}
		if n == 0 {
			break
		}
		if time.Now().After(deadline) {
			return pgCounts{}, fmt.Errorf("%d sessions of veneer are still open 10s after its source was closed", n)
		}
		time.Sleep(20 * time.Millisecond)
	}
	settle := time.Now().Add(time.Second)
	for {
		c, err := s.pgCounts(ctx)
		if err != nil || c != s.counts || time.Now().After(settle) {
			return c, err
		}
		time.Sleep(20 * time.Millisecond)
	}
}

// selfTest shows that check can fail: a deliberate read through a session
// opened as veneer opens its own (PostgreSQL), and a deliberate write.
func (s *sentinel) selfTest(t *testing.T) {
	ctx := context.Background()
	dialect := s.db.Dialect
	if dialect == source.Postgres {
		src := openSource(t, s.db, s.appName)
		rows, err := src.Query(ctx, "SELECT count(*) FROM sentinel_vault")
		if err != nil {
			t.Fatal(err)
		}
		for rows.Next() {
		}
		rows.Close()
		src.Close()
		start := time.Now()
		err = s.check(ctx)
		if err == nil || !strings.Contains(err.Error(), "pg_stat_user_tables") {
			t.Errorf("%s: a deliberate SELECT on the sentinel through a source session went unnoticed: %v", dialect, err)
		} else {
			t.Logf("%s: self-test, a deliberate SELECT through a source session is noticed after %s: %v",
				dialect, time.Since(start).Round(time.Millisecond), err)
		}
	}
	if _, err := s.db.Admin.ExecContext(ctx, "INSERT INTO sentinel_vault (id, secret) VALUES (4, 'written')"); err != nil {
		t.Fatal(err)
	}
	err := s.check(ctx)
	if err == nil || !strings.Contains(err.Error(), "triggers logged") || !strings.Contains(err.Error(), "rows changed") {
		t.Errorf("%s: a deliberate INSERT into the sentinel went unnoticed: %v", dialect, err)
	} else {
		t.Logf("%s: self-test, a deliberate INSERT is noticed: %v", dialect, err)
	}
}
