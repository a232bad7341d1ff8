package r2rml

import (
	"errors"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"unicode/utf8"

	"veneer/catalog"
	"veneer/catalog/rdf"
)

var update = flag.Bool("update", false, "rewrite the golden files under testdata/")

const header = `@prefix rr: <http://www.w3.org/ns/r2rml#> .
@prefix wf: <http://example.com/wind/> .
@prefix xsd: <http://www.w3.org/2001/XMLSchema#> .
@base <http://example.com/wind/mapping/> .
`

// marker is put in a test mapping where the error is expected; it is removed
// before the mapping is loaded.
const marker = "‸"

// markedPos removes the marker from src and returns its line and column.
func markedPos(t *testing.T, src string) (string, int, int) {
	t.Helper()
	i := strings.Index(src, marker)
	if i < 0 {
		t.Fatalf("no %s marker in the test mapping", marker)
	}
	before := src[:i]
	line := strings.Count(before, "\n") + 1
	col := utf8.RuneCountInString(before[strings.LastIndexByte(before, '\n')+1:]) + 1
	return before + src[i+len(marker):], line, col
}

func TestLoadErrors(t *testing.T) {
	// Each mapping breaks one rule of R2RML (the section is named beside it);
	// the marker shows where the error must point. Wording is our own.
	tests := []struct {
		name, src, msg string
	}{
		{"missing logical table (§6)", `‸<tm> rr:subjectMap [ rr:template "http://ex/{id}" ] .`,
			"triples map <http://example.com/wind/mapping/tm> has no rr:logicalTable"},
		{"both tableName and sqlQuery (§5)", `<tm> rr:logicalTable [ rr:tableName "site"; ‸rr:sqlQuery "SELECT 1" ]; rr:subject wf:x .`,
			"logical table has both rr:tableName (line 5) and rr:sqlQuery"},
		{"logical table with neither (§5)", `<tm> rr:logicalTable ‸[ rr:sqlVersion rr:SQL2008 ]; rr:subject wf:x .`,
			"logical table has neither rr:tableName nor rr:sqlQuery"},
		{"table name is not a string (§5.1)", `<tm> rr:logicalTable [ rr:tableName ‸wf:site ]; rr:subject wf:x .`,
			"rr:tableName needs a string literal, found <http://example.com/wind/site>"},
		{"malformed table name (§5.1)", `<tm> rr:logicalTable [ rr:tableName ‸"\"site" ]; rr:subject wf:x .`,
			"unterminated delimited identifier"},
		{"sqlVersion on a table (§5.2)", `<tm> rr:logicalTable [ rr:tableName "site"; ‸rr:sqlVersion rr:SQL2008 ]; rr:subject wf:x .`,
			"rr:sqlVersion only applies to an R2RML view"},
		{"unknown SQL version (§5.2)", `<tm> rr:logicalTable [ rr:sqlQuery "SELECT 1 AS a"; rr:sqlVersion ‸rr:SQL1979 ]; rr:subject wf:x .`,
			"rr:SQL1979 is not a known SQL version identifier"},
		{"subject map with termType Literal (§7.4)", `<tm> rr:logicalTable [ rr:tableName "site" ];
  rr:subjectMap [ rr:column "code"; rr:termType ‸rr:Literal ] .`,
			"a subject map cannot have rr:termType rr:Literal"},
		{"predicate map with termType BlankNode (§7.4)", `<tm> rr:logicalTable [ rr:tableName "site" ]; rr:subject wf:x;
  rr:predicateObjectMap [ rr:predicateMap [ rr:column "p"; rr:termType ‸rr:BlankNode ]; rr:object 1 ] .`,
			"a predicate map cannot have rr:termType rr:BlankNode"},
		{"unknown term type (§7.4)", `<tm> rr:logicalTable [ rr:tableName "site" ]; rr:subjectMap [ rr:column "c"; rr:termType ‸rr:Literall ] .`,
			"rr:termType must be rr:IRI, rr:BlankNode or rr:Literal, found rr:Literall"},
		{"unclosed template brace (§7.4)", `<tm> rr:logicalTable [ rr:tableName "site" ]; rr:subjectMap [ rr:template ‸"http://ex/{site_id" ] .`,
			`rr:template: template "http://ex/{site_id", character 11: '{' is never closed`},
		{"stray closing brace (§7.4)", `<tm> rr:logicalTable [ rr:tableName "site" ]; rr:subjectMap [ rr:template ‸"http://ex/site_id}" ] .`,
			"'}' without a matching '{'"},
		{"language and datatype (§7.7)", `<tm> rr:logicalTable [ rr:tableName "site" ]; rr:subject wf:x;
  rr:predicateObjectMap [ rr:predicate wf:name; rr:objectMap [ rr:column "name"; rr:language "en"; ‸rr:datatype xsd:string ] ] .`,
			"rr:language (line 6) and rr:datatype cannot both be given"},
		{"invalid language tag (§7.7)", `<tm> rr:logicalTable [ rr:tableName "site" ]; rr:subject wf:x;
  rr:predicateObjectMap [ rr:predicate wf:name; rr:objectMap [ rr:column "name"; rr:language ‸"english" ] ] .`,
			`rr:language "english" is not a valid language tag`},
		{"datatype on an IRI map (§7.7)", `<tm> rr:logicalTable [ rr:tableName "site" ]; rr:subject wf:x;
  rr:predicateObjectMap [ rr:predicate wf:p; rr:objectMap [ rr:template "http://ex/{a}"; rr:termType rr:IRI; ‸rr:datatype xsd:string ] ] .`,
			"rr:datatype only applies to a term map that produces literals; this one has rr:termType rr:IRI"},
		{"language on a constant (§7.7)", `<tm> rr:logicalTable [ rr:tableName "site" ]; rr:subject wf:x;
  rr:predicateObjectMap [ rr:predicate wf:p; rr:objectMap [ rr:constant "x"; ‸rr:language "en" ] ] .`,
			"rr:language does not apply to a constant"},
		{"unknown rr: property (§3)", `<tm> rr:logicalTable [ ‸rr:tablename "site" ]; rr:subject wf:x .`,
			"unknown R2RML property rr:tablename (did you mean rr:tableName?)"},
		{"unknown rr: class (§3)", `<tm> a ‸rr:TripleMap; rr:logicalTable [ rr:tableName "site" ]; rr:subject wf:x .`,
			"unknown R2RML class rr:TripleMap"},
		{"property in the wrong place (§6.1)", `<tm> rr:logicalTable [ rr:tableName "site" ]; rr:subject wf:x;
  rr:predicateObjectMap [ rr:predicate wf:p; rr:objectMap [ rr:column "c"; ‸rr:class wf:Site ] ] .`,
			"rr:class is not allowed on an object map (it belongs on a subject map)"},
		{"wrongly typed resource (§3)", `<tm> rr:logicalTable [ rr:tableName "site" ]; rr:subjectMap [ a ‸rr:ObjectMap; rr:column "c" ] .`,
			"is typed rr:ObjectMap but is used as a subject map"},
		{"no subject map (§6)", `‸<tm> rr:logicalTable [ rr:tableName "site" ] .`,
			"has no subject map (rr:subjectMap or rr:subject)"},
		{"two subject maps (§6)", `<tm> rr:logicalTable [ rr:tableName "site" ]; rr:subject wf:x;
  ‸rr:subjectMap [ rr:template "http://ex/{id}" ] .`,
			"has more than one subject map (another one is at line 5)"},
		{"term map without value (§7)", `<tm> rr:logicalTable [ rr:tableName "site" ]; rr:subjectMap ‸[ rr:class wf:Site ] .`,
			"subject map needs one of rr:constant, rr:column or rr:template"},
		{"term map with two values (§7)", `<tm> rr:logicalTable [ rr:tableName "site" ]; rr:subjectMap ‸[ rr:column "a"; rr:template "http://ex/{b}" ] .`,
			"subject map has rr:column and rr:template; give only one of them"},
		{"literal subject constant (§7.1)", `<tm> rr:logicalTable [ rr:tableName "site" ]; rr:subject ‸"Kelda" .`,
			`the constant of a subject map must be an IRI, found the literal "Kelda"`},
		{"blank node constant (§7.1)", `<tm> rr:logicalTable [ rr:tableName "site" ]; rr:subject wf:x;
  rr:predicateObjectMap [ rr:predicate wf:p; rr:object ‸_:b ] .`,
			"a blank node cannot be a constant"},
		{"bad column name (§7.3)", `<tm> rr:logicalTable [ rr:tableName "site" ]; rr:subjectMap [ rr:column ‸"site id" ] .`,
			`rr:column: SQL name "site id": "site id" is not a regular identifier`},
		{"predicate-object map without object (§6.3)", `<tm> rr:logicalTable [ rr:tableName "site" ]; rr:subject wf:x;
  rr:predicateObjectMap ‸[ rr:predicate wf:p ] .`,
			"predicate-object map has no object (rr:object or rr:objectMap)"},
		{"missing parent triples map (§8)", `<tm> rr:logicalTable [ rr:tableName "turbine" ]; rr:subject wf:x;
  rr:predicateObjectMap [ rr:predicate wf:site; rr:objectMap [ rr:parentTriplesMap ‸<SiteMap> ] ] .`,
			"rr:parentTriplesMap <http://example.com/wind/mapping/SiteMap>: there is no triples map with that name"},
		{"different parent table needs a join (§8)", `<site> rr:logicalTable [ rr:tableName "site" ]; rr:subjectMap [ rr:template "http://ex/site/{site_id}" ] .
<tm> rr:logicalTable [ rr:tableName "turbine" ]; rr:subject wf:x;
  rr:predicateObjectMap [ rr:predicate wf:site; rr:objectMap ‸[ rr:parentTriplesMap <site> ] ] .`,
			"referencing object map has no rr:joinCondition, but its parent triples map <http://example.com/wind/mapping/site> reads table site, not table turbine"},
		{"join without parent column (§8.1)", `<site> rr:logicalTable [ rr:tableName "site" ]; rr:subjectMap [ rr:template "http://ex/site/{site_id}" ] .
<tm> rr:logicalTable [ rr:tableName "turbine" ]; rr:subject wf:x;
  rr:predicateObjectMap [ rr:predicate wf:site; rr:objectMap [ rr:parentTriplesMap <site>; rr:joinCondition ‸[ rr:child "site_id" ] ] ] .`,
			"join condition has no rr:parent"},
		{"term map property on a referencing object map (§8)", `<site> rr:logicalTable [ rr:tableName "site" ]; rr:subjectMap [ rr:template "http://ex/site/{site_id}" ] .
<tm> rr:logicalTable [ rr:tableName "site" ]; rr:subject wf:x;
  rr:predicateObjectMap [ rr:predicate wf:site; rr:objectMap [ rr:parentTriplesMap <site>; ‸rr:column "x" ] ] .`,
			"rr:column is not allowed on a referencing object map"},
		{"graph map producing literals (§9)", `<tm> rr:logicalTable [ rr:tableName "site" ];
  rr:subjectMap [ rr:template "http://ex/{id}"; rr:graphMap [ rr:column "g"; rr:termType ‸rr:Literal ] ] .`,
			"a graph map cannot have rr:termType rr:Literal"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			src, line, col := markedPos(t, header+tt.src+"\n")
			_, err := Load("m.ttl", []byte(src))
			var list ErrorList
			if !errors.As(err, &list) {
				t.Fatalf("got %v, want an ErrorList", err)
			}
			for _, e := range list {
				if e.Pos.Line == line && e.Pos.Col == col && strings.Contains(e.Msg, tt.msg) {
					if e.Pos.File != "m.ttl" {
						t.Errorf("error in file %q, want m.ttl", e.Pos.File)
					}
					return
				}
			}
			t.Errorf("want an error at %d:%d containing %q; got:\n%s", line, col, tt.msg, joinErrors(list))
		})
	}
}

