package demo

import (
	"context"
	"crypto/sha256"
	"database/sql"
	"database/sql/driver"
	"encoding/hex"
	"fmt"
	"math/big"
	"strconv"
	"strings"
	"testing"
	"time"
)

// This file holds the checks that every database the demo is built into must pass,
// whatever the dialect: the same rows as the generator made, intact foreign keys, and
// the data properties the example queries and the demo rely on.

// querier runs a query with bind parameters written as ? and returns all its rows.
type querier func(ctx context.Context, query string, args ...any) ([][]any, error)

// sqlQuerier adapts a database/sql handle.
func sqlQuerier(db interface {
	QueryContext(context.Context, string, ...any) (*sql.Rows, error)
}) querier {
	return func(ctx context.Context, query string, args ...any) ([][]any, error) {
		rows, err := db.QueryContext(ctx, query, args...)
		if err != nil {
			return nil, err
		}
		defer rows.Close()
		cols, err := rows.Columns()
		if err != nil {
			return nil, err
		}
		var out [][]any
		for rows.Next() {
			vals := make([]any, len(cols))
			ptrs := make([]any, len(cols))
			for i := range vals {
				ptrs[i] = &vals[i]
			}
			if err := rows.Scan(ptrs...); err != nil {
				return nil, err
			}
			out = append(out, vals)
		}
		return out, rows.Err()
	}
}

// schemaFacts are the keys schema.sql declares: the primary key of every table and
// every foreign key. Each database must report exactly these.
var (
	primaryKeys = map[string][]string{
		"site":       {"site_id"},
		"turbine":    {"turbine_id"},
		"technician": {"technician_id"},
		"part":       {"part_id"},
		"work_order": {"work_order_id"},
		"inspection": {"inspection_id"},
		"part_usage": {"work_order_id", "part_id"},
	}
	foreignKeys = []foreignKey{
		{"inspection", "technician_id", "technician", "technician_id"},
		{"inspection", "turbine_id", "turbine", "turbine_id"},
		{"part_usage", "part_id", "part", "part_id"},
		{"part_usage", "work_order_id", "work_order", "work_order_id"},
		{"turbine", "site_id", "site", "site_id"},
		{"work_order", "technician_id", "technician", "technician_id"},
		{"work_order", "turbine_id", "turbine", "turbine_id"},
	}
)

// foreignKey is one single-column foreign key.
type foreignKey struct{ table, column, parent, parentColumn string }

func (fk foreignKey) String() string {
	return fmt.Sprintf("%s.%s -> %s.%s", fk.table, fk.column, fk.parent, fk.parentColumn)
}

