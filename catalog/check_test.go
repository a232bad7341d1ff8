package catalog_test

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"testing"
	"unicode/utf8"

	"veneer/catalog"
	"veneer/catalog/r2rml"
	"veneer/catalog/source"
	"veneer/catalog/source/sourcetest"
)

// checkMapping has one problem of each kind Check finds; checkProblems says
// where each must be reported (at the first character of a text that occurs
// once in the mapping) and what the message must say. The wording is our own.
const checkMapping = `@prefix rr:  <http://www.w3.org/ns/r2rml#> .
@prefix xsd: <http://www.w3.org/2001/XMLSchema#> .
@prefix wf:  <https://vocab.veneer.example/windfarm#> .
@base <https://data.veneer.example/mapping/> .

<Site> rr:logicalTable [ rr:tableName "site" ] ;
    rr:subjectMap [ rr:template "https://data.veneer.example/site/{code}" ] ;
    rr:predicateObjectMap [ rr:predicate wf:code ; rr:objectMap [ rr:column "code" ; rr:datatype xsd:integer ] ] ;
    rr:predicateObjectMap [ rr:predicate wf:opened ; rr:objectMap [ rr:column "commissioned_on" ; rr:datatype xsd:date ] ] .

<Sites> rr:logicalTable [ rr:tableName "sites" ] ;
    rr:subjectMap [ rr:template "https://data.veneer.example/site/{code}" ] .

<Turbine> rr:logicalTable [ rr:tableName "turbine" ] ;
    rr:subjectMap [ rr:template "https://data.veneer.example/turbine/{serial_no}" ] ;
    rr:predicateObjectMap [ rr:predicate wf:power ; rr:objectMap [ rr:column "rated_power_kw" ; rr:datatype xsd:decimal ] ] ;
    rr:predicateObjectMap [ rr:predicate wf:at ; rr:objectMap [ rr:parentTriplesMap <Site> ;
        rr:joinCondition [ rr:child "site" ; rr:parent "site_id" ] ;
        rr:joinCondition [ rr:child "site_id" ; rr:parent "site_ref" ] ] ] .

<Broken> rr:logicalTable [ rr:sqlQuery "SELECT nosuch FROM turbine" ] ;
    rr:subjectMap [ rr:template "https://data.veneer.example/x/{nosuch}" ] .

<Twice> rr:logicalTable [ rr:sqlQuery "SELECT turbine_id, serial AS turbine_id FROM turbine" ] ;
    rr:subjectMap [ rr:template "https://data.veneer.example/y/{turbine_id}" ] .
`

var checkProblems = []struct {
	at      string
	warning bool
	msg     []string // each must be in the message
}{
	{at: `[ rr:column "code" ; rr:datatype xsd:integer`, warning: true,
		msg: []string{"rr:datatype xsd:integer on column code of type", "ill-typed", "natural datatype is xsd:string"}},
	{at: `"sites"`, msg: []string{"table sites does not exist (the schema has: site, turbine)"}},
	{at: `[ rr:template "https://data.veneer.example/turbine/{serial_no}"`,
		msg: []string{`column "serial_no" is not in table turbine (it has: rated_power_kw, serial, site_id, turbine_id)`}},
	{at: `[ rr:child "site" ;`, msg: []string{`rr:child: column "site" is not in table turbine`}},
	{at: `[ rr:child "site_id" ; rr:parent "site_ref"`, msg: []string{`rr:parent: column "site_ref" is not in table site (it has: code, commissioned_on, site_id)`}},
	{at: `"SELECT nosuch`, msg: []string{"the database rejects the R2RML view", "nosuch"}},
	// MySQL rejects a derived table with two columns of one name; the others
	// run it, and Check finds the repeat (R2RML §5.4).
	{at: `"SELECT turbine_id, serial`, msg: []string{"R2RML view", "turbine_id"}},
}

