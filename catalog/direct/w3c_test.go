package direct_test

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"veneer/catalog"
	"veneer/catalog/direct"
	"veneer/catalog/internal/rdb2rdf"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/catalog/source/sourcetest"
)

// The base IRI the W3C RDB2RDF direct graphs are written against.
const w3cBase = "http://example.com/base/"

const (
	testNS = "http://purl.org/NET/rdb2rdf-test#"
	dcNS   = "http://purl.org/dc/elements/1.1/"
)

// dmCase is a Direct Mapping test of the suite, as its manifest describes it.
type dmCase struct {
	id, dir, script, output string
}

// dmCases reads the Direct Mapping tests from the suite's manifests.
func dmCases(t *testing.T) []dmCase {
	manifests, err := filepath.Glob(filepath.Join(rdb2rdf.Dir(t), "D*", "manifest.ttl"))
	if err != nil || len(manifests) == 0 {
		t.Fatalf("no RDB2RDF manifests under %s (set VENEER_W3C to the W3C suites)", rdb2rdf.Dir(t))
	}
	var cases []dmCase
	for _, m := range manifests {
		src, err := os.ReadFile(m)
		if err != nil {
			t.Fatal(err)
		}
		doc, err := rdf.ParseTurtle(m, src, "http://www.w3.org/2001/sw/rdb2rdf/test-cases/")
		if err != nil {
			t.Fatal(err)
		}
		value := func(s rdf.Term, p rdf.IRI) rdf.Term {
			for _, st := range doc.Statements {
				if st.S == s && st.P == p {
					return st.O
				}
			}
			return nil
		}
		lexical := func(s rdf.Term, p rdf.IRI) string {
			if l, ok := value(s, p).(rdf.Literal); ok {
				return l.Lexical
			}
			return ""
		}
		for _, st := range doc.Statements {
			if st.P != rdf.RDFType || st.O != rdf.IRI(testNS+"DirectMapping") {
				continue
			}
			if lexical(st.S, testNS+"hasExpectedOutput") != "true" {
				continue
			}
			cases = append(cases, dmCase{
				id:     lexical(st.S, dcNS+"identifier"),
				dir:    filepath.Dir(m),
				script: lexical(value(st.S, testNS+"database"), testNS+"sqlScriptFile"),
				output: lexical(st.S, testNS+"output"),
			})
		}
	}
	return cases
}

// TestW3CDirectGraphs loads each Direct Mapping test database of the W3C
// RDB2RDF suite into PostgreSQL, MySQL and SQLite, maps its introspected schema, and
// checks the catalog against the test's expected graph (directGraph.ttl): the
// classes, the predicates each table's rows have, the row IRIs (decoded with
// the subject template, they give the primary key's values), blank nodes for
// tables without a key, the targets of reference triples, and the number of
// triples each predicate has (counted in SQL from the catalog's own tables and
// joins). Producing the graph itself is the planner's work; the full graph
// comparison belongs to the conformance runner.
func TestW3CDirectGraphs(t *testing.T) {
	cases := dmCases(t)
	if len(cases) < 20 {
		t.Fatalf("only %d Direct Mapping tests found", len(cases))
	}
	for _, d := range sourcetest.Dialects {
		t.Run(d.String(), func(t *testing.T) {
			for _, c := range cases {
				t.Run(c.id, func(t *testing.T) {
					if why := rdb2rdf.Unsupported(d, c.dir); why != "" {
						t.Skip(why)
					}
					checkDirectGraph(t, sourcetest.New(t, d), c)
				})
			}
		})
	}
}

func checkDirectGraph(t *testing.T, db *sourcetest.DB, c dmCase) {
	rdb2rdf.Load(t, db, c.dir, c.script)
	ctx := context.Background()
	schema, err := source.Introspect(ctx, db.Open(t), "")
	if err != nil {
		t.Fatal(err)
	}
	cat, err := direct.Map(schema, w3cBase)
	if err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(c.dir, c.output)
	ttl, err := os.ReadFile(out)
	if err != nil {
		t.Fatal(err)
	}
	doc, err := rdf.ParseTurtle(out, ttl, w3cBase)
	if err != nil {
		t.Fatal(err)
	}
	g := newGraph(doc.Triples())

	byClass := map[rdf.IRI]*catalog.TriplesMap{}
	for _, tm := range cat.Maps {
		if len(tm.Classes) != 1 {
			t.Fatalf("map %s has classes %v, want its table's IRI", tm.Name, tm.Classes)
		}
		byClass[tm.Classes[0]] = tm
	}
	for class := range g.subjects {
		if byClass[class] == nil {
			t.Errorf("the expected graph has rows of %s, which no triples map has as class", class)
		}
	}
	counts := map[rdf.IRI]int{} // triples per predicate in the expected graph
	for _, tr := range g.triples {
		if tr.P == rdf.RDFType {
			continue
		}
		counts[tr.P.(rdf.IRI)]++
		tm := byClass[g.class[tr.S]]
		if tm == nil {
			continue
		}
		om, ok := objectMap(tm, tr.P.(rdf.IRI))
		switch {
		case !ok:
			t.Errorf("%s: no predicate-object map of %s has predicate %s", tr.S, tm.Name, tr.P)
		case tr.O.Kind() == rdf.KindLiteral && (om.Term == nil || om.Term.Kind != catalog.Column):
			t.Errorf("%s %s: the expected object is a literal, the map's is not a column", tr.S, tr.P)
		case tr.O.Kind() != rdf.KindLiteral && (om.Ref == nil || om.Ref.Parent.Classes[0] != g.class[tr.O]):
			t.Errorf("%s %s: the expected object is a row of %s, the map's is not a reference to it", tr.S, tr.P, g.class[tr.O])
		}
	}
	for _, tm := range cat.Maps {
		checkSubjects(t, db, tm, g)
		for _, pom := range tm.PredicateObjects {
			p := pom.Predicates[0].Constant.(rdf.IRI)
			if n := count(t, db, tm, pom.Objects[0]); n != counts[p] {
				t.Errorf("%s: the database gives %d triples, the expected graph has %d", p, n, counts[p])
			}
		}
	}
}