// canonical renders a value read back from a database (or a value Build bound) as
// text that does not depend on the database or driver: drivers return an INTEGER as
// int64, int32 or digits in []byte, a DECIMAL as a string, a float or a pgtype value,
// a DATE as time.Time or text, and so on.
func canonical(c column, v any) (string, error) {
	k := c.kind
	if dv, ok := v.(driver.Valuer); ok {
		var err error
		if v, err = dv.Value(); err != nil {
			return "", err
		}
	}
	if v == nil {
		return "NULL", nil
	}
	if b, ok := v.([]byte); ok && k != kindBinary {
		v = string(b)
	}
	bad := fmt.Errorf("unexpected %T value %v for a column of kind %d", v, v, k)
	switch k {
	case kindInteger:
		switch x := v.(type) {
		case int64, int32, int16, int:
			return fmt.Sprint(x), nil
		case string:
			n, err := strconv.ParseInt(x, 10, 64)
			if err != nil {
				return "", bad
			}
			return strconv.FormatInt(n, 10), nil
		}
	case kindText:
		if s, ok := v.(string); ok {
			return s, nil
		}
	case kindDecimal:
		r := new(big.Rat)
		var ok bool
		switch x := v.(type) {
		case string:
			_, ok = r.SetString(x)
		case float64:
			// SQLite keeps DECIMAL values as REAL or INTEGER; the shortest decimal
			// that reads back as the same float is the value that was stored.
			_, ok = r.SetString(strconv.FormatFloat(x, 'f', -1, 64))
		case int64:
			r.SetInt64(x)
			ok = true
		}
		if ok {
			return r.FloatString(c.scale), nil
		}
	case kindDouble:
		switch x := v.(type) {
		case float64:
			return strconv.FormatFloat(x, 'g', -1, 64), nil
		case string:
			f, err := strconv.ParseFloat(x, 64)
			if err != nil {
				return "", bad
			}
			return strconv.FormatFloat(f, 'g', -1, 64), nil
		}
	case kindBoolean:
		switch x := v.(type) {
		case bool:
			return strconv.FormatBool(x), nil
		case int64:
			if x == 0 || x == 1 {
				return strconv.FormatBool(x == 1), nil
			}
		case string:
			switch x {
			case "0", "false":
				return "false", nil
			case "1", "true":
				return "true", nil
			}
		}
	case kindDate, kindTimestamp:
		layout := dateLayout
		if k == kindTimestamp {
			layout = timestampLayout
		}
		switch x := v.(type) {
		case time.Time:
			return x.Format(layout), nil
		case string:
			t, err := time.Parse(layout, x)
			if err != nil {
				return "", bad
			}
			return t.Format(layout), nil
		}
	case kindBinary:
		if b, ok := v.([]byte); ok {
			return hex.EncodeToString(b), nil
		}
	}
	return "", bad
}

// dumpTable is one table's rows in canonical form, one tab-separated line per row, in
// primary key order.
type dumpTable struct {
	name  string
	lines []string
}

// generatedDump is what Build loads, in canonical form.
func generatedDump(t *testing.T) []dumpTable {
	t.Helper()
	var dump []dumpTable
	for _, data := range generate() {
		d := dumpTable{name: data.table.name}
		for _, row := range data.rows {
			d.lines = append(d.lines, canonicalRow(t, data.table, row, func(c column, v any) any { return bind(c, v) }))
		}
		dump = append(dump, d)
	}
	return dump
}

// databaseDump reads every demo table back from a database, in canonical form.
func databaseDump(t *testing.T, ctx context.Context, q querier) []dumpTable {
	t.Helper()
	var dump []dumpTable
	for _, tbl := range tables {
		cols := strings.TrimSuffix(strings.TrimPrefix(tbl.columnList(), "("), ")")
		rows, err := q(ctx, "SELECT "+cols+" FROM "+tbl.name+" ORDER BY "+strings.Join(primaryKeys[tbl.name], ", "))
		if err != nil {
			t.Fatalf("reading table %s: %v", tbl.name, err)
		}
		d := dumpTable{name: tbl.name}
		for _, row := range rows {
			d.lines = append(d.lines, canonicalRow(t, tbl, row, func(_ column, v any) any { return v }))
		}
		dump = append(dump, d)
	}
	return dump
}

func canonicalRow(t *testing.T, tbl *table, row []any, value func(column, any) any) string {
	t.Helper()
	fields := make([]string, len(row))
	for i, v := range row {
		s, err := canonical(tbl.columns[i], value(tbl.columns[i], v))
		if err != nil {
			t.Fatalf("table %s, column %s: %v", tbl.name, tbl.columns[i].name, err)
		}
		fields[i] = s
	}
	return strings.Join(fields, "\t")
}

// checksum is the SHA-256 of a table's dump.
func (d dumpTable) checksum() string {
	h := sha256.New()
	for _, line := range d.lines {
		h.Write([]byte(line + "\n"))
	}
	return hex.EncodeToString(h.Sum(nil))
}

