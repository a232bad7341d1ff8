package source_test

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"slices"
	"strings"
	"testing"
	"time"

	"veneer/catalog/source"
	"veneer/catalog/source/sourcetest"
)

// TestReadOnly checks that a statement that writes fails on every dialect and
// leaves the table as it was.
func TestReadOnly(t *testing.T) {
	sourcetest.ForEach(t, func(t *testing.T, db *sourcetest.DB) {
		db.Exec(t, "CREATE TABLE turbine (id INTEGER PRIMARY KEY, name VARCHAR(20))",
			"INSERT INTO turbine (id, name) VALUES (1, 'T-01')")
		src := db.Open(t)
		for _, stmt := range []string{
			"INSERT INTO turbine (id, name) VALUES (2, 'T-02')",
			"UPDATE turbine SET name = 'changed'",
			"DELETE FROM turbine",
			"CREATE TABLE intruder (x INTEGER)",
		} {
			if err := run(context.Background(), src, stmt); err == nil {
				t.Errorf("%s: succeeded, want a read-only error", stmt)
			} else {
				t.Logf("%s: %v", stmt, err)
			}
		}
		var n int
		var name string
		if err := db.Admin.QueryRow("SELECT COUNT(*), MAX(name) FROM turbine").Scan(&n, &name); err != nil {
			t.Fatal(err)
		}
		if n != 1 || name != "T-01" {
			t.Errorf("table changed: %d rows, name %q", n, name)
		}
	})
}

// run runs a statement to its end and returns the first error on the way.
func run(ctx context.Context, src source.Source, stmt string) error {
	rows, err := src.Query(ctx, stmt)
	if err != nil {
		return err
	}
	for rows.Next() {
	}
	err = rows.Err()
	if cerr := rows.Close(); err == nil {
		err = cerr
	}
	return err
}

// valueCase is one column of TestValues: its name, the kind its SQL type has,
// and the value of the first row (the second row is all NULL).
type valueCase struct {
	col  string
	kind source.TypeKind
	want any
}

func utc(y int, m time.Month, d, hh, mm, ss, ns int) time.Time {
	return time.Date(y, m, d, hh, mm, ss, ns, time.UTC)
}

// The values every dialect stores the same way. The expected Go values follow
// the contract in source.go; the decimal keeps its scale where the database does.
var commonValues = []valueCase{
	{"i", source.TypeInteger, int64(42)},
	{"big", source.TypeInteger, int64(9007199254740993)}, // 2^53+1: not exact as a float64
	{"d", source.TypeFloat, 1.5},
	{"s", source.TypeString, "Nordsee Ost"},
	{"bin", source.TypeBinary, []byte{0x01, 0x02, 0xff}},
	{"dt", source.TypeDate, utc(2024, 3, 1, 0, 0, 0, 0)},
	{"tm", source.TypeTime, "13:45:30.25"},
	{"ts", source.TypeTimestamp, utc(2024, 3, 1, 13, 45, 30, 0)},
}

