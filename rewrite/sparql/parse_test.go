package sparql_test

import (
	"errors"
	"fmt"
	"strings"
	"testing"

	"veneer/catalog/rdf"
	"veneer/rewrite/sparql"
)

// TestSyntaxErrors checks that errors say where and what. The rules broken are
// those of SPARQL 1.1 Query §19.8 (grammar and its notes) and §19.5-19.6; the
// wording is ours.
func TestSyntaxErrors(t *testing.T) {
	tests := []struct {
		src        string
		line, col  int
		msg, caret string // msg is a substring of the message; caret the source line shown
	}{
		{"SELECT ?x WHERE {\n  ?x <p> ?o .\n  FILTER(?x > 3\n", 4, 1, "expected ')' to close the expression started at line 3, column 9, found end of query", ""},
		{"SELECT * WHERE {\n  ?s ?p ?o\n  OPTIONAL { ?s ?q ?r \n", 4, 1, "expected '}' to close the group started at line 3, column 12", ""},
		{"SELECT * { ?s ?p ?o ", 1, 21, "expected '}' to close the group started at line 1, column 10, found end of query", ""},
		{"SELECT * {\n  ?s ?p ?o ?a ?b ?c }", 2, 12, "expected '.' between triple patterns", "  ?s ?p ?o ?a ?b ?c }"},
		{"PREFIX ex: <http://e/>\nSELECT * { ?s wf:p ?o }", 2, 15, "prefix wf: is not declared", "SELECT * { ?s wf:p ?o }"},
		{"PREFIX a: <x:> PREFIX a: <y:> ASK {}", 1, 23, "prefix a: is already declared at line 1, column 8", ""},
		{"SELECT (COUNT(?x) AS ?c) { ?s ?p ?o FILTER(COUNT(?o) > 1) }", 1, 44, "aggregate COUNT is not allowed here", ""},
		{"SELECT (SUM(MAX(?x)) AS ?c) {}", 1, 13, "aggregate MAX is not allowed here", ""},
		{"SELECT * { BIND(1 AS ?x }", 1, 25, "expected ')' to close the BIND started at line 1, column 16", ""},
		{"SELECT * { FILTER(SUBSTR(?x)) }", 1, 28, "',' and another argument: SUBSTR takes 2 or 3 arguments", ""},
		{"SELECT * { FILTER(STR(?x, ?y)) }", 1, 25, "')' to close the call of STR", ""},
		{"SELECT * { FILTER(RAND(1)) }", 1, 24, "RAND takes no arguments", ""},
		{"SELECT * { _:a ?p ?o } ASK", 1, 24, "expected end of query, found 'ASK'", ""},
		{"SELECT * { _:a ?p ?o . { _:a ?q ?r } }", 1, 26, "blank node label _:a is already used in another basic graph pattern, at line 1, column 12", ""},
		{"SELECT * { VALUES (?a ?b) { (1) } }", 1, 31, "this row has 1 values for the 2 variables", ""},
		{"SELECT * {} LIMIT -1", 1, 19, "expected a non-negative integer after LIMIT", ""},
		{"SELECT * {} LIMIT 99999999999999999999", 1, 19, "LIMIT 99999999999999999999 is too large", ""},
		{"SELECT * { <a b> ?p ?o }", 1, 12, "expected a triple pattern", ""},
		{"SELECT * { ?s ?p \"abc }", 1, 18, "string is not closed", ""},
		{"BASE <http://e/> SELECT * { <http://e/a##b> ?p ?o }", 1, 29, "at most one '#'", ""},
		{"", 1, 1, "expected SELECT, CONSTRUCT, DESCRIBE or ASK, found end of query", ""},
		{"\tSELECT * { ?x ?y }", 1, 19, "expected a variable, an IRI, a literal or a blank node", "\tSELECT * { ?x ?y }"},
	}
	for _, tc := range tests {
		_, err := sparql.Parse(tc.src)
		var se *sparql.SyntaxError
		if !errors.As(err, &se) {
			t.Errorf("Parse(%q): want a syntax error, got %v", tc.src, err)
			continue
		}
		line, col := se.LineCol()
		if line != tc.line || col != tc.col || !strings.Contains(se.Msg, tc.msg) {
			t.Errorf("Parse(%q):\n got line %d, column %d: %s\nwant line %d, column %d: ...%s...", tc.src, line, col, se.Msg, tc.line, tc.col, tc.msg)
		}
		if tc.caret != "" {
			lines := strings.Split(err.Error(), "\n")
			if len(lines) != 3 || lines[1] != "  "+tc.caret || !strings.HasSuffix(lines[2], "^") {
				t.Errorf("Parse(%q): the error does not show the line with a caret:\n%s", tc.src, err)
			}
			pad := strings.TrimSuffix(strings.TrimPrefix(lines[2], "  "), "^")
			if len([]rune(pad)) != tc.col-1 {
				t.Errorf("Parse(%q): caret at column %d, want %d:\n%s", tc.src, len([]rune(pad))+1, tc.col, err)
			}
		}
	}
}