// compareDumps reports the first difference between each pair of tables.
func compareDumps(t *testing.T, got, want []dumpTable) {
	t.Helper()
	if len(got) != len(want) {
		t.Fatalf("got %d tables, want %d", len(got), len(want))
	}
	for i := range want {
		g, w := got[i], want[i]
		if g.name != w.name {
			t.Errorf("table %d is %s, want %s", i, g.name, w.name)
			continue
		}
		if len(g.lines) != len(w.lines) {
			t.Errorf("table %s has %d rows, want %d", g.name, len(g.lines), len(w.lines))
			continue
		}
		for j := range w.lines {
			if g.lines[j] != w.lines[j] {
				t.Errorf("table %s, row %d:\n got  %q\n want %q", g.name, j+1, g.lines[j], w.lines[j])
				break
			}
		}
	}
}

// checkForeignKeys checks that the database declares exactly the schema's foreign
// keys (MySQL, for one, silently drops some spellings of them) and that no row
// points at a missing parent.
func checkForeignKeys(t *testing.T, ctx context.Context, q querier, listQuery string, args ...any) {
	t.Helper()
	rows, err := q(ctx, listQuery, args...)
	if err != nil {
		t.Fatalf("listing foreign keys: %v", err)
	}
	var got []string
	for _, r := range rows {
		fk := foreignKey{}
		for i, dst := range []*string{&fk.table, &fk.column, &fk.parent, &fk.parentColumn} {
			s, err := canonical(column{kind: kindText}, r[i])
			if err != nil {
				t.Fatalf("listing foreign keys: %v", err)
			}
			*dst = s
		}
		got = append(got, fk.String())
	}
	var want []string
	for _, fk := range foreignKeys {
		want = append(want, fk.String())
	}
	if strings.Join(got, "\n") != strings.Join(want, "\n") {
		t.Errorf("foreign keys:\n got  %q\n want %q", got, want)
	}
	for _, fk := range foreignKeys {
		n := count(t, ctx, q, "SELECT COUNT(*) FROM "+fk.table+" c WHERE c."+fk.column+" IS NOT NULL AND NOT EXISTS"+
			" (SELECT 1 FROM "+fk.parent+" p WHERE p."+fk.parentColumn+" = c."+fk.column+")")
		if n != 0 {
			t.Errorf("%s: %d rows point at no parent row", fk, n)
		}
	}
}

func count(t *testing.T, ctx context.Context, q querier, query string, args ...any) int64 {
	t.Helper()
	rows, err := q(ctx, query, args...)
	if err != nil {
		t.Fatalf("%s: %v", query, err)
	}
	if len(rows) != 1 || len(rows[0]) != 1 {
		t.Fatalf("%s: got %d rows, want one count", query, len(rows))
	}
	s, err := canonical(column{kind: kindInteger}, rows[0][0])
	if err != nil {
		t.Fatalf("%s: %v", query, err)
	}
	n, _ := strconv.ParseInt(s, 10, 64)
	return n
}

// tableSizes are the sizes the demo is designed to have. Part usage follows from
// random draws per work order; the design aims at about 3000 rows.
var tableSizes = []struct {
	table    string
	min, max int64
}{
	{"site", 6, 6},
	{"turbine", 120, 120},
	{"technician", 40, 40},
	{"part", 150, 150},
	{"work_order", 2000, 2000},
	{"inspection", 1500, 1500},
	{"part_usage", 2500, 3500},
}

func checkSizes(t *testing.T, ctx context.Context, q querier) {
	t.Helper()
	for _, ts := range tableSizes {
		n := count(t, ctx, q, "SELECT COUNT(*) FROM "+ts.table)
		if n < ts.min || n > ts.max {
			t.Errorf("table %s has %d rows, want %d to %d", ts.table, n, ts.min, ts.max)
		}
	}
}

// properties are facts about the data that the demo relies on: the example queries
// need open, unassigned and failed records; the text must exercise quoting and
// non-ASCII characters all the way to the SPARQL results.
// many stands for "no upper bound" in properties.
const many = 1 << 62