func joinErrors(l ErrorList) string {
	var b strings.Builder
	for _, e := range l {
		b.WriteString(e.Error())
		b.WriteByte('\n')
	}
	return b.String()
}

func TestLoadReportsEveryError(t *testing.T) {
	src := header + `<a> rr:logicalTable [ rr:tableName "site" ] .
<b> rr:subject wf:b .
`
	_, err := Load("m.ttl", []byte(src))
	var list ErrorList
	if !errors.As(err, &list) || len(list) != 2 {
		t.Fatalf("want two errors, got %v", err)
	}
	// Sorted by position: <a> (line 5) before <b> (line 6).
	if list[0].Pos.Line != 5 || list[1].Pos.Line != 6 {
		t.Errorf("errors out of order:\n%s", joinErrors(list))
	}
	if !strings.HasPrefix(err.Error(), "m.ttl:5:1: triples map") || !strings.HasSuffix(err.Error(), "(and 1 more errors)") {
		t.Errorf("Error() = %q", err)
	}
}

func TestLoadSyntaxError(t *testing.T) {
	_, err := Load("m.ttl", []byte(header+"<tm> rr:logicalTable [ rr:tableName \"site\" ; .\n"))
	var se *rdf.SyntaxError
	if !errors.As(err, &se) || se.Name != "m.ttl" || se.Pos.Line != 5 {
		t.Fatalf("want a Turtle syntax error at line 5 of m.ttl, got %v", err)
	}
}

