package algebra_test

import (
	"errors"
	"strings"
	"testing"

	"veneer/rewrite/algebra"
	"veneer/rewrite/sparql"
)

func translate(t *testing.T, src string) *algebra.Query {
	t.Helper()
	q, err := sparql.Parse(src)
	if err != nil {
		t.Fatalf("parse %q: %v", src, err)
	}
	a, err := algebra.Translate(q)
	if err != nil {
		t.Fatalf("translate %q: %v", src, err)
	}
	return a
}

// oneLine squeezes the printed algebra onto one line.
func oneLine(s string) string {
	lines := strings.Split(s, "\n")
	for i, l := range lines {
		lines[i] = strings.TrimSpace(l)
	}
	return strings.Join(lines, " ")
}

// TestSpecExamples translates the worked examples of SPARQL 1.1 Query §18.2.3
// ("Examples of Mapped Graph Patterns", the simplified second forms) and
// §18.2.2.4 (property path patterns); the expected trees are those examples
// written in our notation.
func TestSpecExamples(t *testing.T) {
	const p = "PREFIX : <http://e/> SELECT * WHERE "
	tests := []struct{ name, where, want string }{
		{"single triple pattern", "{ ?s ?p ?o }",
			"(bgp (?s ?p ?o))"},
		{"two triple patterns", "{ ?s :p1 ?v1 ; :p2 ?v2 }",
			"(bgp (?s <http://e/p1> ?v1) (?s <http://e/p2> ?v2))"},
		{"union of two BGPs", "{ { ?s :p1 ?v1 } UNION {?s :p2 ?v2 } }",
			"(union (bgp (?s <http://e/p1> ?v1)) (bgp (?s <http://e/p2> ?v2)))"},
		{"union of a union and a BGP", "{ { ?s :p1 ?v1 } UNION {?s :p2 ?v2 } UNION {?s :p3 ?v3 } }",
			"(union (union (bgp (?s <http://e/p1> ?v1)) (bgp (?s <http://e/p2> ?v2))) (bgp (?s <http://e/p3> ?v3)))"},
		{"BGP and optional", "{ ?s :p1 ?v1 OPTIONAL {?s :p2 ?v2 } }",
			"(left-join (bgp (?s <http://e/p1> ?v1)) (bgp (?s <http://e/p2> ?v2)))"},
		{"BGP and two optionals", "{ ?s :p1 ?v1 OPTIONAL {?s :p2 ?v2 } OPTIONAL { ?s :p3 ?v3 } }",
			"(left-join (left-join (bgp (?s <http://e/p1> ?v1)) (bgp (?s <http://e/p2> ?v2))) (bgp (?s <http://e/p3> ?v3)))"},
		{"optional with filter", "{ ?s :p1 ?v1 OPTIONAL {?s :p2 ?v2 FILTER(?v1<3) } }",
			`(left-join (< ?v1 "3"^^xsd:integer) (bgp (?s <http://e/p1> ?v1)) (bgp (?s <http://e/p2> ?v2)))`},
		{"union and optional", "{ {?s :p1 ?v1} UNION {?s :p2 ?v2} OPTIONAL {?s :p3 ?v3} }",
			"(left-join (union (bgp (?s <http://e/p1> ?v1)) (bgp (?s <http://e/p2> ?v2))) (bgp (?s <http://e/p3> ?v3)))"},
		{"filter and optional", "{ ?s :p1 ?v1 FILTER (?v1 < 3 ) OPTIONAL {?s :p2 ?v2} }",
			`(filter ((< ?v1 "3"^^xsd:integer)) (left-join (bgp (?s <http://e/p1> ?v1)) (bgp (?s <http://e/p2> ?v2))))`},
		{"BIND ends the BGP", "{ ?s :p ?v . BIND (2*?v AS ?v2) ?s :p1 ?v2 }",
			`(join (extend (?v2 (* "2"^^xsd:integer ?v)) (bgp (?s <http://e/p> ?v))) (bgp (?s <http://e/p1> ?v2)))`},
		{"BIND after an empty group", "{ ?s :p ?v . {} BIND (2*?v AS ?v2) }",
			`(extend (?v2 (* "2"^^xsd:integer ?v)) (bgp (?s <http://e/p> ?v)))`},
		{"MINUS", "{ ?s :p ?v . MINUS {?s :p1 ?v2 } }",
			"(minus (bgp (?s <http://e/p> ?v)) (bgp (?s <http://e/p1> ?v2)))"},
		{"subquery", "{ ?s :p ?o . {SELECT DISTINCT ?o {?o ?p ?z} } }",
			"(join (bgp (?s <http://e/p> ?o)) (distinct (project (?o) (bgp (?o ?p ?z)))))"},
		// §18.2.2.4 examples.
		{"sequence path", "{ ?s :p/:q ?o }",
			"(bgp (?s <http://e/p> ?_:#p1) (?_:#p1 <http://e/q> ?o))"},
		{"zero or more path", "{ ?s :p* ?o }",
			"(path ?s (zero-or-more <http://e/p>) ?o)"},
		{"list members", "{ :list rdf:rest*/rdf:first ?member }",
			"(join (path <http://e/list> (zero-or-more <http://www.w3.org/1999/02/22-rdf-syntax-ns#rest>) ?_:#p1) " +
				"(bgp (?_:#p1 <http://www.w3.org/1999/02/22-rdf-syntax-ns#first> ?member)))"},
		{"inverse link", "{ ?s ^:p ?o }",
			"(bgp (?o <http://e/p> ?s))"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			src := p + tc.where
			if strings.Contains(tc.where, "rdf:") {
				src = "PREFIX rdf: <http://www.w3.org/1999/02/22-rdf-syntax-ns#> " + src
			}
			a := translate(t, src)
			proj, ok := a.Root.(algebra.Project)
			if !ok {
				t.Fatalf("root is %T, want Project", a.Root)
			}
			if got := oneLine(algebra.String(proj.Input)); got != tc.want {
				t.Errorf("\n got %s\nwant %s", got, tc.want)
			}
		})
	}
}