var properties = []struct {
	name     string
	query    string
	args     []any
	min, max int64
}{
	{"unassigned work orders", "SELECT COUNT(*) FROM work_order WHERE technician_id IS NULL", nil, 1, many},
	{"closed_at set exactly when closed or cancelled",
		"SELECT COUNT(*) FROM work_order WHERE (closed_at IS NULL) <> (status IN (?, ?))",
		[]any{"open", "in_progress"}, 0, 0},
	{"closed before opened", "SELECT COUNT(*) FROM work_order WHERE closed_at < opened_at", nil, 0, 0},
	{"work opened after the end of the data", "SELECT COUNT(*) FROM work_order WHERE opened_at >= ?",
		[]any{dataEnd.Format(timestampLayout)}, 0, 0},
	{"open high or critical work orders", "SELECT COUNT(*) FROM work_order WHERE closed_at IS NULL AND priority IN (?, ?)",
		[]any{"high", "critical"}, 1, many},
	{"descriptions with an apostrophe", "SELECT COUNT(*) FROM work_order WHERE description LIKE ?", []any{"%'%"}, 1, many},
	{"descriptions with a double quote", "SELECT COUNT(*) FROM work_order WHERE description LIKE ?", []any{`%"%`}, 1, many},
	{"descriptions with a non-ASCII site name", "SELECT COUNT(*) FROM work_order WHERE description LIKE ?", []any{"%Ringkøbing%"}, 1, many},
	{"site names with ø", "SELECT COUNT(*) FROM site WHERE name LIKE ?", []any{"%ø%"}, 1, 1},
	{"technician names with an apostrophe", "SELECT COUNT(*) FROM technician WHERE full_name LIKE ?", []any{"%'%"}, 1, many},
	{"part names with a double quote", "SELECT COUNT(*) FROM part WHERE name LIKE ?", []any{`%"%`}, 1, many},
	{"part numbers with a slash", "SELECT COUNT(*) FROM part WHERE part_number LIKE ?", []any{"%/%"}, 1, many},
	{"failed inspections", "SELECT COUNT(*) FROM inspection WHERE passed = ?", []any{false}, 1, many},
	{"passed inspections", "SELECT COUNT(*) FROM inspection WHERE passed = ?", []any{true}, 1, many},
	{"failed inspections without notes", "SELECT COUNT(*) FROM inspection WHERE passed = ? AND notes IS NULL", []any{false}, 0, 0},
	{"inspections without notes", "SELECT COUNT(*) FROM inspection WHERE notes IS NULL", nil, 1, many},
	{"turbines without a firmware digest", "SELECT COUNT(*) FROM turbine WHERE firmware_digest IS NULL", nil, 1, many},
	{"firmware digests not 16 bytes long", "SELECT COUNT(*) FROM turbine WHERE LENGTH(firmware_digest) <> ?", []any{16}, 0, 0},
	{"parts used by open or cancelled work",
		"SELECT COUNT(*) FROM part_usage u JOIN work_order w ON w.work_order_id = u.work_order_id WHERE w.status IN (?, ?)",
		[]any{"open", "cancelled"}, 0, 0},
}

func checkProperties(t *testing.T, ctx context.Context, q querier) {
	t.Helper()
	for _, p := range properties {
		if n := count(t, ctx, q, p.query, p.args...); n < p.min || n > p.max {
			t.Errorf("%s: %d rows, want %d to %d", p.name, n, p.min, p.max)
		}
	}
}

// checkBuilt runs every check on a database that Build has filled.
func checkBuilt(t *testing.T, ctx context.Context, q querier, fkListQuery string, fkArgs ...any) {
	t.Helper()
	checkSizes(t, ctx, q)
	compareDumps(t, databaseDump(t, ctx, q), generatedDump(t))
	checkForeignKeys(t, ctx, q, fkListQuery, fkArgs...)
	checkProperties(t, ctx, q)
}
