package demo

import (
	"context"
	"database/sql"
	"errors"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the golden files under testdata")

// buildSQLite builds the demo into a new file and opens it read-only.
func buildSQLite(t *testing.T) *sql.DB {
	t.Helper()
	path := filepath.Join(t.TempDir(), "demo.db")
	if err := BuildSQLite(t.Context(), path); err != nil {
		t.Fatalf("BuildSQLite: %v", err)
	}
	db, err := sql.Open("sqlite", "file:"+path+"?mode=ro")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	return db
}

// sqliteForeignKeys lists the foreign keys of a SQLite database as (table, column,
// parent table, parent column); its one parameter is "table".
const sqliteForeignKeys = `SELECT m.name, f."from", f."table", f."to"
FROM sqlite_master m, pragma_foreign_key_list(m.name) f
WHERE m.type = ? ORDER BY 1, 2`

func TestBuildSQLite(t *testing.T) {
	db := buildSQLite(t)
	q := sqlQuerier(db)
	checkBuilt(t, t.Context(), q, sqliteForeignKeys, "table")
	// SQLite's own check of every foreign key (SQLite documentation, PRAGMA
	// foreign_key_check, from memory): it reports one row per broken reference.
	rows, err := q(t.Context(), "PRAGMA foreign_key_check")
	if err != nil {
		t.Fatal(err)
	}
	if len(rows) != 0 {
		t.Errorf("PRAGMA foreign_key_check reports %d broken references, first %v", len(rows), rows[0])
	}
}

// TestRebuildIdentical builds the demo twice and compares ordered dumps of every
// table; a summary (sizes, checksums, first rows) is kept as a golden file so that a
// change to the generated data shows up in review.
func TestRebuildIdentical(t *testing.T) {
	first := databaseDump(t, t.Context(), sqlQuerier(buildSQLite(t)))
	second := databaseDump(t, t.Context(), sqlQuerier(buildSQLite(t)))
	compareDumps(t, second, first)
	for i := range first {
		if a, b := first[i].checksum(), second[i].checksum(); a != b {
			t.Errorf("table %s: checksum %s, then %s", first[i].name, a, b)
		}
	}
	var sum strings.Builder
	for _, d := range first {
		fmt.Fprintf(&sum, "%s: %d rows, sha256 %s\n", d.name, len(d.lines), d.checksum())
		for _, line := range d.lines[:min(3, len(d.lines))] {
			fmt.Fprintf(&sum, "\t%s\n", line)
		}
	}
	golden(t, "testdata/summary.golden", sum.String())
}

func golden(t *testing.T, path, got string) {
	t.Helper()
	if *update {
		if err := os.WriteFile(path, []byte(got), 0o644); err != nil {
			t.Fatal(err)
		}
		return
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatalf("%v (run go test -update to create it)", err)
	}
	if got != string(want) {
		t.Errorf("%s differs from the data built now (run go test -update and review the diff):\n%s", path, got)
	}
}

// declaredKinds tells the kind of column each declared SQLite type (as schema.sql
// writes it for SQLite) stands for.
var declaredKinds = []struct {
	pattern *regexp.Regexp
	kind    kind
}{
	{regexp.MustCompile(`^(INTEGER|SMALLINT)$`), kindInteger},
	{regexp.MustCompile(`^(VARCHAR\(\d+\)|CHAR\(\d+\)|TEXT)$`), kindText},
	{regexp.MustCompile(`^DECIMAL\(\d+,(\d+)\)$`), kindDecimal},
	{regexp.MustCompile(`^DOUBLE PRECISION$`), kindDouble},
	{regexp.MustCompile(`^BOOLEAN$`), kindBoolean},
	{regexp.MustCompile(`^DATE$`), kindDate},
	{regexp.MustCompile(`^TIMESTAMP$`), kindTimestamp},
	{regexp.MustCompile(`^BLOB$`), kindBinary},
}

// TestSchemaMatchesTables checks schema.sql against the table descriptions the
// generator binds values by: the same tables in the same order, the same columns,
// types of the same kind, the primary keys the other tests order by.
func TestSchemaMatchesTables(t *testing.T) {
	q := sqlQuerier(buildSQLite(t))
	ctx := t.Context()
	rows, err := q(ctx, "SELECT name FROM sqlite_master WHERE type = ? ORDER BY rowid", "table")
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, r := range rows {
		names = append(names, r[0].(string))
	}
	if !slices.Equal(names, Tables()) {
		t.Errorf("schema.sql creates tables %q, Tables() = %q", names, Tables())
	}
	for _, tbl := range tables {
		cols, err := q(ctx, "SELECT name, type, pk FROM pragma_table_info(?) ORDER BY cid", tbl.name)
		if err != nil {
			t.Fatal(err)
		}
		if len(cols) != len(tbl.columns) {
			t.Errorf("table %s: schema.sql has %d columns, tables.go %d", tbl.name, len(cols), len(tbl.columns))
			continue
		}
		pk := make([]string, 0, 2)
		for i, c := range cols {
			name, decl, pkIndex := c[0].(string), c[1].(string), c[2].(int64)
			want := tbl.columns[i]
			if name != want.name {
				t.Errorf("table %s, column %d: schema.sql says %s, tables.go %s", tbl.name, i+1, name, want.name)
			}
			if k, scale := kindOfDeclared(decl); k != want.kind || scale != want.scale {
				t.Errorf("table %s, column %s: declared %s, but tables.go has kind %d scale %d", tbl.name, name, decl, want.kind, want.scale)
			}
			if pkIndex > 0 {
				pk = append(pk, name)
			}
		}
		if !slices.Equal(pk, primaryKeys[tbl.name]) {
			t.Errorf("table %s: primary key %q, want %q", tbl.name, pk, primaryKeys[tbl.name])
		}
	}
}

func kindOfDeclared(decl string) (kind, int) {
	for _, d := range declaredKinds {
		if m := d.pattern.FindStringSubmatch(decl); m != nil {
			scale := 0
			if d.kind == kindDecimal {
				scale, _ = strconv.Atoi(m[1])
			}
			return d.kind, scale
		}
	}
	return 0, 0
}

func TestSchemaDialects(t *testing.T) {
	tests := []struct {
		dialect     string
		has, hasNot []string
	}{
		{"sqlite", []string{"opened_at      TIMESTAMP", "firmware_digest  BLOB"}, []string{"ENGINE", "BYTEA"}},
		{"postgres", []string{"opened_at      TIMESTAMP", "firmware_digest  BYTEA"}, []string{"ENGINE", "BLOB"}},
		{"mysql", []string{"opened_at      DATETIME", "firmware_digest  VARBINARY(16)", ") ENGINE=InnoDB DEFAULT CHARSET=utf8mb4"},
			[]string{"TIMESTAMP", "BYTEA"}},
	}
	for _, tt := range tests {
		t.Run(tt.dialect, func(t *testing.T) {
			stmts, err := Schema(tt.dialect)
			if err != nil {
				t.Fatal(err)
			}
			creates := 0
			for _, s := range stmts {
				if strings.HasPrefix(s, "CREATE TABLE ") {
					creates++
				}
				if strings.ContainsAny(s, "{};") || strings.Contains(s, "--") {
					t.Errorf("statement keeps a slot, a semicolon or a comment:\n%s", s)
				}
			}
			if creates != len(Tables()) {
				t.Errorf("%d CREATE TABLE statements, want %d", creates, len(Tables()))
			}
			all := strings.Join(stmts, "\n")
			for _, s := range tt.has {
				if !strings.Contains(all, s) {
					t.Errorf("schema lacks %q", s)
				}
			}
			for _, s := range tt.hasNot {
				if strings.Contains(all, s) {
					t.Errorf("schema has %q", s)
				}
			}
		})
	}
}

func TestUnknownDialect(t *testing.T) {
	if _, err := Schema("oracle"); err == nil || !strings.Contains(err.Error(), `"oracle"`) {
		t.Errorf("Schema(oracle) error = %v, want one naming the dialect", err)
	}
	ran := false
	exec := func(context.Context, string, ...any) error { ran = true; return nil }
	if err := Build(t.Context(), exec, "oracle"); err == nil || !strings.Contains(err.Error(), `"oracle"`) {
		t.Errorf("Build(oracle) error = %v, want one naming the dialect", err)
	}
	if ran {
		t.Error("Build ran statements for an unknown dialect")
	}
}

func TestBuildReportsExecErrors(t *testing.T) {
	boom := errors.New("disk full")
	calls := 0
	exec := func(_ context.Context, query string, _ ...any) error {
		calls++
		if strings.HasPrefix(query, "INSERT INTO work_order ") {
			return boom
		}
		return nil
	}
	err := Build(t.Context(), exec, "postgres")
	if !errors.Is(err, boom) || !strings.Contains(err.Error(), "work_order") {
		t.Errorf("Build error = %v, want the exec error naming table work_order", err)
	}
	if calls == 0 {
		t.Error("exec was never called")
	}
}

func TestBuildSQLiteRefusesExistingFile(t *testing.T) {
	path := filepath.Join(t.TempDir(), "taken.db")
	if err := os.WriteFile(path, []byte("keep me"), 0o644); err != nil {
		t.Fatal(err)
	}
	if err := BuildSQLite(t.Context(), path); !errors.Is(err, os.ErrExist) {
		t.Errorf("BuildSQLite on an existing file: error = %v, want os.ErrExist", err)
	}
	if b, err := os.ReadFile(path); err != nil || string(b) != "keep me" {
		t.Errorf("existing file changed: %q, %v", b, err)
	}
}

func TestBuildSQLiteRemovesFileOnFailure(t *testing.T) {
	path := filepath.Join(t.TempDir(), "demo.db")
	ctx, cancel := context.WithCancel(t.Context())
	cancel()
	if err := BuildSQLite(ctx, path); !errors.Is(err, context.Canceled) {
		t.Errorf("BuildSQLite with a canceled context: error = %v, want context.Canceled", err)
	}
	if _, err := os.Stat(path); !errors.Is(err, os.ErrNotExist) {
		t.Errorf("the failed build left %s behind (stat: %v)", path, err)
	}
}

func TestInserts(t *testing.T) {
	two := &table{"t", []column{{name: "a", kind: kindInteger}, {name: "b", kind: kindDecimal, scale: 2}}}
	wide := &table{"w", make([]column, 10)}
	rowsOfN := func(n, width int) [][]any {
		rows := make([][]any, n)
		for i := range rows {
			rows[i] = make([]any, width)
			for j := range rows[i] {
				rows[i][j] = int64(i)
			}
		}
		return rows
	}
	tests := []struct {
		name      string
		data      tableData
		dialect   string
		wantStmts int
		// wantFirst is the first statement's text, when given.
		wantFirst string
		wantArgs  []any
	}{
		{"postgres numbers placeholders", tableData{two, [][]any{{int64(1), int64(1250)}, {int64(2), nil}}}, "postgres", 1,
			"INSERT INTO t (a, b) VALUES ($1, $2), ($3, $4)", []any{int64(1), "12.50", int64(2), nil}},
		{"sqlite uses ?", tableData{two, [][]any{{int64(1), int64(-5)}}}, "sqlite", 1,
			"INSERT INTO t (a, b) VALUES (?, ?)", []any{int64(1), "-0.05"}},
		{"no rows, no statement", tableData{two, nil}, "mysql", 0, "", nil},
		// 999 parameters hold 99 rows of 10 columns: 250 rows take three statements.
		{"batches stay under the parameter limit", tableData{wide, rowsOfN(250, 10)}, "mysql", 3, "", nil},
		{"exactly one full batch", tableData{wide, rowsOfN(99, 10)}, "postgres", 1, "", nil},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			d, err := lookupDialect(tt.dialect)
			if err != nil {
				t.Fatal(err)
			}
			stmts := inserts(tt.data, d)
			if len(stmts) != tt.wantStmts {
				t.Fatalf("%d statements, want %d", len(stmts), tt.wantStmts)
			}
			total := 0
			for _, s := range stmts {
				if len(s.args) > maxParams {
					t.Errorf("statement has %d parameters, limit %d", len(s.args), maxParams)
				}
				marks := strings.Count(s.query, "?")
				if d.numbered {
					marks = strings.Count(s.query, "$")
					if !strings.HasSuffix(s.query, "$"+strconv.Itoa(len(s.args))+")") {
						t.Errorf("last placeholder is not $%d: ...%s", len(s.args), s.query[len(s.query)-12:])
					}
				}
				if marks != len(s.args) {
					t.Errorf("%d placeholders for %d arguments", marks, len(s.args))
				}
				total += len(s.args)
			}
			if want := len(tt.data.rows) * len(tt.data.table.columns); total != want {
				t.Errorf("%d arguments in all, want %d", total, want)
			}
			if tt.wantFirst != "" {
				if stmts[0].query != tt.wantFirst {
					t.Errorf("query = %q, want %q", stmts[0].query, tt.wantFirst)
				}
				if !slices.Equal(stmts[0].args, tt.wantArgs) {
					t.Errorf("args = %v, want %v", stmts[0].args, tt.wantArgs)
				}
			}
		})
	}
}

func TestFormatDecimal(t *testing.T) {
	tests := []struct {
		units int64
		scale int
		want  string
	}{
		{125000, 2, "1250.00"},
		{5, 2, "0.05"},
		{-5, 2, "-0.05"},
		{-1012300, 6, "-1.012300"},
		{0, 1, "0.0"},
		{7, 0, "7"},
		{-7, 0, "-7"},
	}
	for _, tt := range tests {
		if got := formatDecimal(tt.units, tt.scale); got != tt.want {
			t.Errorf("formatDecimal(%d, %d) = %q, want %q", tt.units, tt.scale, got, tt.want)
		}
	}
}

// BenchmarkBuildSQLite measures a whole build of the demo file.
func BenchmarkBuildSQLite(b *testing.B) {
	dir := b.TempDir()
	for i := range b.N {
		if err := BuildSQLite(b.Context(), filepath.Join(dir, fmt.Sprintf("demo%d.db", i))); err != nil {
			b.Fatal(err)
		}
	}
}