var valueTests = map[source.Dialect]struct {
	setup []string
	cols  []valueCase
}{
	source.Postgres: {
		setup: []string{
			`CREATE TABLE vals (id integer PRIMARY KEY, i integer, big bigint, n numeric(10,2),
				d double precision, r real, b boolean, s varchar(20), bin bytea, dt date, tm time,
				ts timestamp, tstz timestamptz)`,
			`INSERT INTO vals VALUES (1, 42, 9007199254740993, -12.5, 1.5, 1.65, true, 'Nordsee Ost',
				'\x0102ff', '2024-03-01', '13:45:30.25', '2024-03-01 13:45:30', '2024-03-01 13:45:30+02')`,
			`INSERT INTO vals (id) VALUES (2)`,
		},
		cols: slices.Concat(commonValues, []valueCase{
			{"r", source.TypeReal, 1.65}, // single precision, read as the shortest decimal
			{"n", source.TypeDecimal, "-12.50"},
			{"b", source.TypeBoolean, true},
			{"tstz", source.TypeTimestampTZ, utc(2024, 3, 1, 11, 45, 30, 0)}}),
	},
	source.MySQL: {
		setup: []string{
			`CREATE TABLE vals (id INT PRIMARY KEY, i INT, big BIGINT, n DECIMAL(10,2), d DOUBLE,
				r FLOAT, b BOOLEAN, s VARCHAR(20), bin VARBINARY(10), dt DATE, tm TIME(2),
				ts DATETIME, tsz TIMESTAMP NULL)`,
			`INSERT INTO vals VALUES (1, 42, 9007199254740993, -12.5, 1.5, 1.65, TRUE, 'Nordsee Ost',
				x'0102ff', '2024-03-01', '13:45:30.25', '2024-03-01 13:45:30', '2024-03-01 13:45:30')`,
			`INSERT INTO vals (id) VALUES (2)`,
		},
		cols: slices.Concat(commonValues, []valueCase{
			{"r", source.TypeReal, 1.65}, // FLOAT is single precision in MySQL
			{"n", source.TypeDecimal, "-12.50"},
			// MySQL's result metadata cannot tell BOOLEAN from TINYINT; see
			// TestMySQLBooleanHint.
			{"b", source.TypeInteger, int64(1)},
			// TIMESTAMP is shown in the session's zone, without one.
			{"tsz", source.TypeTimestamp, utc(2024, 3, 1, 13, 45, 30, 0)}}),
	},
	source.SQLite: {
		setup: []string{
			`CREATE TABLE vals (id INTEGER PRIMARY KEY, i INTEGER, big BIGINT, n NUMERIC(10,2),
				d DOUBLE, r REAL, b BOOLEAN, s VARCHAR(20), bin BLOB, dt DATE, tm TIME,
				ts TIMESTAMP, tstz TIMESTAMPTZ)`,
			`INSERT INTO vals VALUES (1, 42, 9007199254740993, '-12.50', 1.5, 1.65, 1, 'Nordsee Ost',
				x'0102ff', '2024-03-01', '13:45:30.25', '2024-03-01 13:45:30', '2024-03-01T13:45:30+02:00')`,
			`INSERT INTO vals (id) VALUES (2)`,
		},
		cols: slices.Concat(commonValues, []valueCase{
			{"r", source.TypeFloat, 1.65}, // SQLite's REAL is a double
			// NUMERIC affinity stores '-12.50' as the REAL -12.5 (SQLite,
			// "Datatypes In SQLite" §3, from memory; this test shows it): the
			// scale is gone before we read it.
			{"n", source.TypeDecimal, "-12.5"},
			{"b", source.TypeBoolean, true},
			{"tstz", source.TypeTimestampTZ, utc(2024, 3, 1, 11, 45, 30, 0)}}),
	},
}

// TestValues checks the kind and Go value of each type on each dialect, read
// both without bind parameters and with one (MySQL then uses its binary
// protocol, whose values differ from the text protocol's).
func TestValues(t *testing.T) {
	sourcetest.ForEach(t, func(t *testing.T, db *sourcetest.DB) {
		tc := valueTests[db.Dialect]
		db.Exec(t, tc.setup...)
		src := db.Open(t)
		var names []string
		for _, c := range tc.cols {
			names = append(names, c.col)
		}
		list := strings.Join(names, ", ")
		placeholder := "?"
		if db.Dialect == source.Postgres {
			placeholder = "$1"
		}
		for _, q := range []struct {
			name string
			sql  string
			args []any
		}{
			{"no parameters", "SELECT " + list + " FROM vals ORDER BY id", nil},
			{"with a parameter", "SELECT " + list + " FROM vals WHERE id >= " + placeholder + " ORDER BY id", []any{int64(1)}},
		} {
			cols, rows := collect(t, src, q.sql, q.args...)
			if len(rows) != 2 {
				t.Fatalf("%s: %d rows, want 2", q.name, len(rows))
			}
			for i, c := range tc.cols {
				if cols[i].Name != c.col {
					t.Errorf("%s: column %d is named %q, want %q", q.name, i, cols[i].Name, c.col)
				}
				if cols[i].Kind != c.kind {
					t.Errorf("%s: column %s (%s) has kind %s, want %s", q.name, c.col, cols[i].DatabaseType, cols[i].Kind, c.kind)
				}
				if !sameValue(rows[0][i], c.want) {
					t.Errorf("%s: column %s = %#v (%T), want %#v (%T)", q.name, c.col, rows[0][i], rows[0][i], c.want, c.want)
				}
				if rows[1][i] != nil {
					t.Errorf("%s: column %s of the NULL row = %#v, want nil", q.name, c.col, rows[1][i])
				}
			}
		}
	})
}

