package conformance

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"veneer/catalog/r2rml"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/conformance/w3cdir"
)

// TestSPARQLEval runs the W3C SPARQL query evaluation tests (rdf-tests
// sparql11 query folders and approved sparql10 evaluation tests, as the
// manifests list them) on each database and fails when fewer pass than
// testdata/sparql-eval-floor.txt records. Failures are logged with their
// reasons.
func TestSPARQLEval(t *testing.T) {
	runOnEachDatabase(t, SPARQLEval(), func(t *testing.T, rep *Report) {
		for _, r := range rep.Results {
			if r.Outcome == Failed {
				t.Logf("FAIL %s: %s", r.ID, r.Reason)
			}
		}
		for _, w := range rep.Warnings {
			t.Error(w)
		}
		const floorFile = "sparql-eval-floor.txt"
		if floor := passFloor(t, floorFile, rep.DB); rep.Passed < floor {
			t.Errorf("%s: fewer passed than the %d recorded in testdata/%s", rep.Summary(), floor, floorFile)
		} else if rep.Passed > floor {
			t.Logf("%d passed, more than the floor of %d: raise it in testdata/%s", rep.Passed, floor, floorFile)
		}
		t.Log(rep.Summary())
	})
}

// The suite reads the two manifests' folders and the tests in them. The
// numbers are not fixed (the suite may grow); what is checked is that the
// entries come from both versions, carry their files, and that tests of the
// SPARQL 1.0 suite without dawgt:Approved are skipped.
func TestSPARQLEvalLoad(t *testing.T) {
	groups, err := SPARQLEval().Load(w3cdir.ForTest(t))
	if err != nil {
		t.Fatal(err)
	}
	ids := map[string]bool{}
	for _, g := range groups {
		for _, tc := range g.Tests {
			ids[tc.ID] = true
		}
	}
	// rdf-tests sparql11/aggregates/manifest.ttl :agg01, sparql10/basic/manifest.ttl
	// :base-prefix-1, sparql10/sort/manifest.ttl :dawg-sort-1 (an RDF/XML result).
	for _, id := range []string{"sparql11/aggregates/agg01", "sparql10/basic/base-prefix-1", "sparql10/sort/dawg-sort-1"} {
		if !ids[id] {
			t.Errorf("no test %s among %d", id, len(ids))
		}
	}
	// Entailment and update folders are not part of the suite.
	for id := range ids {
		if strings.HasPrefix(id, "sparql11/entailment/") || strings.HasPrefix(id, "sparql11/basic-update/") {
			t.Errorf("test %s of an excluded folder", id)
		}
	}
}