// TestUpdateRefused checks that SPARQL Update requests (SPARQL 1.1 Query §19.8
// rules [29]-[51]) are recognised and refused with ErrUpdate, and that a broken
// update gets a syntax error instead.
func TestUpdateRefused(t *testing.T) {
	updates := []string{
		"INSERT DATA { <a> <b> <c> }",
		"PREFIX : <http://e/> DELETE { ?s :p ?o } INSERT { ?s :q ?o } WHERE { ?s :p ?o }",
		"WITH <http://e/g> DELETE { ?s ?p ?o } WHERE { ?s ?p ?o }",
		"LOAD SILENT <http://e/data> INTO GRAPH <http://e/g> ; CLEAR ALL ; DROP GRAPH <http://e/g>",
		"create graph <http://e/g>; copy default to <http://e/g>; move <http://e/a> to default; add <http://e/a> to graph <http://e/b>",
	}
	for _, u := range updates {
		_, err := sparql.Parse(u)
		if !errors.Is(err, sparql.ErrUpdate) {
			t.Errorf("Parse(%q) = %v, want the read-only error", u, err)
			continue
		}
		if !strings.Contains(err.Error(), "read-only") || !strings.HasPrefix(err.Error(), "line 1, column ") {
			t.Errorf("Parse(%q): unclear message %q", u, err)
		}
	}
	broken := []string{
		"INSERT DATA { ?s <b> <c> }",
		"DELETE DATA { _:x <b> <c> }",
		"CLEAR",
		"INSERT { <a> <b> <c> }",
		"WITH <http://e/g> DELETE WHERE { ?s ?p ?o }",
	}
	for _, u := range broken {
		_, err := sparql.Parse(u)
		if err == nil || errors.Is(err, sparql.ErrUpdate) {
			t.Errorf("Parse(%q) = %v, want a syntax error", u, err)
		}
	}
}

// TestParseTree checks parts of the tree: IRI resolution and prefixed names
// (§4.1.1), literal forms (§4.1.2), abbreviations kept as written, positions.
func TestParseTree(t *testing.T) {
	src := `BASE <http://example.org/wf/>
PREFIX wf: <terms#>
SELECT ?t WHERE { ?t a wf:Turbine ; wf:rating -1.5e0 , "x"@en , <site/1> , 'y'^^wf:code , true }`
	q, err := sparql.Parse(src)
	if err != nil {
		t.Fatal(err)
	}
	if got := q.Prologue[1].IRI; got != "http://example.org/wf/terms#" {
		t.Errorf("PREFIX resolved to %s", got)
	}
	block := q.Where.Elems[0].(*sparql.TriplesBlock)
	props := block.Triples[0].Props
	verb := props[0].Verb.(*sparql.IRI)
	if verb.IRI != rdf.RDFType || verb.Form != sparql.IRIKeywordA {
		t.Errorf("'a' parsed as %+v", verb)
	}
	if o := props[0].Objects[0].(*sparql.IRI); o.IRI != "http://example.org/wf/terms#Turbine" || o.Prefix != "wf" || o.Local != "Turbine" {
		t.Errorf("prefixed name parsed as %+v", o)
	}
	want := []rdf.Term{
		rdf.NewTyped("-1.5e0", rdf.XSDDouble),
		rdf.NewLangString("x", "en"),
		rdf.IRI("http://example.org/wf/site/1"),
		rdf.NewTyped("y", "http://example.org/wf/terms#code"),
		rdf.NewTyped("true", rdf.XSDBoolean),
	}
	for i, o := range props[1].Objects {
		var got rdf.Term
		switch o := o.(type) {
		case *sparql.Literal:
			got = o.Value
		case *sparql.IRI:
			got = o.IRI
		}
		if !rdf.SameTerm(got, want[i]) {
			t.Errorf("object %d = %v, want %v", i, got, want[i])
		}
	}
	if pos := props[1].Objects[1].Position(); src[pos:pos+3] != `"x"` {
		t.Errorf("position of the second object is %d (%q)", pos, src[pos:])
	}
}