// sameValue compares normalised values; times must be the same instant and,
// for the zone-less kinds, be in UTC.
func sameValue(got, want any) bool {
	switch w := want.(type) {
	case time.Time:
		g, ok := got.(time.Time)
		return ok && g.Equal(w)
	case []byte:
		g, ok := got.([]byte)
		return ok && bytes.Equal(g, w)
	}
	return got == want
}

// TestTimestampZones checks that zone-less timestamps come back in UTC, and
// that SQLite's zoned ones keep the offset their text has.
func TestTimestampZones(t *testing.T) {
	sourcetest.ForEach(t, func(t *testing.T, db *sourcetest.DB) {
		db.Exec(t, valueTests[db.Dialect].setup...)
		src := db.Open(t)
		_, rows := collect(t, src, "SELECT ts FROM vals WHERE id = 1")
		if ts := rows[0][0].(time.Time); ts.Location() != time.UTC {
			t.Errorf("timestamp in %v, want UTC", ts.Location())
		}
		if db.Dialect != source.SQLite {
			return
		}
		_, rows = collect(t, src, "SELECT tstz FROM vals WHERE id = 1")
		if _, off := rows[0][0].(time.Time).Zone(); off != 2*3600 {
			t.Errorf("timestamptz offset %d s, want 7200 (+02:00)", off)
		}
	})
}

// TestMySQLBooleanHint checks that a Kinds argument turns MySQL's TINYINT(1)
// and BIT(1) into booleans, and that hinted columns are normalised to the hint.
func TestMySQLBooleanHint(t *testing.T) {
	db := sourcetest.New(t, source.MySQL)
	db.Exec(t, "CREATE TABLE flags (id INT PRIMARY KEY, ok BOOLEAN, lit BIT(1))",
		"INSERT INTO flags VALUES (1, TRUE, b'1'), (2, FALSE, b'0'), (3, NULL, NULL)")
	src := db.Open(t)
	for _, args := range [][]any{{source.Kinds{source.TypeOther, source.TypeBoolean, source.TypeBoolean}}, {source.Kinds{0, source.TypeBoolean, source.TypeBoolean}, int64(0)}} {
		q := "SELECT id, ok, lit FROM flags ORDER BY id"
		if len(args) > 1 {
			q = "SELECT id, ok, lit FROM flags WHERE id > ? ORDER BY id"
		}
		cols, rows := collect(t, src, q, args...)
		if cols[0].Kind != source.TypeInteger || cols[1].Kind != source.TypeBoolean || cols[2].Kind != source.TypeBoolean {
			t.Errorf("kinds %s %s %s, want integer boolean boolean", cols[0].Kind, cols[1].Kind, cols[2].Kind)
		}
		want := [][]any{{int64(1), true, true}, {int64(2), false, false}, {int64(3), nil, nil}}
		if fmt.Sprint(rows) != fmt.Sprint(want) {
			t.Errorf("%s: rows %v, want %v", q, rows, want)
		}
	}
}