// Expected results in each format the suite uses, read from the suite's own
// files; the values checked are the files' (named beside each case).
func TestReadAnswer(t *testing.T) {
	root := filepath.Join(w3cdir.ForTest(t), "rdf-tests", "sparql")
	yes, no := true, false
	tests := []struct {
		file    string
		rows    int
		boolean *bool
		graph   bool
		ordered bool
		first   solution // checked when set: the first solution in the file's order
	}{
		// sparql10/sort result-sort-3.rdf: RDF/XML rs:ResultSet, rs:index 1 is Bob without ?mbox.
		{file: "sparql10/sort/result-sort-3.rdf", rows: 4, ordered: true, first: solution{"name": rdf.NewString("Bob")}},
		// sparql10/ask ask-1.srx: <boolean>true</boolean>.
		{file: "sparql10/ask/ask-1.srx", boolean: &yes},
		// sparql10/ask ask-4.srx: <boolean>false</boolean>.
		{file: "sparql10/ask/ask-4.srx", boolean: &no},
		// sparql11/json-res jsonres01.srj: six solutions, the first <s1> <p1> <s2>.
		{file: "sparql11/json-res/jsonres01.srj", rows: 6, ordered: true, first: solution{
			"s": rdf.IRI("http://example.org/s1"), "p": rdf.IRI("http://example.org/p1"), "o": rdf.IRI("http://example.org/s2")}},
		// sparql10/bnode-coreference result.ttl: rs:ResultSet in Turtle, three
		// solutions, no rs:index.
		{file: "sparql10/bnode-coreference/result.ttl", rows: 3},
		// sparql11/construct constructwhere01result.ttl: a plain graph of 6 triples.
		{file: "sparql11/construct/constructwhere01result.ttl", graph: true},
		// sparql11/aggregates agg01.srx: one solution, ?C = "5"^^xsd:integer.
		{file: "sparql11/aggregates/agg01.srx", rows: 1, ordered: true, first: solution{"C": rdf.NewTyped("5", rdf.XSDInteger)}},
	}
	for _, tt := range tests {
		t.Run(tt.file, func(t *testing.T) {
			a, err := readAnswer(filepath.Join(root, filepath.FromSlash(tt.file)))
			if err != nil {
				t.Fatal(err)
			}
			switch {
			case tt.boolean != nil:
				if a.boolean == nil || *a.boolean != *tt.boolean {
					t.Errorf("boolean %v, want %v", a.boolean, *tt.boolean)
				}
			case tt.graph:
				if !a.isGraph || len(a.graph) == 0 {
					t.Errorf("isGraph %v with %d triples, want a graph", a.isGraph, len(a.graph))
				}
			default:
				if a.isGraph || a.boolean != nil || len(a.rows) != tt.rows || a.ordered != tt.ordered {
					t.Errorf("%s, ordered %v; want %d solutions, ordered %v", a.kind(), a.ordered, tt.rows, tt.ordered)
				}
				if tt.first != nil && len(a.rows) > 0 && rowText(a.rows[0], false) != rowText(tt.first, false) {
					t.Errorf("first solution %s, want %s", rowText(a.rows[0], false), rowText(tt.first, false))
				}
			}
		})
	}
}