// TestHostileInput checks that deeply nested, long-chained or degenerate text
// gives an error within the default limits rather than exhausting the stack
// or the memory of a later stage (our limits, common practice for parsers).
func TestHostileInput(t *testing.T) {
	const n = 20000 // within the length limit
	tests := []struct{ src, msg string }{
		{"SELECT * { FILTER(" + strings.Repeat("(", n) + "1" + strings.Repeat(")", n) + ") }", "nests more than 1000 levels"},
		{"SELECT * { " + strings.Repeat("{", n) + strings.Repeat("}", n) + " }", "nests more than 1000 levels"},
		{"SELECT * { ?s " + strings.Repeat("(", n) + "<p>" + " ?o }", "nests more than 1000 levels"},
		{"SELECT * { ?s ?p " + strings.Repeat("[ <p> ", n) + " }", "nests more than 1000 levels"},
		{"SELECT * { FILTER(1" + strings.Repeat(" + 1", n) + ") }", "nests more than 1000 levels"},
		{"SELECT * { FILTER(?a" + strings.Repeat(" || ?a && ?b", n) + ") }", "nests more than 1000 levels"},
		{"SELECT * { ?s <p>" + strings.Repeat("|<p>", n) + " ?o }", "nests more than 1000 levels"},
		{"SELECT * { {}" + strings.Repeat(" UNION {}", n) + " }", "nests more than 1000 levels"},
		{"SELECT * { ?s ?p ?o" + strings.Repeat(" OPTIONAL {}", n) + " }", "nests more than 1000 levels"},
		{"SELECT" + strings.Repeat(" (1 AS ?x)", n) + " {}", "nests more than 1000 levels"},
		{"SELECT * { ?s ?p " + strings.Repeat("(", n) + " }", "more than 1000 triple patterns"},
		{"SELECT * { ?s <p>" + strings.Repeat("/<p>", n) + " ?o }", "nests more than 1000 levels"},
		{"SELECT * { " + strings.Repeat("?s ?p ?o . ", n) + " }", "more than 1000 triple patterns"},
		{"SELECT * { ?s ?p ?o } #" + strings.Repeat("x", sparql.DefaultMaxLength), "more than the limit of 1048576 bytes"},
	}
	for _, tc := range tests {
		_, err := sparql.Parse(tc.src)
		if !errors.Is(err, sparql.ErrLimit) || !strings.Contains(err.Error(), tc.msg) {
			t.Errorf("Parse(%.40q...) = %.300v, want an error about a limit containing %q", tc.src, err, tc.msg)
		}
	}
	// Degenerate but within the limits: an ordinary syntax error.
	src := "SELECT * { ?s ?p ?o FILTER(?o " + strings.Repeat("< <a", n) + ") }"
	if _, err := sparql.Parse(src); err == nil || errors.Is(err, sparql.ErrLimit) || !strings.Contains(err.Error(), "expected") {
		t.Errorf("Parse(%.40q...) = %.300v, want a syntax error", src, err)
	}
}

