package sql

import (
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"veneer/catalog"
	"veneer/catalog/source"
)

var update = flag.Bool("update", false, "rewrite the golden files")

func TestPrintGolden(t *testing.T) {
	limit, offset := int64(10), int64(5)
	turbine := &Table{Name: []catalog.Ident{{Name: "maint"}, {Name: "Turbine", Quoted: true}}, Alias: "t1"}
	col := func(a, c string) ColumnRef { return ColumnRef{Table: a, Column: catalog.Ident{Name: c, Quoted: true}} }
	stmts := map[string]Stmt{
		"select": &Select{
			Distinct: true,
			Columns:  []Column{{Expr: col("t1", "serial"), Alias: "c0"}, {Expr: Cast{X: col("t1", "kw"), Type: "TEXT"}, Alias: "c1"}},
			From:     []From{turbine, &Derived{Query: "SELECT * FROM site", Alias: "t2"}},
			Where: And(
				Binary{Op: "=", L: col("t1", "site_id"), R: col("t2", "site_id")},
				Binary{Op: "<", L: col("t1", "model"), R: Param{Value: "V90"}, Exact: true},
				IsNull{X: col("t1", "serial"), Not: true},
				nil,
			),
			Limit:  &limit,
			Offset: &offset,
		},
		"union-offset-only": &Union{
			Selects: []*Select{
				{Columns: []Column{{Expr: Int(1), Alias: "c0"}, {Expr: Cast{X: Null{}, Type: "INT4"}, Alias: "c1"}}, From: []From{turbine}},
				{Columns: []Column{{Expr: Null{}, Alias: "c0"}, {Expr: col("t1", "kw"), Alias: "c1"}}, From: []From{turbine},
					Where: Binary{Op: "=", L: col("t1", "serial"), R: Param{Value: "it's"}, Exact: true}},
			},
			Offset: &offset,
		},
	}
	for name, stmt := range stmts {
		for _, d := range []source.Dialect{source.Postgres, source.MySQL, source.SQLite} {
			text, args := Print(stmt, d)
			got := fmt.Sprintf("%s\n-- args: %#v\n", text, args)
			path := filepath.Join("testdata", name+"."+d.String()+".sql")
			if *update {
				if err := os.WriteFile(path, []byte(got), 0o644); err != nil {
					t.Fatal(err)
				}
				continue
			}
			want, err := os.ReadFile(path)
			if err != nil {
				t.Fatalf("%v (run go test -update to create it)", err)
			}
			if got != string(want) {
				t.Errorf("%s in %s:\ngot:\n%s\nwant:\n%s", name, d, got, want)
			}
		}
	}
}

// TestValuesNeverInText checks the rule that request values only travel as bind
// parameters: a value with SQL metacharacters appears in args, never in the text.
func TestValuesNeverInText(t *testing.T) {
	hostile := `x'); DROP TABLE turbine; --`
	stmt := &Select{
		Columns: []Column{{Expr: Int(1)}},
		From:    []From{&Table{Name: []catalog.Ident{{Name: "turbine"}}, Alias: "t1"}},
		Where:   Binary{Op: "=", L: ColumnRef{Table: "t1", Column: catalog.Ident{Name: "serial"}}, R: Param{Value: hostile}},
	}
	for _, d := range []source.Dialect{source.Postgres, source.MySQL, source.SQLite} {
		text, args := Print(stmt, d)
		if strings.Contains(text, "DROP") || len(args) != 1 || args[0] != hostile {
			t.Errorf("%s: text %q args %#v", d, text, args)
		}
	}
}

func TestQuoteIdent(t *testing.T) {
	// Delimited identifiers double their own quote character (SQL:2008 §5.2 for
	// double quotes; MySQL's backtick rule is common practice, no source).
	if got := source.Postgres.QuoteIdent(`a"b`); got != `"a""b"` {
		t.Errorf("postgres: %s", got)
	}
	if got := source.MySQL.QuoteIdent("a`b"); got != "`a``b`" {
		t.Errorf("mysql: %s", got)
	}
}