// TestCheck loads checkMapping and checks it against the same two tables on
// every dialect: every problem must be reported, where it is, and no other.
func TestCheck(t *testing.T) {
	cat, err := r2rml.Load("check.ttl", []byte(checkMapping))
	if err != nil {
		t.Fatal(err)
	}
	sourcetest.ForEach(t, func(t *testing.T, db *sourcetest.DB) {
		db.Exec(t,
			"CREATE TABLE site (site_id INTEGER PRIMARY KEY, code VARCHAR(8) NOT NULL, commissioned_on DATE)",
			"CREATE TABLE turbine (turbine_id INTEGER PRIMARY KEY, serial VARCHAR(20), site_id INTEGER, rated_power_kw INTEGER)")
		src := db.Open(t)
		cols, problems := catalog.Check(context.Background(), src, cat)
		if cols == nil {
			t.Fatal("Check returned no columns")
		}
		if _, err := cols.Lookup(cat.Maps[0].Table, "code"); err != nil {
			t.Errorf("the columns of table site, which could be read, are missing: %v", err)
		}
		for _, p := range problems {
			t.Log(p)
		}
		if len(problems) != len(checkProblems) {
			t.Errorf("got %d problems, want %d", len(problems), len(checkProblems))
		}
		for i, want := range checkProblems {
			line, col := textPos(t, checkMapping, want.at)
			if i >= len(problems) {
				break
			}
			p := problems[i]
			if p.Pos.File != "check.ttl" || p.Pos.Line != line || p.Pos.Col != col || p.Warning != want.warning {
				t.Errorf("problem %d is at %v (warning %v), want check.ttl:%d:%d (warning %v): %v", i+1, p.Pos, p.Warning, line, col, want.warning, p)
			}
			for _, m := range want.msg {
				if !strings.Contains(p.Msg, m) {
					t.Errorf("problem %d: %q does not say %q", i+1, p.Msg, m)
				}
			}
		}
		// ProbeColumns fails with the errors, the warning left out.
		_, err := catalog.ProbeColumns(context.Background(), src, cat)
		var list catalog.ErrorList
		if !errors.As(err, &list) || len(list) != len(checkProblems)-1 {
			t.Errorf("ProbeColumns: got %v, want the %d errors", err, len(checkProblems)-1)
		}
		for _, e := range list {
			if e.Warning {
				t.Errorf("ProbeColumns fails with a warning: %v", e)
			}
		}
	})
}

// textPos is the line and column (both from 1) of the only occurrence of text in src.
func textPos(t *testing.T, src, text string) (int, int) {
	t.Helper()
	i := strings.Index(src, text)
	if i < 0 || strings.Count(src, text) != 1 {
		t.Fatalf("%q does not occur exactly once in the mapping", text)
	}
	before := src[:i]
	return strings.Count(before, "\n") + 1, utf8.RuneCountInString(before[strings.LastIndexByte(before, '\n')+1:]) + 1
}

// TestLookupCase checks how a mapping's column names find the columns of
// each database. A delimited name matches exactly (R2RML §5: SQL
// identifiers). A regular name matches as the database resolves it: in
// PostgreSQL folded to lower case, so a regular Name misses the column
// created as "Name" (W3C RDB2RDF test R2RMLTC0002f); MySQL and SQLite keep
// the case a column was created with, delimited or not, and compare names
// without regard to case, so there it finds it.
func TestLookupCase(t *testing.T) {
	const mapping = `@prefix rr: <http://www.w3.org/ns/r2rml#> .
<http://example.com/m> rr:logicalTable [ rr:tableName "turbine" ] ;
    rr:subjectMap [ rr:template "http://example.com/t/{SerialNo}" ] ;
    rr:predicateObjectMap [ rr:predicate <http://example.com/p> ; rr:objectMap [ rr:column "%s" ] ] .
`
	sourcetest.ForEach(t, func(t *testing.T, db *sourcetest.DB) {
		db.Exec(t, `CREATE TABLE turbine (SerialNo VARCHAR(20), "Name" VARCHAR(20))`)
		src := db.Open(t)
		for _, tt := range []struct {
			column string
			found  bool
		}{
			{`\"Name\"`, true},
			{`\"name\"`, false},
			{"Name", db.Dialect != source.Postgres},
			{"SERIALNO", true},
		} {
			cat, err := r2rml.Load("case.ttl", []byte(fmt.Sprintf(mapping, tt.column)))
			if err != nil {
				t.Fatal(err)
			}
			_, err = catalog.ProbeColumns(context.Background(), src, cat)
			if found := err == nil; found != tt.found {
				t.Errorf("column %s: found %v, want %v (%v)", tt.column, found, tt.found, err)
			}
		}
	})
}