// TestLimits checks each limit with small values: where the error points and
// that it wraps ErrLimit, and that a query just within a limit parses. The
// counting rules are ours (see Limits).
func TestLimits(t *testing.T) {
	tests := []struct {
		name      string
		lim       sparql.Limits
		ok, bad   string // ok is within the limit; bad is not
		line, col int    // where the error for bad points
		msg       string
	}{
		// The limit falls inside the é: the error is at the é.
		{"length", sparql.Limits{MaxLength: 13},
			"ASK { }    #", "ASK {\n}    #é", 2, 7, "the query is 14 bytes long, more than the limit of 13 bytes"},
		{"nested groups", sparql.Limits{MaxDepth: 3},
			"ASK { { { } } }", "ASK { { { { } } } }", 1, 11, "nests more than 3 levels"},
		{"a chain of operators", sparql.Limits{MaxDepth: 3},
			"ASK { FILTER(1 + 2) }", "ASK { FILTER(1 + 2 - 3) }", 1, 20, "nests more than 3 levels"},
		{"a signed number in a chain", sparql.Limits{MaxDepth: 3},
			"ASK { FILTER(1 -2) }", "ASK { FILTER(1 -2 * 3) }", 1, 19, "nests more than 3 levels"},
		{"group elements", sparql.Limits{MaxDepth: 3},
			"ASK { BIND(1 AS ?a) BIND(2 AS ?b) }", "ASK { BIND(1 AS ?a) BIND(2 AS ?b) BIND(3 AS ?c) }", 1, 40, "nests more than 3 levels"},
		{"UNION branches", sparql.Limits{MaxDepth: 3},
			"ASK { {} UNION {} }", "ASK { {} UNION {} UNION {} }", 1, 25, "nests more than 3 levels"},
		{"SELECT expressions", sparql.Limits{MaxDepth: 3},
			"SELECT (1 AS ?a) (2 AS ?b) {}", "SELECT (1 AS ?a) (2 AS ?b) (3 AS ?c) {}", 1, 29, "nests more than 3 levels"},
		{"path alternatives", sparql.Limits{MaxDepth: 3},
			"ASK { ?s <a>|<b>|<c> ?o }", "ASK { ?s <a>|<b>|<c>|<d> ?o }", 1, 21, "nests more than 3 levels"},
		{"collections", sparql.Limits{MaxDepth: 3, MaxTriples: 100},
			"ASK { ?s ?p ((1)) }", "ASK { ?s ?p (((1))) }", 1, 15, "nests more than 3 levels"},
		{"objects", sparql.Limits{MaxTriples: 2},
			"ASK { ?s ?p ?o1 , ?o2 }", "ASK { ?s ?p ?o1 , ?o2 ; ?q ?o3 }", 1, 28, "more than 2 triple patterns"},
		{"collection members", sparql.Limits{MaxTriples: 3},
			"ASK { ?s ?p (1) }", "ASK { ?s ?p (1 2) }", 1, 16, "more than 3 triple patterns"},
		{"path steps", sparql.Limits{MaxTriples: 2},
			"ASK { ?s <a>/<b> ?o }", "ASK { ?s <a>/<b>/<c> ?o }", 1, 22, "more than 2 triple patterns"},
		{"CONSTRUCT templates", sparql.Limits{MaxTriples: 2},
			"CONSTRUCT { ?s ?p ?o } WHERE { ?s ?p ?o }", "CONSTRUCT { ?s ?p ?o . ?o ?p ?s . ?s ?p ?s } WHERE {}", 1, 41, "more than 2 triple patterns"},
	}
	for _, tc := range tests {
		opt := sparql.Options{Limits: tc.lim}
		if _, err := sparql.ParseWith(tc.ok, opt); err != nil {
			t.Errorf("%s: %q: %v", tc.name, tc.ok, err)
		}
		_, err := sparql.ParseWith(tc.bad, opt)
		var se *sparql.SyntaxError
		if !errors.As(err, &se) || !errors.Is(err, sparql.ErrLimit) {
			t.Errorf("%s: %q: got %v, want an error about a limit", tc.name, tc.bad, err)
			continue
		}
		if line, col := se.LineCol(); line != tc.line || col != tc.col || !strings.Contains(se.Msg, tc.msg) {
			t.Errorf("%s: %q:\n got line %d, column %d: %s\nwant line %d, column %d: ...%s...", tc.name, tc.bad, line, col, se.Msg, tc.line, tc.col, tc.msg)
		}
	}
	// Parse applies the defaults, as do zero fields.
	nested := func(n int) string { return "ASK " + strings.Repeat("{", n) + strings.Repeat("}", n) }
	for _, parse := range []func(string) (*sparql.Query, error){
		sparql.Parse,
		func(s string) (*sparql.Query, error) {
			return sparql.ParseWith(s, sparql.Options{Limits: sparql.Limits{MaxTriples: 5}})
		},
	} {
		if _, err := parse(nested(sparql.DefaultMaxDepth)); err != nil {
			t.Errorf("%d nested groups: %v", sparql.DefaultMaxDepth, err)
		}
		if _, err := parse(nested(sparql.DefaultMaxDepth + 1)); !errors.Is(err, sparql.ErrLimit) {
			t.Errorf("%d nested groups: got %.100v, want an error about a limit", sparql.DefaultMaxDepth+1, err)
		}
	}
}

// TestLongLine checks that the source shown under an error on a long line is
// cut around the position, and that the caret still points at it.
func TestLongLine(t *testing.T) {
	src := "SELECT * { " + strings.Repeat("?s ?p ?o . ", 200) + "?s ?p } " + strings.Repeat("# comment ", 100)
	_, err := sparql.Parse(src)
	lines := strings.Split(fmt.Sprint(err), "\n")
	if len(lines) != 3 {
		t.Fatalf("got %q, want a message, a source line and a caret", err)
	}
	shown, caret := lines[1], lines[2]
	if n := len(shown); n > 120 || !strings.HasPrefix(shown, "  ...") || !strings.HasSuffix(shown, "...") {
		t.Errorf("shown line (%d bytes) is not cut on both sides: %q", n, shown)
	}
	at := len(caret) - 1
	if !strings.HasSuffix(caret, "^") || at >= len(shown) || shown[at:at+1] != "}" {
		t.Errorf("the caret does not point at the '}':\n%s\n%s", shown, caret)
	}
}
