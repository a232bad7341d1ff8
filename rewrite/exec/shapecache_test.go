package exec_test

import (
	"context"
	"fmt"
	"slices"
	"strings"
	"testing"

	"veneer/rewrite"
	"veneer/rewrite/exec"
)

const shapePrefixes = `PREFIX wf: <https://vocab.veneer.example/windfarm#>
PREFIX rdfs: <http://www.w3.org/2000/01/rdf-schema#>
PREFIX xsd: <http://www.w3.org/2001/XMLSchema#>
`

// TestShapeCacheAnswers runs queries that differ only in their VALUES data
// through the plan cache, whose plans from a shape's second query on are
// shared by every query of the shape, and checks each answer against the
// answer of a plan made for that query alone. The data mixes what planning
// treats differently: IRIs of two triples maps, IRIs no template produces,
// literals, UNDEF, repeated rows and no rows at all.
func TestShapeCacheAnswers(t *testing.T) {
	_, engine := demoEngine(t)

	iris := func(class string) []string {
		rows := answer(t, engine, shapePrefixes+`SELECT ?x WHERE { ?x a wf:`+class+` } ORDER BY ?x LIMIT 4`, false)
		if len(rows) < 4 {
			t.Fatalf("the demo has %d resources of class %s, want 4", len(rows), class)
		}
		for i, r := range rows {
			rows[i] = strings.TrimSuffix(strings.TrimPrefix(r, "x="), " ")
		}
		return rows
	}
	tu, wo, si := iris("Turbine"), iris("WorkOrder"), iris("Site")
	bogus := "<https://data.veneer.example/windfarm/turbine/>"
	// One-variable data, in an order that brings three queries of one shape
	// (and flags) before the first repeated row, UNDEF or empty block.
	one := []string{
		tu[0] + " " + wo[0],
		tu[1] + " " + tu[2] + " " + bogus + ` "WF" 42`,
		wo[1],
		tu[3] + " " + wo[2] + " " + si[0],
		tu[0] + " " + tu[0],
		"UNDEF " + tu[1],
		"",
		`"not an IRI"`,
	}
	two := []string{
		"(" + tu[0] + ` "a"^^xsd:string) (` + wo[0] + ` 1)`,
		"(" + tu[1] + ` "b") (` + wo[1] + ` UNDEF) (` + bogus + ` "c")`,
		"(" + wo[2] + ` "c")`,
		"(" + tu[2] + ` "d") (` + tu[3] + ` "e")`,
		"(" + tu[2] + ` "d") (` + tu[2] + ` "d")`,
		"(UNDEF " + `"f") (` + wo[3] + ` "g")`,
	}
	shapes := []struct {
		name, query string
		data        []string
		shared      bool // the shape's plan can be shared
	}{
		{"join in SQL", `SELECT ?x ?st WHERE { VALUES ?x { %s } ?x wf:status ?st }`, one, true},
		{"narrowing scan", `SELECT * WHERE { VALUES (?x ?y) { %s } { ?x wf:status ?st . FILTER(?st != "none") } }`, two, true},
		{"trailing VALUES", `SELECT ?x ?l WHERE { ?x rdfs:label ?l } VALUES ?x { %s }`, one, true},
		{"group", `SELECT ?x (COUNT(*) AS ?n) WHERE { VALUES ?x { %s } ?x ?p ?o } GROUP BY ?x`, one, true},
		{"ask", `ASK { VALUES ?x { %s } ?x a wf:Turbine }`, one, true},
		{"optional", `SELECT * WHERE { VALUES ?x { %s } ?x a ?c OPTIONAL { ?x wf:model ?m } }`, one, true},
		{"exists", `SELECT ?t WHERE { ?t a wf:Turbine FILTER EXISTS { VALUES ?t { %s } ?t wf:status ?s } }`, one, true},
		// Evaluated graph by graph, the data stays in the plan's pattern.
		{"graph by graph", `SELECT * WHERE { GRAPH ?g { VALUES ?x { %s } } }`, one, false},
		{"two blocks", `SELECT * WHERE { VALUES ?x { %s } VALUES ?w { ` + wo[0] + " " + wo[1] + ` } ?w wf:onTurbine ?x }`, one, true},
	}
	for _, s := range shapes {
		t.Run(s.name, func(t *testing.T) {
			hits := 0
			for pass := 0; pass < 2; pass++ {
				for _, d := range s.data {
					text := shapePrefixes + fmt.Sprintf(s.query, d)
					got, cached := answerCached(t, engine, text)
					want := answer(t, engine, text, true)
					if !slices.Equal(got, want) {
						t.Errorf("with data %q the cached plan answers\n%v\nthe query's own plan\n%v", d, got, want)
					}
					if cached {
						hits++
					}
				}
			}
			t.Logf("%d plan cache hits over %d queries", hits, 2*len(s.data))
			// The first pass: the first query of the shape is planned alone,
			// the second lifts its data, the third hits; the second pass hits
			// for all but data that plans differently.
			if s.shared && hits < len(s.data) {
				t.Errorf("%d plan cache hits over %d queries of a shared shape", hits, 2*len(s.data))
			}
		})
	}
}

// answerCached runs text through the engine (and so the plan cache) and
// returns its solutions, sorted, and whether the cache served the plan.
func answerCached(t *testing.T, e *exec.Engine, text string) ([]string, bool) {
	t.Helper()
	p, err := e.Prepare(rewrite.Request{Text: text})
	if err != nil {
		t.Fatalf("%v\n%s", err, text)
	}
	_, cached := p.Compilation()
	c, err := p.Run(context.Background())
	if err != nil {
		t.Fatal(err)
	}
	return drain(t, c), cached
}

// answer runs text through the engine's plan cache, or with a plan made for it
// alone (fresh), and returns its solutions, sorted.
func answer(t *testing.T, e *exec.Engine, text string, fresh bool) []string {
	t.Helper()
	if !fresh {
		rows, _ := answerCached(t, e, text)
		return rows
	}
	p, err := e.Planner.CompileFresh(text)
	if err != nil {
		t.Fatalf("%v\n%s", err, text)
	}
	c, err := exec.Run(context.Background(), e.Source, p)
	if err != nil {
		t.Fatal(err)
	}
	return drain(t, c)
}

func drain(t *testing.T, c *exec.Cursor) []string {
	t.Helper()
	defer c.Close()
	var rows []string
	for c.Next() {
		var b strings.Builder
		for i, v := range c.Vars() {
			if term := c.Solution()[i]; term != nil {
				fmt.Fprintf(&b, "%s=%s ", v, term)
			}
		}
		rows = append(rows, b.String())
	}
	if err := c.Err(); err != nil {
		t.Fatal(err)
	}
	if len(c.Vars()) == 0 {
		rows = append(rows, fmt.Sprint(c.Boolean()))
	}
	slices.Sort(rows)
	return rows
}