// TestScopeErrors checks the errors §18.2.1 and §11.4 require, with their
// positions. The negative cases follow the W3C syntax tests named beside them.
func TestScopeErrors(t *testing.T) {
	tests := []struct {
		src       string
		line, col int
		msg       string
	}{
		// sparql11/syntax-query syntax-BINDscope6.rq
		{"SELECT * {\n ?s <p> ?o ; <q> ?o1 .\n BIND((1+?o) AS ?o1) }", 3, 17, "?o1 is already in scope"},
		// syntax-SELECTscope2.rq
		{"SELECT (1 AS ?X) { ?X ?p ?o }", 1, 14, "?X is already in scope in the query pattern"},
		// syntax-query syn-bad-03.rq
		{"SELECT (1 AS ?X) (2 AS ?X) {}", 1, 24, "?X is already used earlier in this SELECT clause"},
		// syn-bad-01.rq
		{"SELECT * { ?s ?p ?o } GROUP BY ?s", 1, 1, "SELECT * cannot be used in a query that groups"},
		// syn-bad-02.rq
		{"SELECT ?o { ?s ?p ?o } GROUP BY ?s", 1, 8, "?o is projected but is neither grouped"},
		// §11.4: only aggregates and grouped variables in a grouped projection.
		{"SELECT (?o + COUNT(*) AS ?c) { ?s ?p ?o }", 1, 9, "?o is used in a SELECT expression but is neither grouped"},
		{"SELECT (COUNT(*) AS ?c) { ?s ?p ?o } GROUP BY ?s HAVING (?o > 1)", 1, 58, "?o is used in HAVING"},
		// §18.2.1: the AS variable of GROUP BY must not be in scope.
		{"SELECT ?s { ?s ?p ?o } GROUP BY (STR(?o) AS ?s)", 1, 45, "GROUP BY (... AS ?s)"},
		{"SELECT (<http://e/agg>(DISTINCT ?o) AS ?x) { ?s ?p ?o }", 1, 9, "custom aggregate functions are not supported"},
		// §18.2.1's table: OPTIONAL, GRAPH, VALUES, a sub-SELECT's projection,
		// SERVICE, a path and BIND put variables in scope, so neither BIND nor a
		// SELECT expression may bind them again.
		{"SELECT * { ?s <p> ?o OPTIONAL { ?s <q> ?x } BIND (1 AS ?x) }", 1, 56, "?x is already in scope in this group"},
		{"SELECT * { GRAPH ?g { ?s ?p ?o } BIND (<g> AS ?g) }", 1, 47, "?g is already in scope in this group"},
		{"SELECT * { VALUES ?v { 1 } BIND (2 AS ?v) }", 1, 39, "?v is already in scope in this group"},
		{"SELECT * { { SELECT ?x { ?x ?p ?o } } BIND (1 AS ?x) }", 1, 50, "?x is already in scope in this group"},
		{"SELECT * { SERVICE ?svc { ?s ?p ?o } BIND (1 AS ?svc) }", 1, 49, "?svc is already in scope in this group"},
		{"SELECT * { ?s <p>+ ?o BIND (1 AS ?o) }", 1, 34, "?o is already in scope in this group"},
		{"SELECT (1 AS ?x) { { SELECT ?x { ?x ?p ?o } } }", 1, 14, "?x is already in scope in the query pattern"},
		{"SELECT (1 AS ?y) { ?s ?p ?o BIND (2 AS ?y) }", 1, 14, "?y is already in scope in the query pattern"},
		{"SELECT (1 AS ?v) { VALUES ?v { 1 } }", 1, 14, "?v is already in scope in the query pattern"},
	}
	for _, tc := range tests {
		q, err := sparql.Parse(tc.src)
		if err != nil {
			t.Errorf("parse %q: %v", tc.src, err)
			continue
		}
		_, err = algebra.Translate(q)
		var se *sparql.SyntaxError
		if !errors.As(err, &se) {
			t.Errorf("Translate(%q): want an error, got %v", tc.src, err)
			continue
		}
		line, col := se.LineCol()
		if line != tc.line || col != tc.col || !strings.Contains(se.Msg, tc.msg) {
			t.Errorf("Translate(%q):\n got line %d, column %d: %s\nwant line %d, column %d: ...%s...", tc.src, line, col, se.Msg, tc.line, tc.col, tc.msg)
		}
	}
	// Allowed: syntax-BINDscope1..5 and syntax-SELECTscope1, 3 (positive tests).
	for _, src := range []string{
		"SELECT * { <s> <p> ?o . BIND((1+?o) AS ?o1) <s> <q> ?o1 }",
		"SELECT * { { BIND (1 AS ?Y) } UNION { <s> <p> ?Y } }",
		"SELECT * { { SELECT (1 AS ?X) {} } UNION { SELECT (2 AS ?X) {} } }",
		"SELECT ?s (COUNT(*) AS ?c) { ?s ?p ?o FILTER(?o > 1) } GROUP BY ?s HAVING (COUNT(?o) > 1) ORDER BY ?c",
		"SELECT (SUM(?o) AS ?t) (?t * 2 AS ?d) { ?s ?p ?o }",
		// §18.2.1: a variable used only in FILTER, on the right of MINUS, inside
		// EXISTS, or hidden by a sub-SELECT's projection is not in scope, so it may
		// be bound.
		"SELECT * { ?s ?p ?o FILTER (?x > 1) BIND (1 AS ?x) }",
		"SELECT * { ?s ?p ?o MINUS { ?s ?q ?x } BIND (1 AS ?x) }",
		"SELECT * { ?s ?p ?o FILTER EXISTS { ?s ?q ?x } BIND (1 AS ?x) }",
		"SELECT * { { SELECT ?s { ?s ?p ?x } } BIND (1 AS ?x) }",
		"SELECT (1 AS ?x) { { SELECT ?s { ?s ?p ?x } } }",
	} {
		translate(t, src)
	}
}

// TestInScope checks the in-scope variables of §18.2.1: not those only in
// FILTER or on the right of MINUS; those of BIND, VALUES and projections.
func TestInScope(t *testing.T) {
	a := translate(t, `SELECT * {
		?s <p> ?o
		FILTER(?f)
		MINUS { ?s <q> ?m }
		BIND(1 AS ?b)
		VALUES ?v { 1 }
		{ SELECT ?x { ?x ?y ?z } }
		OPTIONAL { ?o <r> _:hidden }
	}`)
	var got []string
	for _, v := range algebra.InScope(a.Root.(algebra.Project).Input) {
		got = append(got, string(v))
	}
	if want := "s o b v x _:hidden"; strings.Join(got, " ") != want {
		t.Errorf("in scope: %v, want %s", got, want)
	}
	if want := "s o b v x"; !equalVars(a.Vars, want) {
		t.Errorf("SELECT * projects %v, want %s", a.Vars, want)
	}
}

func equalVars(vs []algebra.Var, want string) bool {
	s := make([]string, len(vs))
	for i, v := range vs {
		s[i] = string(v)
	}
	return strings.Join(s, " ") == want
}