func TestLoadEmpty(t *testing.T) {
	_, err := Load("empty.ttl", []byte(header))
	if err == nil || !strings.Contains(err.Error(), "empty.ttl: no triples maps found") {
		t.Errorf("got %v, want a 'no triples maps' error", err)
	}
}

// TestLoadGolden loads a mapping of the wind-farm demo schema that uses every
// R2RML feature and compares the catalog, printed, with a reviewed golden file.
func TestLoadGolden(t *testing.T) {
	in := filepath.Join("testdata", "windfarm.ttl")
	cat, err := LoadFiles(in)
	if err != nil {
		t.Fatal(err)
	}
	checkGolden(t, filepath.Join("testdata", "windfarm.golden"), dump(cat))
}

// checkGolden compares got with the golden file at path, which go test -update
// rewrites.
func checkGolden(t *testing.T, path, got string) {
	t.Helper()
	if *update {
		if err := os.WriteFile(path, []byte(got), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if got != string(want) {
		t.Errorf("output differs from %s (run go test -update and read the diff):\n%s", path, got)
	}
}

func TestLoadFilesAcrossDocuments(t *testing.T) {
	sites := filepath.Join("testdata", "sites.ttl")
	turbines := filepath.Join("testdata", "turbines.ttl")
	cat, err := LoadFiles(sites, turbines)
	if err != nil {
		t.Fatal(err)
	}
	if len(cat.Maps) != 2 {
		t.Fatalf("got %d triples maps, want 2", len(cat.Maps))
	}
	site, turbine := cat.Maps[0], cat.Maps[1]
	if site.Pos.File != sites || turbine.Pos.File != turbines {
		t.Errorf("maps come from %s and %s", site.Pos.File, turbine.Pos.File)
	}
	// Both files describe their subject map as _:subject; blank nodes are local
	// to their document (RDF 1.1 Concepts §3.4), so the maps must differ.
	if site.Subject.Template.Parts[0].Text == turbine.Subject.Template.Parts[0].Text {
		t.Errorf("the subject maps of both files were merged: %+v", turbine.Subject)
	}
	ref := turbine.PredicateObjects[0].Objects[0].Ref
	if ref == nil || ref.Parent != site {
		t.Fatalf("the turbine map's reference does not point at the site map: %+v", ref)
	}
	if ref.Pos.File != turbines {
		t.Errorf("reference position %v, want in %s", ref.Pos, turbines)
	}
	// Alone, the turbines file names a parent that does not exist.
	if _, err := LoadFiles(turbines); err == nil || !strings.Contains(err.Error(), "there is no triples map with that name") {
		t.Errorf("loading %s alone: got %v", turbines, err)
	}
}

func FuzzLoad(f *testing.F) {
	for _, name := range []string{"windfarm.ttl", "sites.ttl", "turbines.ttl"} {
		src, err := os.ReadFile(filepath.Join("testdata", name))
		if err != nil {
			f.Fatal(err)
		}
		f.Add(src)
	}
	f.Fuzz(func(t *testing.T, src []byte) {
		cat, err := Load("fuzz.ttl", src)
		if err == nil && len(cat.Maps) == 0 {
			t.Fatal("a catalog without triples maps was accepted")
		}
	})
}

// dump prints a catalog, one element a line, for golden files.
func dump(cat *catalog.Catalog) string {
	var b strings.Builder
	for _, tm := range cat.Maps {
		fmt.Fprintf(&b, "triples map %s @%d:%d\n", tm.Name, tm.Pos.Line, tm.Pos.Col)
		if tm.Table.Query != "" {
			fmt.Fprintf(&b, "  query %q versions %v @%d:%d\n", tm.Table.Query, tm.Table.SQLVersions, tm.Table.Pos.Line, tm.Table.Pos.Col)
		} else {
			fmt.Fprintf(&b, "  table %s @%d:%d\n", tm.Table.TableName, tm.Table.Pos.Line, tm.Table.Pos.Col)
		}
		fmt.Fprintf(&b, "  subject %s\n", dumpTermMap(tm.Subject))
		for _, c := range tm.Classes {
			fmt.Fprintf(&b, "  class %s\n", c)
		}
		for _, g := range tm.Graphs {
			fmt.Fprintf(&b, "  graph %s\n", dumpTermMap(g))
		}
		for _, pom := range tm.PredicateObjects {
			fmt.Fprintf(&b, "  predicate-object map @%d:%d\n", pom.Pos.Line, pom.Pos.Col)
			for _, p := range pom.Predicates {
				fmt.Fprintf(&b, "    predicate %s\n", dumpTermMap(p))
			}
			for _, o := range pom.Objects {
				if o.Ref != nil {
					fmt.Fprintf(&b, "    ref @%d:%d parent %s\n", o.Ref.Pos.Line, o.Ref.Pos.Col, o.Ref.Parent.Name)
					for _, j := range o.Ref.Joins {
						fmt.Fprintf(&b, "      join child %s parent %s @%d:%d\n", j.Child, j.Parent, j.Pos.Line, j.Pos.Col)
					}
					continue
				}
				fmt.Fprintf(&b, "    object %s\n", dumpTermMap(*o.Term))
			}
			for _, g := range pom.Graphs {
				fmt.Fprintf(&b, "    graph %s\n", dumpTermMap(g))
			}
		}
	}
	return b.String()
}

func dumpTermMap(m catalog.TermMap) string {
	var s string
	switch m.Kind {
	case catalog.Constant:
		s = "constant " + m.Constant.String()
	case catalog.Column:
		s = "column " + m.Column
	case catalog.TemplateMap:
		s = "template"
		for _, p := range m.Template.Parts {
			if p.Column != "" {
				s += " {" + p.Column + "}"
			} else {
				s += fmt.Sprintf(" %q", p.Text)
			}
		}
	}
	s += " " + termTypeName(m.TermType)
	if m.Language != "" {
		s += " @" + m.Language
	}
	if m.Datatype != "" {
		s += " ^^" + m.Datatype.String()
	}
	return fmt.Sprintf("%s @%d:%d", s, m.Pos.Line, m.Pos.Col)
}