// Comparing answers by the suites' rules: multisets of solutions, RDF term
// equality (lexical forms must agree; language tags case-insensitively,
// RDF 1.1 Concepts §3.3), blank nodes up to one renaming (SPARQL 1.1 Query
// Results JSON §3.2.2: labels are scoped to the result), order only for ORDER
// BY keys (SPARQL 1.1 Query §15.1), and mf:LaxCardinality (rdf-tests
// ns/test-manifest.ttl). The solutions are made up.
func TestCompareAnswers(t *testing.T) {
	ex := func(s string) rdf.IRI { return rdf.IRI("http://example.com/" + s) }
	b := func(s string) rdf.BlankNode { return rdf.BlankNode(s) }
	one, oneAgain := rdf.NewTyped("1", rdf.XSDInteger), rdf.NewTyped("01", rdf.XSDInteger)
	rows := func(rs ...solution) *answer { return &answer{vars: []string{"x", "y"}, rows: rs, ordered: true} }
	byX := comparison{order: &orderCheck{keys: []string{"x"}}}
	tests := []struct {
		name      string
		want, got *answer
		cmp       comparison
		ok        bool
	}{
		{"same solutions in another order", rows(solution{"x": ex("a")}, solution{"x": ex("b")}),
			rows(solution{"x": ex("b")}, solution{"x": ex("a")}), comparison{}, true},
		{"a solution missing", rows(solution{"x": ex("a")}, solution{"x": ex("a")}),
			rows(solution{"x": ex("a")}), comparison{}, false},
		{"equal numbers in other lexical forms", rows(solution{"x": one}), rows(solution{"x": oneAgain}), comparison{}, true},
		{"language tags differ in case only", rows(solution{"x": rdf.NewLangString("rotor", "en-GB")}),
			rows(solution{"x": rdf.NewLangString("rotor", "en-gb")}), comparison{}, true},
		{"blank nodes renamed consistently", rows(solution{"x": b("a"), "y": b("a")}, solution{"x": b("c")}),
			rows(solution{"x": b("z1"), "y": b("z1")}, solution{"x": b("z2")}), comparison{}, true},
		{"blank nodes shared differently", rows(solution{"x": b("a")}, solution{"x": b("a")}),
			rows(solution{"x": b("z1")}, solution{"x": b("z2")}), comparison{}, false},
		{"ORDER BY key out of order", rows(solution{"x": one}, solution{"x": ex("b")}),
			rows(solution{"x": ex("b")}, solution{"x": one}), byX, false},
		{"ORDER BY ties in either order", rows(solution{"x": one, "y": ex("p")}, solution{"x": one, "y": ex("q")}),
			rows(solution{"x": one, "y": ex("q")}, solution{"x": one, "y": ex("p")}), byX, true},
		{"whole solutions out of order", rows(solution{"x": one, "y": ex("p")}, solution{"x": one, "y": ex("q")}),
			rows(solution{"x": one, "y": ex("q")}, solution{"x": one, "y": ex("p")}), comparison{order: &orderCheck{}}, false},
		{"lax: fewer duplicates", rows(solution{"x": ex("a")}, solution{"x": ex("a")}, solution{"x": ex("b")}),
			rows(solution{"x": ex("b")}, solution{"x": ex("a")}), comparison{lax: true}, true},
		{"lax: a solution left out", rows(solution{"x": ex("a")}, solution{"x": ex("b")}),
			rows(solution{"x": ex("a")}), comparison{lax: true}, false},
		{"lax: more than expected", rows(solution{"x": ex("a")}),
			rows(solution{"x": ex("a")}, solution{"x": ex("a")}), comparison{lax: true}, false},
		{"other result variables", &answer{vars: []string{"x"}}, &answer{vars: []string{"y"}}, comparison{}, false},
		{"ASK answers differ", &answer{boolean: new(true)}, &answer{boolean: new(false)}, comparison{}, false},
		{"a graph for solutions", rows(), &answer{isGraph: true}, comparison{}, false},
		{"isomorphic graphs", &answer{isGraph: true, graph: []rdf.Triple{{S: b("t"), P: ex("rated"), O: one}}},
			&answer{isGraph: true, graph: []rdf.Triple{{S: b("u"), P: ex("rated"), O: one}}}, comparison{}, true},
	}
	// Equal numbers in different lexical forms are the same answer (see
	// rowKey); different values are a difference.
	var m *answerMismatch
	if err := compareAnswers(rows(solution{"x": one}), rows(solution{"x": oneAgain}), comparison{}); err != nil {
		t.Errorf("compareAnswers(1, 01) = %v, want equal", err)
	}
	if err := compareAnswers(rows(solution{"x": one}), rows(solution{"x": rdf.NewTyped("2", rdf.XSDInteger)}), comparison{}); !errors.As(err, &m) || m.lexicalOnly {
		t.Errorf("compareAnswers(1, 2) = %v, want a mismatch of values", err)
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			err := compareAnswers(tt.want, tt.got, tt.cmp)
			if tt.ok && err != nil {
				t.Errorf("compareAnswers: %v, want equal", err)
			}
			if !tt.ok && err == nil {
				t.Error("compareAnswers: nil, want a difference")
			}
		})
	}
}