// TestSQLiteExpressionKinds checks that SQLite expression columns, which have no
// declared type, take the kind of their first value, and that a hint overrides it.
func TestSQLiteExpressionKinds(t *testing.T) {
	db := sourcetest.New(t, source.SQLite)
	db.Exec(t, "CREATE TABLE t (x INTEGER, s TEXT)", "INSERT INTO t VALUES (1, 'a'), (2, 'b')")
	src := db.Open(t)
	cols, rows := collect(t, src, "SELECT x + 1, s || '!', x * 0.5, x > 1 FROM t ORDER BY x")
	wantKinds := []source.TypeKind{source.TypeInteger, source.TypeString, source.TypeFloat, source.TypeInteger}
	for i, k := range wantKinds {
		if cols[i].Kind != k {
			t.Errorf("column %d kind %s, want %s", i, cols[i].Kind, k)
		}
	}
	if fmt.Sprint(rows) != "[[2 a! 0.5 0] [3 b! 1 1]]" {
		t.Errorf("rows %v", rows)
	}
	cols, rows = collect(t, src, "SELECT x > 1 FROM t ORDER BY x", source.Kinds{source.TypeBoolean})
	if cols[0].Kind != source.TypeBoolean || fmt.Sprint(rows) != "[[false] [true]]" {
		t.Errorf("hinted: kind %s rows %v", cols[0].Kind, rows)
	}
}

// TestBindParameters checks that arguments are bound, including text that would
// be SQL if it were spliced into the statement.
func TestBindParameters(t *testing.T) {
	sourcetest.ForEach(t, func(t *testing.T, db *sourcetest.DB) {
		db.Exec(t, "CREATE TABLE site (id INTEGER PRIMARY KEY, name VARCHAR(40))",
			"INSERT INTO site VALUES (1, 'Hornsea'), (2, 'Walney'), (3, 'x'' OR ''1''=''1')")
		src := db.Open(t)
		p1, p2 := "?", "?"
		if db.Dialect == source.Postgres {
			p1, p2 = "$1", "$2"
		}
		q := "SELECT id FROM site WHERE id > " + p1 + " AND name = " + p2
		tests := []struct {
			id   int64
			name string
			want string
		}{
			{0, "Walney", "[[2]]"},
			{2, "Walney", "[]"},
			{0, "x' OR '1'='1", "[[3]]"},
			{0, "' OR '1'='1", "[]"},
		}
		for _, tt := range tests {
			_, rows := collect(t, src, q, tt.id, tt.name)
			if got := fmt.Sprint(rows); got != tt.want {
				t.Errorf("id > %d, name = %q: %s, want %s", tt.id, tt.name, got, tt.want)
			}
		}
	})
}

// cancelTests are a statement that runs for long on each dialect, and a query
// that lists the server's running statements that contain a marker.
var cancelTests = map[source.Dialect]struct{ slow, running string }{
	source.Postgres: {
		"SELECT pg_sleep(60) /* MARK */",
		"SELECT count(*) FROM pg_stat_activity WHERE state = 'active' AND query LIKE '%pg_sleep(60) /* MARK */%' AND query NOT LIKE '%pg_stat_activity%'",
	},
	source.MySQL: {
		"SELECT SLEEP(60) /* MARK */",
		"SELECT count(*) FROM information_schema.processlist WHERE info LIKE '%SLEEP(60) /* MARK */%' AND info NOT LIKE '%processlist%'",
	},
	source.SQLite: {
		// Counts for ever; only an interrupt ends it.
		"WITH RECURSIVE c(x) AS (SELECT 1 UNION ALL SELECT x + 1 FROM c) SELECT count(*) FROM c /* MARK */",
		"",
	},
}

// TestCancel checks that cancelling a query's context ends the statement: the
// call returns an error that wraps the context's, and the server no longer runs
// the statement.
func TestCancel(t *testing.T) {
	sourcetest.ForEach(t, func(t *testing.T, db *sourcetest.DB) {
		src := db.Open(t)
		tc := cancelTests[db.Dialect]
		mark := sourcetest.Name()
		ctx, cancel := context.WithTimeout(context.Background(), 300*time.Millisecond)
		defer cancel()
		done := make(chan error, 1)
		go func() { done <- run(ctx, src, strings.ReplaceAll(tc.slow, "MARK", mark)) }()
		var err error
		select {
		case err = <-done:
		case <-time.After(30 * time.Second):
			t.Fatal("the cancelled statement did not return within 30s")
		}
		if !errors.Is(err, context.DeadlineExceeded) {
			t.Fatalf("error %v does not wrap context.DeadlineExceeded", err)
		}
		if tc.running == "" {
			return
		}
		// The server may take a moment to act on the cancel, but not long: a
		// MariaDB statement whose client has gone runs on for seconds.
		var n int
		for range 20 {
			if err := db.Admin.QueryRow(strings.ReplaceAll(tc.running, "MARK", mark)).Scan(&n); err != nil {
				t.Fatal(err)
			}
			if n == 0 {
				break
			}
			time.Sleep(100 * time.Millisecond)
		}
		if n != 0 {
			t.Errorf("the server still runs the cancelled statement 2s later")
		}
		// The source still works afterwards.
		if _, rows := collect(t, src, "SELECT 1"); len(rows) != 1 {
			t.Errorf("SELECT 1 after the cancel: %v", rows)
		}
	})
}

