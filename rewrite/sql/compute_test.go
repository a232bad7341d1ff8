package sql

import (
	"testing"

	"veneer/catalog"
	"veneer/catalog/source"
)

// TestMapColumnsReachesSubqueries checks that renaming an outer table reaches
// a correlated sub-query's references to it, inside its WHERE and inside a
// derived table of its FROM, and leaves the sub-query's own tables alone.
func TestMapColumnsReachesSubqueries(t *testing.T) {
	col := func(a, c string) ColumnRef { return ColumnRef{Table: a, Column: catalog.Ident{Name: c, Quoted: true}} }
	inner := &Select{Columns: []Column{{Expr: col("t3", "kw"), Alias: "c0"}},
		From: []From{&Table{Name: []catalog.Ident{{Name: "turbine"}}, Alias: "t3"}}, Where: Binary{Op: ">", L: col("t3", "kw"), R: col("t2", "kw")}}
	sub := &Select{Columns: []Column{{Expr: Int(1)}}, From: []From{&Derived{Stmt: inner, Alias: "d4"}},
		Where: Binary{Op: "=", L: col("d4", "c0"), R: col("t2", "kw")}}
	e := Exists{Stmt: sub, Not: true}
	renamed := MapColumns(e, func(c ColumnRef) ColumnRef {
		if c.Table == "t2" {
			c.Table = "t1"
		}
		return c
	})
	got, _ := Print(&Select{Columns: []Column{{Expr: Int(1)}}, Where: renamed}, source.SQLite)
	want := `SELECT 1 WHERE NOT EXISTS (SELECT 1 FROM (SELECT "t3"."kw" AS "c0" FROM turbine "t3" WHERE ("t3"."kw" > "t1"."kw")) "d4" WHERE ("d4"."c0" = "t1"."kw"))`
	if got != want {
		t.Errorf("got  %s\nwant %s", got, want)
	}
	if before, _ := Print(&Select{Columns: []Column{{Expr: Int(1)}}, Where: e}, source.SQLite); before == got {
		t.Error("MapColumns changed the sub-query it was given instead of a copy")
	}
}

// TestDatePartParams checks that the guards of a date field travel as
// parameters, one per placeholder.
func TestDatePartParams(t *testing.T) {
	x := ColumnRef{Table: "t1", Column: catalog.Ident{Name: "on", Quoted: true}}
	for _, d := range []source.Dialect{source.Postgres, source.MySQL} {
		text, args := Print(&Select{Columns: []Column{{Expr: DatePart{Field: "YEAR", X: x}}}}, d)
		placeholders := 0
		for i := range text {
			if text[i] == '?' || text[i] == '$' {
				placeholders++
			}
		}
		if placeholders != len(args) || len(args) != 1 || args[0] != "0001-01-01" {
			t.Errorf("%s: %s with args %v", d, text, args)
		}
	}
}
