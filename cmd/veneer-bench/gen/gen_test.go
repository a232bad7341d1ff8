package gen

import (
	"context"
	"crypto/sha256"
	"database/sql"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"veneer/cmd/veneer/demo"
)

// digest hashes every generated row of every table.
func digest(t *testing.T, d *Data) (string, map[string]int) {
	t.Helper()
	h := sha256.New()
	counts := map[string]int{}
	for _, tb := range d.Tables() {
		for row := range tb.Rows {
			if len(row) != len(tb.Columns) {
				t.Fatalf("%s: row has %d values for %d columns", tb.Name, len(row), len(tb.Columns))
			}
			fmt.Fprintf(h, "%s%v\n", tb.Name, row)
			counts[tb.Name]++
		}
	}
	return fmt.Sprintf("%x", h.Sum(nil)), counts
}

// TestDeterministic checks that a scale factor always gives the same rows, and
// that the tables have the sizes SizesAt promises.
func TestDeterministic(t *testing.T) {
	for _, sf := range []float64{0.01, 0.3} {
		a, err := New(sf)
		if err != nil {
			t.Fatal(err)
		}
		b, _ := New(sf)
		da, counts := digest(t, a)
		if db, _ := digest(t, b); da != db {
			t.Errorf("SF %v: two generations differ", sf)
		}
		s := SizesAt(sf)
		want := map[string]int{"site": s.Sites, "turbine": s.Turbines, "technician": s.Technicians,
			"part": s.Parts, "work_order": s.WorkOrders, "inspection": s.Inspections}
		for table, n := range want {
			if counts[table] != n {
				t.Errorf("SF %v: %s has %d rows, want %d", sf, table, counts[table], n)
			}
		}
		// About 1.5 parts per work order in hand or done: a loose bound that
		// catches a broken usage generator.
		if u := counts["part_usage"]; u < s.WorkOrders/2 || u > 3*s.WorkOrders {
			t.Errorf("SF %v: %d part usages for %d work orders", sf, u, s.WorkOrders)
		}
	}
}

// TestSizesInProportion checks SF 1 against the sizes the issue sets (SF 1 ≈
// 10 000 work orders, SF 100 ≈ 1 million).
func TestSizesInProportion(t *testing.T) {
	one, hundred := SizesAt(1), SizesAt(100)
	if one.WorkOrders != 10_000 || hundred.WorkOrders != 1_000_000 {
		t.Errorf("work orders: SF 1 %d, SF 100 %d", one.WorkOrders, hundred.WorkOrders)
	}
	for name, pair := range map[string][2]int{
		"sites": {one.Sites, hundred.Sites}, "turbines": {one.Turbines, hundred.Turbines},
		"technicians": {one.Technicians, hundred.Technicians}, "parts": {one.Parts, hundred.Parts},
		"inspections": {one.Inspections, hundred.Inspections},
	} {
		if pair[1] != 100*pair[0] {
			t.Errorf("%s: SF 1 %d, SF 100 %d: not in proportion", name, pair[0], pair[1])
		}
	}
}

// TestColumnsMatchSchema checks the generated tables against the demo schema:
// same tables in the same order, and every generated column declared.
func TestColumnsMatchSchema(t *testing.T) {
	d, _ := New(0.01)
	tables := d.Tables()
	if names := demo.Tables(); len(names) != len(tables) {
		t.Fatalf("demo has %d tables, generator %d", len(names), len(tables))
	}
	stmts, err := demo.Schema("sqlite")
	if err != nil {
		t.Fatal(err)
	}
	for i, tb := range tables {
		if tb.Name != demo.Tables()[i] {
			t.Errorf("table %d: %s, demo has %s", i, tb.Name, demo.Tables()[i])
		}
		var create string
		for _, s := range stmts {
			if strings.HasPrefix(s, "CREATE TABLE "+tb.Name+" (") {
				create = s
			}
		}
		for _, c := range tb.Columns {
			if !strings.Contains(create, "\n    "+c.Name+" ") {
				t.Errorf("%s.%s is not in the demo schema", tb.Name, c.Name)
			}
		}
	}
}

// TestLoadSQLite loads SF 0.01 into a SQLite file, with its foreign keys checked
// afterwards, and reads the meta row back.
func TestLoadSQLite(t *testing.T) {
	path := filepath.Join(t.TempDir(), "bench.db")
	target, err := TargetFor("sqlite:"+path, 0.01)
	if err != nil {
		t.Fatal(err)
	}
	ctx := context.Background()
	stats, err := Load(ctx, target, 0.01, io.Discard)
	if err != nil {
		t.Fatal(err)
	}
	if !Loaded(ctx, target, 0.01) {
		t.Error("Loaded is false right after a load")
	}
	if Loaded(ctx, target, 0.02) {
		t.Error("Loaded is true for another scale factor")
	}
	db, err := sql.Open("sqlite", path)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	for _, ts := range stats.Tables {
		var n int64
		if err := db.QueryRow("SELECT COUNT(*) FROM " + ts.Table).Scan(&n); err != nil {
			t.Fatal(err)
		}
		if n != ts.Rows {
			t.Errorf("%s: %d rows in the file, %d loaded", ts.Table, n, ts.Rows)
		}
	}
	rows, err := db.Query("PRAGMA foreign_key_check")
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	if rows.Next() {
		t.Error("a foreign key is violated")
	}
	if err := Drop(ctx, target); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(path); !os.IsNotExist(err) {
		t.Errorf("the file is still there after Drop: %v", err)
	}
}

// TestLoadServers loads SF 0.01 into PostgreSQL and MariaDB/MySQL when their
// test DSNs are set, and drops the databases again.
func TestLoadServers(t *testing.T) {
	for _, env := range []string{"VENEER_TEST_POSTGRES", "VENEER_TEST_MYSQL"} {
		t.Run(env, func(t *testing.T) {
			dsn := os.Getenv(env)
			if dsn == "" {
				if os.Getenv("CI") == "true" {
					t.Fatalf("no database: %s is not set", env)
				}
				t.Skipf("no database: %s is not set", env)
			}
			const sf = 0.01
			target, err := TargetFor(dsn, sf)
			if err != nil {
				t.Fatal(err)
			}
			ctx := context.Background()
			stats, err := Load(ctx, target, sf, io.Discard)
			if err != nil {
				t.Fatal(err)
			}
			defer func() {
				if err := Drop(ctx, target); err != nil {
					t.Error(err)
				}
			}()
			if !Loaded(ctx, target, sf) {
				t.Error("Loaded is false right after a load")
			}
			if stats.Rows() == 0 {
				t.Error("no rows loaded")
			}
		})
	}
}