// checkSubjects compares a map's subjects with the rows of its class in the
// expected graph: as many distinct ones as the subject template's columns
// have distinct values, IRIs that the template decodes into the key values
// the rows' literals show, or blank nodes.
func checkSubjects(t *testing.T, db *sourcetest.DB, tm *catalog.TriplesMap, g *graph) {
	subjects := g.subjects[tm.Classes[0]]
	cols := strings.Join(tm.Subject.Columns(), ", ")
	if n := countSQL(t, db, "SELECT count(*) FROM (SELECT DISTINCT "+cols+" FROM "+from(t, db, tm)+" x) y"); n != len(subjects) {
		t.Errorf("%s: the subject template gives %d row nodes, the expected graph has %d", tm.Name, n, len(subjects))
	}
	for _, s := range subjects {
		iri, isIRI := s.(rdf.IRI)
		if !isIRI {
			if tm.Subject.TermType != rdf.KindBlank {
				t.Errorf("%s: the expected row node is a blank node, the map makes %v", tm.Name, tm.Subject.TermType)
			}
			continue
		}
		if tm.Subject.TermType != rdf.KindIRI {
			t.Errorf("%s: the expected row node is the IRI %s, the map makes %v", tm.Name, s, tm.Subject.TermType)
			continue
		}
		values, ok := tm.Subject.Template.Match(string(iri), true)
		if !ok {
			t.Errorf("%s: the subject template does not produce %s", tm.Name, s)
			continue
		}
		for col, v := range values {
			p := columnPredicate(tm, col)
			lit, _ := g.object(s, p).(rdf.Literal)
			if lit.Lexical != v {
				t.Errorf("%s: the IRI holds %s=%q, but its %s is %q", s, col, v, p, lit.Lexical)
			}
		}
	}
}

// objectMap finds the object map a predicate has in tm.
func objectMap(tm *catalog.TriplesMap, p rdf.IRI) (catalog.ObjectMap, bool) {
	for _, pom := range tm.PredicateObjects {
		if pom.Predicates[0].Constant == p {
			return pom.Objects[0], true
		}
	}
	return catalog.ObjectMap{}, false
}

// columnPredicate finds the predicate of the literal triples of column col.
func columnPredicate(tm *catalog.TriplesMap, col string) rdf.IRI {
	for _, pom := range tm.PredicateObjects {
		if o := pom.Objects[0].Term; o != nil && o.Column == col {
			return pom.Predicates[0].Constant.(rdf.IRI)
		}
	}
	return ""
}

// count counts in SQL the triples an object map gives: the non-NULL values of
// a column, or the child rows that join a parent row.
func count(t *testing.T, db *sourcetest.DB, tm *catalog.TriplesMap, om catalog.ObjectMap) int {
	if om.Term != nil {
		return countSQL(t, db, fmt.Sprintf("SELECT count(%s) FROM %s x", om.Term.Column, from(t, db, tm)))
	}
	var on []string
	for _, j := range om.Ref.Joins {
		on = append(on, "c."+j.Child+" = p."+j.Parent)
	}
	return countSQL(t, db, fmt.Sprintf("SELECT count(*) FROM %s c JOIN %s p ON %s",
		from(t, db, tm), from(t, db, om.Ref.Parent), strings.Join(on, " AND ")))
}

// from is a triples map's logical table as a derived table, to be aliased.
func from(t *testing.T, db *sourcetest.DB, tm *catalog.TriplesMap) string {
	f, err := catalog.FromClause(tm.Table, db.Dialect)
	if err != nil {
		t.Fatal(err)
	}
	return "(SELECT * FROM " + f + ")"
}

func countSQL(t *testing.T, db *sourcetest.DB, query string) int {
	var n int
	if err := db.Admin.QueryRow(query).Scan(&n); err != nil {
		t.Fatalf("%s: %v", query, err)
	}
	return n
}

// graph indexes an expected graph.
type graph struct {
	triples []rdf.Triple
	// class is each row node's rdf:type.
	class map[rdf.Term]rdf.IRI
	// subjects lists the row nodes of each class.
	subjects map[rdf.IRI][]rdf.Term
}

func newGraph(triples []rdf.Triple) *graph {
	g := &graph{triples: triples, class: map[rdf.Term]rdf.IRI{}, subjects: map[rdf.IRI][]rdf.Term{}}
	for _, tr := range triples {
		if c, ok := tr.O.(rdf.IRI); ok && tr.P == rdf.RDFType {
			g.class[tr.S] = c
			g.subjects[c] = append(g.subjects[c], tr.S)
		}
	}
	return g
}

// object returns the object of the first triple with subject s and predicate p.
func (g *graph) object(s rdf.Term, p rdf.IRI) rdf.Term {
	for _, tr := range g.triples {
		if tr.S == s && tr.P == p {
			return tr.O
		}
	}
	return nil
}
