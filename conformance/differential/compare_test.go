package differential

import (
	"strings"
	"testing"

	"veneer/catalog/rdf"
)

// answer builds solutions over the variables vars from rows of terms; a nil
// term leaves its variable unbound.
func answer(vars []string, rows ...[]rdf.Term) *Answer {
	a := &Answer{Vars: vars}
	for _, r := range rows {
		s := Solution{}
		for i, t := range r {
			if t != nil {
				s[vars[i]] = t
			}
		}
		a.Solutions = append(a.Solutions, s)
	}
	return a
}

func lit(lex, dt string) rdf.Literal { return rdf.NewTyped(lex, rdf.IRI(rdf.XSDNS+dt)) }

func TestCompare(t *testing.T) {
	x, y := rdf.IRI("http://example.org/x"), rdf.IRI("http://example.org/y")
	b1, b2, b3 := rdf.BlankNode("b1"), rdf.BlankNode("b2"), rdf.BlankNode("b3")
	v := []string{"s", "o"}
	yes, no := true, false
	cases := []struct {
		name      string
		q         Query
		want, got *Answer
		all       *Answer
		// diff is a part of the expected difference; empty means equal.
		diff string
	}{
		{name: "same bag in another order", q: Query{},
			want: answer(v, []rdf.Term{x, lit("1", "integer")}, []rdf.Term{y, lit("2", "integer")}),
			got:  answer(v, []rdf.Term{y, lit("2", "integer")}, []rdf.Term{x, lit("1", "integer")})},
		{name: "a duplicate counts", q: Query{},
			want: answer(v, []rdf.Term{x, nil}, []rdf.Term{x, nil}),
			got:  answer(v, []rdf.Term{x, nil}),
			diff: "1 missing"},
		{name: "unbound is not a value", q: Query{},
			want: answer(v, []rdf.Term{x, nil}),
			got:  answer(v, []rdf.Term{x, rdf.NewString("")}),
			diff: "1 unexpected"},
		{name: "numbers by value", q: Query{},
			want: answer(v, []rdf.Term{x, lit("1.98", "double")}, []rdf.Term{y, lit("12.5", "decimal")}),
			got:  answer(v, []rdf.Term{x, lit("1.98E0", "double")}, []rdf.Term{y, lit("12.50", "decimal")})},
		{name: "numbers keep their datatype", q: Query{},
			want: answer(v, []rdf.Term{x, lit("2", "decimal")}),
			got:  answer(v, []rdf.Term{x, lit("2", "integer")}),
			diff: "1 missing"},
		{name: "strings by lexical form", q: Query{},
			want: answer(v, []rdf.Term{x, rdf.NewString("WEISS")}),
			got:  answer(v, []rdf.Term{x, rdf.NewString("WEIß")}),
			diff: "1 missing"},
		{name: "language tags ignore case", q: Query{},
			want: answer(v, []rdf.Term{x, rdf.NewLangString("a", "en")}),
			got:  answer(v, []rdf.Term{x, rdf.NewLangString("a", "EN")})},
		{name: "blank nodes up to renaming", q: Query{},
			want: answer(v, []rdf.Term{b1, x}, []rdf.Term{b2, y}, []rdf.Term{b1, y}),
			got:  answer(v, []rdf.Term{b3, x}, []rdf.Term{b3, y}, []rdf.Term{b1, y})},
		{name: "blank nodes shared differently", q: Query{},
			want: answer(v, []rdf.Term{b1, x}, []rdf.Term{b1, y}),
			got:  answer(v, []rdf.Term{b1, x}, []rdf.Term{b2, y}),
			diff: "no renaming"},
		{name: "ordered: same order", q: Query{Mode: Ordered},
			want: answer(v, []rdf.Term{x, nil}, []rdf.Term{y, nil}),
			got:  answer(v, []rdf.Term{x, nil}, []rdf.Term{y, nil})},
		{name: "ordered: another order", q: Query{Mode: Ordered},
			want: answer(v, []rdf.Term{x, nil}, []rdf.Term{y, nil}),
			got:  answer(v, []rdf.Term{y, nil}, []rdf.Term{x, nil}),
			diff: "solution 1 differs"},
		{name: "limited: any solutions of the right number", q: Query{Mode: Limited},
			want: answer(v, []rdf.Term{x, nil}),
			got:  answer(v, []rdf.Term{y, nil}),
			all:  answer(v, []rdf.Term{x, nil}, []rdf.Term{y, nil})},
		{name: "limited: a solution the query does not have", q: Query{Mode: Limited},
			want: answer(v, []rdf.Term{x, nil}),
			got:  answer(v, []rdf.Term{x, x}),
			all:  answer(v, []rdf.Term{x, nil}, []rdf.Term{y, nil}),
			diff: "is not a solution"},
		{name: "limited: too many", q: Query{Mode: Limited},
			want: answer(v, []rdf.Term{x, nil}),
			got:  answer(v, []rdf.Term{x, nil}, []rdf.Term{y, nil}),
			all:  answer(v, []rdf.Term{x, nil}, []rdf.Term{y, nil}),
			diff: "expected 1 solutions, got 2"},
		{name: "approximate within the tolerance", q: Query{Approx: []string{"o"}},
			want: answer(v, []rdf.Term{x, lit("3.383838383838383838", "decimal")}, []rdf.Term{y, lit("1", "decimal")}),
			got:  answer(v, []rdf.Term{x, lit("3.38383838383838383838", "decimal")}, []rdf.Term{y, lit("1.0000000000001", "decimal")})},
		{name: "approximate but off", q: Query{Approx: []string{"o"}},
			want: answer(v, []rdf.Term{x, lit("3.38", "decimal")}),
			got:  answer(v, []rdf.Term{x, lit("3.39", "decimal")}),
			diff: "1 missing"},
		{name: "approximate keeps the datatype", q: Query{Approx: []string{"o"}},
			want: answer(v, []rdf.Term{x, lit("2.5", "decimal")}),
			got:  answer(v, []rdf.Term{x, lit("2.5", "double")}),
			diff: "1 missing"},
		{name: "group concatenations in any order", q: Query{Concat: map[string]string{"o": "|"}},
			want: answer(v, []rdf.Term{x, rdf.NewString("a|b|c")}),
			got:  answer(v, []rdf.Term{x, rdf.NewString("c|a|b")})},
		{name: "group concatenations with other parts", q: Query{Concat: map[string]string{"o": "|"}},
			want: answer(v, []rdf.Term{x, rdf.NewString("a|b|c")}),
			got:  answer(v, []rdf.Term{x, rdf.NewString("a|b")}),
			diff: "1 missing"},
		{name: "other variables", q: Query{},
			want: answer(v), got: answer([]string{"s"}),
			diff: "expected the variables"},
		{name: "booleans", q: Query{},
			want: &Answer{Boolean: &yes}, got: &Answer{Boolean: &no},
			diff: "expected true, got false"},
		{name: "a boolean for solutions", q: Query{},
			want: &Answer{Boolean: &yes}, got: answer(v),
			diff: "expected a boolean, got solutions"},
		{name: "graphs up to blank nodes, duplicates ignored", q: Query{Graph: true},
			want: &Answer{Graph: true, Triples: []rdf.Triple{{S: b1, P: x, O: y}, {S: x, P: x, O: b1}}},
			got:  &Answer{Graph: true, Triples: []rdf.Triple{{S: x, P: x, O: b2}, {S: b2, P: x, O: y}, {S: b2, P: x, O: y}}}},
		{name: "graphs that differ", q: Query{Graph: true},
			want: &Answer{Graph: true, Triples: []rdf.Triple{{S: x, P: x, O: y}}},
			got:  &Answer{Graph: true, Triples: []rdf.Triple{{S: x, P: x, O: x}}},
			diff: "1 missing"},
	}
	for _, c := range cases {
		err := Compare(c.q, c.want, c.got, c.all)
		switch {
		case c.diff == "" && err != nil:
			t.Errorf("%s: %v, want equal", c.name, err)
		case c.diff != "" && err == nil:
			t.Errorf("%s: equal, want a difference (%s)", c.name, c.diff)
		case c.diff != "" && !strings.Contains(err.Error(), c.diff):
			t.Errorf("%s: %v, want a difference mentioning %q", c.name, err, c.diff)
		}
	}
}