// TestConnectionsReleased runs more queries than the pool has connections,
// closing each (some before their end), so a leaked connection would block.
func TestConnectionsReleased(t *testing.T) {
	sourcetest.ForEach(t, func(t *testing.T, db *sourcetest.DB) {
		db.Exec(t, "CREATE TABLE part (id INTEGER PRIMARY KEY)", "INSERT INTO part VALUES (1), (2), (3)")
		src := db.Open(t, source.MaxConns(2))
		ctx, cancel := context.WithTimeout(context.Background(), 20*time.Second)
		defer cancel()
		for i := range 10 {
			rows, err := src.Query(ctx, "SELECT id FROM part ORDER BY id")
			if err != nil {
				t.Fatalf("query %d: %v", i, err)
			}
			if i%2 == 0 {
				rows.Next() // stop early
			}
			if err := rows.Close(); err != nil {
				t.Fatalf("close %d: %v", i, err)
			}
			if err := rows.Close(); err != nil {
				t.Fatalf("second close %d: %v", i, err)
			}
		}
	})
}

// collect runs a query and returns the rows' values, failing the test on error.
func collect(t *testing.T, src source.Source, query string, args ...any) ([]source.Column, [][]any) {
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

// TestPostgresText checks which values PostgreSQL's rows hand out as plain
// text (source.TextRows) and that Values still decodes every one of them.
// The text forms are PostgreSQL's output formats (PostgreSQL manual, "Date/Time
// Output" and "Numeric Types"; from memory).
func TestPostgresText(t *testing.T) {
	db := sourcetest.New(t, source.Postgres)
	src := db.Open(t)
	ctx := context.Background()
	rows, err := src.Query(ctx, `SELECT 42::bigint, -7::int, 0::int, 'Nacelle'::text, NULL::int,
		'2024-03-01 11:45:30.5'::timestamp, '2024-03-01 11:45:30'::timestamp, 1.50::numeric, true,
		'2024-03-01 11:45:30+02'::timestamptz`)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	text, ok := rows.(source.TextRows)
	if !ok {
		t.Fatalf("PostgreSQL rows (%T) hand out no text", rows)
	}
	if !rows.Next() {
		t.Fatal(rows.Err())
	}
	want := []struct {
		text  string
		plain bool
		value any
	}{
		{"42", true, int64(42)},
		{"-7", true, int64(-7)},
		{"0", true, int64(0)},
		{"Nacelle", true, "Nacelle"},
		{"", true, nil},
		{"2024-03-01 11:45:30.5", true, time.Date(2024, 3, 1, 11, 45, 30, 5e8, time.UTC)},
		{"2024-03-01 11:45:30", true, time.Date(2024, 3, 1, 11, 45, 30, 0, time.UTC)},
		{"1.50", true, "1.50"},
		{"", false, true},
		{"", false, time.Date(2024, 3, 1, 9, 45, 30, 0, time.UTC)},
	}
	for i, w := range want {
		b, plain := text.Text(i)
		if plain != w.plain || (plain && string(b) != w.text) {
			t.Errorf("column %d: Text = %q, %v; want %q, %v", i, b, plain, w.text, w.plain)
		}
		if plain && w.value == nil && b != nil {
			t.Errorf("column %d: NULL as text %q, want nil bytes", i, b)
		}
	}
	vals := rows.Values()
	for i, w := range want {
		if !sameValue(vals[i], w.value) {
			t.Errorf("column %d: value %#v, want %#v", i, vals[i], w.value)
		}
	}
}