// RDF/XML in the forms parseRDFXML reads (RDF 1.1 XML Syntax §2.2, §2.5,
// §2.7, §2.9, §2.11, §2.13) gives the triples the specification defines; a
// form it does not read is an error with its position. The documents are made
// up, in the wind-farm scenario.
func TestParseRDFXML(t *testing.T) {
	const doc = `<?xml version="1.0"?>
<rdf:RDF xmlns:rdf="http://www.w3.org/1999/02/22-rdf-syntax-ns#" xmlns:w="http://example.com/wind#">
  <w:Turbine rdf:about="t7" w:model="V90">
    <w:site rdf:resource="http://example.com/site/north"/>
    <w:rotor rdf:parseType="Resource">
      <w:diameter rdf:datatype="http://www.w3.org/2001/XMLSchema#decimal">90.0</w:diameter>
    </w:rotor>
    <w:note xml:lang="en">blade crack</w:note>
    <w:inspector><rdf:Description rdf:nodeID="tech"><w:name>Ada</w:name></rdf:Description></w:inspector>
  </w:Turbine>
</rdf:RDF>`
	got, err := parseRDFXML("turbine.rdf", []byte(doc), "http://example.com/base/")
	if err != nil {
		t.Fatal(err)
	}
	w := func(s string) rdf.IRI { return rdf.IRI("http://example.com/wind#" + s) }
	t7, rotor, tech := rdf.IRI("http://example.com/base/t7"), rdf.BlankNode("r"), rdf.BlankNode("p")
	want := []rdf.Triple{
		{S: t7, P: rdf.RDFType, O: w("Turbine")},
		{S: t7, P: w("model"), O: rdf.NewString("V90")},
		{S: t7, P: w("site"), O: rdf.IRI("http://example.com/site/north")},
		{S: t7, P: w("rotor"), O: rotor},
		{S: rotor, P: w("diameter"), O: rdf.NewTyped("90.0", rdf.XSDDecimal)},
		{S: t7, P: w("note"), O: rdf.NewLangString("blade crack", "en")},
		{S: tech, P: w("name"), O: rdf.NewString("Ada")},
		{S: t7, P: w("inspector"), O: tech},
	}
	if !rdf.Isomorphic(quadsOf(want), quadsOf(got)) {
		t.Errorf("got %v\nwant %v", got, want)
	}
	bad := `<rdf:RDF xmlns:rdf="http://www.w3.org/1999/02/22-rdf-syntax-ns#" xmlns:w="http://example.com/wind#">
<w:Site rdf:about="s"><w:turbines rdf:parseType="Collection"/></w:Site></rdf:RDF>`
	if _, err := parseRDFXML("site.rdf", []byte(bad), "http://example.com/"); err == nil || !strings.Contains(err.Error(), "site.rdf:2:") {
		t.Errorf("parseType Collection: %v, want an error at site.rdf:2", err)
	}
}

// windFarm is made-up data of the demo scenario with every term shape the
// triple tables distinguish: IRI and blank subjects, IRI, blank, simple,
// language-tagged and typed objects (a non-canonical decimal among them).
const windFarm = `@prefix w: <http://example.com/wind#> .
@prefix xsd: <http://www.w3.org/2001/XMLSchema#> .
w:t7 a w:Turbine ; w:site w:north ; w:label "T7", "Turbine sept"@fr, "Turbine seven"@en ;
  w:capacityMW "2.50"^^xsd:decimal ; w:commissioned "2019-04-01"^^xsd:date ; w:rotor _:r .
_:r w:diameter "90"^^xsd:integer ; w:bladeOf _:r .
w:t8 a w:Turbine ; w:label "T8" , "T8" .
`

// rdfLoad is an RDF document (Turtle) to store in one graph ("" for the
// default graph).
type rdfLoad struct {
	src   []byte
	graph rdf.IRI
}

// The generated mapping serves the stored tables as the dataset they were made
// from: reading every quad back through veneer (MappedDataset) gives the same
// dataset up to blank node labels (RDF 1.1 Concepts §3.6, §4), each quad once.
// The datasets are windFarm in the default graph and in a named graph, and
// some of the suite's data files with many kinds of literals.
func TestTripleTablesRoundTrip(t *testing.T) {
	root := filepath.Join(w3cdir.ForTest(t), "rdf-tests", "sparql")
	g := rdf.IRI("http://example.com/graph/inspections")
	type dataset struct {
		name  string
		loads []rdfLoad
	}
	sets := []dataset{{name: "wind farm, default and named graph", loads: []rdfLoad{{[]byte(windFarm), ""}, {[]byte(windFarm), g}}}}
	// rdf-tests sparql10: expr-equals/data-eq.ttl (typed literals of several
	// datatypes), i18n/kanji.ttl (non-ASCII IRIs and literals),
	// bnode-coreference/data.ttl (blank nodes that refer to each other).
	for _, f := range []string{"sparql10/expr-equals/data-eq.ttl", "sparql10/i18n/kanji.ttl", "sparql10/bnode-coreference/data.ttl"} {
		src, err := os.ReadFile(filepath.Join(root, filepath.FromSlash(f)))
		if err != nil {
			t.Fatal(err)
		}
		sets = append(sets, dataset{name: f, loads: []rdfLoad{{src, ""}}})
	}
	for _, d := range []source.Dialect{source.SQLite, source.Postgres, source.MySQL} {
		t.Run(d.String(), func(t *testing.T) {
			srv := testServer(t, d)
			for _, set := range sets {
				t.Run(set.name, func(t *testing.T) { roundTrip(t, srv, set.loads) })
			}
		})
	}
}