func TestParseResultsJSON(t *testing.T) {
	// The example of SPARQL 1.1 Query Results JSON Format §3.2.2, shortened.
	doc := `{"head": {"vars": ["x", "hpage", "name", "age", "blank"]},
	  "results": {"bindings": [{
	    "x": {"type": "bnode", "value": "r1"},
	    "hpage": {"type": "uri", "value": "http://work.example.org/alice/"},
	    "name": {"type": "literal", "value": "Alice", "xml:lang": "en"},
	    "age": {"type": "literal", "value": "30", "datatype": "http://www.w3.org/2001/XMLSchema#integer"}
	  }]}}`
	a, err := ParseResultsJSON([]byte(doc))
	if err != nil {
		t.Fatal(err)
	}
	want := Solution{
		"x":     rdf.BlankNode("r1"),
		"hpage": rdf.IRI("http://work.example.org/alice/"),
		"name":  rdf.NewLangString("Alice", "en"),
		"age":   lit("30", "integer"),
	}
	if len(a.Solutions) != 1 || len(a.Solutions[0]) != len(want) {
		t.Fatalf("got %v, want one solution %v", a.Solutions, want)
	}
	for k, v := range want {
		if a.Solutions[0][k] != v {
			t.Errorf("?%s = %v, want %v", k, a.Solutions[0][k], v)
		}
	}
	if b, err := ParseResultsJSON([]byte(`{"head": {}, "boolean": true}`)); err != nil || b.Boolean == nil || !*b.Boolean {
		t.Errorf("boolean answer: %v, %v", b, err)
	}
	for _, bad := range []string{`{"head": {}}`, `{"head": {}, "boolean": true, "results": {"bindings": []}}`,
		`{"results": {"bindings": [{"x": {"type": "triple", "value": "?"}}]}}`, `[`} {
		if _, err := ParseResultsJSON([]byte(bad)); err == nil {
			t.Errorf("ParseResultsJSON(%s): no error", bad)
		}
	}
}