// roundTrip stores the documents in triple tables on a new database of srv
// and reads the dataset back through the generated mapping.
func roundTrip(t *testing.T, srv *Server, loads []rdfLoad) {
	ctx, cancel := context.WithTimeout(context.Background(), time.Minute)
	defer cancel()
	sc, err := srv.Create(ctx)
	if err != nil {
		t.Fatal(err)
	}
	defer sc.Close()
	tables := newTripleTables()
	var want []rdf.Quad
	for i, l := range loads {
		doc, err := rdf.ParseTurtle("data.ttl", l.src, "http://example.com/base/")
		if err != nil {
			t.Fatal(err)
		}
		scope := "d" + strconv.Itoa(i) + "."
		for _, tr := range doc.Triples() {
			if err := tables.add(l.graph, tr, scope); err != nil {
				t.Fatal(err)
			}
			q := rdf.Quad{S: tr.S, P: tr.P, O: tr.O}
			if l.graph != "" {
				q.G = l.graph
			}
			// Each document's blank nodes are its own.
			for _, p := range []*rdf.Term{&q.S, &q.O} {
				if bn, ok := (*p).(rdf.BlankNode); ok {
					*p = rdf.BlankNode(scope + string(bn))
				}
			}
			want = append(want, q)
		}
	}
	if err := tables.store(ctx, sc); err != nil {
		t.Fatal(err)
	}
	cat, err := r2rml.Load("mapping.ttl", []byte(tables.mapping()))
	if err != nil {
		t.Fatalf("%v\n%s", err, tables.mapping())
	}
	src, err := sc.Source(ctx)
	if err != nil {
		t.Fatal(err)
	}
	got, err := MappedDataset(ctx, src, cat)
	if err != nil {
		t.Fatal(err)
	}
	if err := CompareDatasets(want, got); err != nil {
		t.Error(err)
		var d interface{ Details() []string }
		if errors.As(err, &d) {
			for _, line := range d.Details() {
				t.Log(line)
			}
		}
	}
}

// guarded turns a test that overruns its deadline, whether or not it stops
// when its context ends, and a panic into failures (common practice; no
// external source).
func TestGuarded(t *testing.T) {
	ctx := context.Background()
	const short = 50 * time.Millisecond
	if err := guarded(ctx, short, func(context.Context) error { return nil }); err != nil {
		t.Errorf("a quick test: %v", err)
	}
	err := guarded(ctx, short, func(ctx context.Context) error { <-ctx.Done(); return ctx.Err() })
	if err == nil || !strings.Contains(err.Error(), "no answer within") || strings.Contains(err.Error(), "did not stop") {
		t.Errorf("a test that stops at its deadline: %v", err)
	}
	release := make(chan struct{})
	defer close(release)
	err = guarded(ctx, short, func(context.Context) error { <-release; return nil })
	if err == nil || !strings.Contains(err.Error(), "did not stop") {
		t.Errorf("a test that ignores its deadline: %v", err)
	}
	var p *panicError
	if err := guarded(ctx, short, func(context.Context) error { panic("rotor") }); !errors.As(err, &p) || len(p.Details()) == 0 {
		t.Errorf("a panic: %v", err)
	}
}
