package bench

import (
	"testing"

	"veneer/catalog/rdf"
)

func TestCompare(t *testing.T) {
	xsd := func(local string) rdf.IRI { return rdf.IRI(rdf.XSDNS + local) }
	a, b := rdf.IRI("https://data.veneer.example/windfarm/site/A"), rdf.IRI("https://data.veneer.example/windfarm/site/B")
	sel := func(rows ...[]rdf.Term) *Answer { return &Answer{Vars: []string{"s", "n"}, Solutions: rows} }
	row := func(s rdf.Term, n rdf.Term) []rdf.Term { return []rdf.Term{s, n} }
	yes, no := true, false
	one := rdf.NewTyped("1", xsd("integer"))
	tests := []struct {
		name      string
		got, want *Answer
		ordered   bool
		same      bool
	}{
		{"same multiset, other order", sel(row(a, one), row(b, nil)), sel(row(b, nil), row(a, one)), false, true},
		{"order counts when ordered", sel(row(a, one), row(b, nil)), sel(row(b, nil), row(a, one)), true, false},
		{"a duplicate is a difference", sel(row(a, one), row(a, one)), sel(row(a, one)), false, false},
		{"unbound is not a value", sel(row(a, nil)), sel(row(a, one)), false, false},
		// Common practice, no source: sums of floats in another order differ in
		// the last digits.
		{"decimals within 1e-9", sel(row(a, rdf.NewTyped("3.781234567890123", xsd("decimal")))),
			sel(row(a, rdf.NewTyped("3.7812345678901", xsd("decimal")))), false, true},
		{"decimals apart", sel(row(a, rdf.NewTyped("3.7812", xsd("decimal")))),
			sel(row(a, rdf.NewTyped("3.7813", xsd("decimal")))), false, false},
		// RDF 1.1 Concepts §3.3: a literal's datatype is part of the term.
		{"datatypes differ", sel(row(a, rdf.NewTyped("1", xsd("decimal")))), sel(row(a, one)), false, false},
		{"a simple literal is not a language string", sel(row(a, rdf.NewString("x"))),
			sel(row(a, rdf.NewLangString("x", "en"))), false, false},
		{"variables differ", &Answer{Vars: []string{"s"}, Solutions: [][]rdf.Term{{a}}}, sel(), false, false},
		{"booleans", &Answer{Boolean: &yes}, &Answer{Boolean: &yes}, false, true},
		{"booleans differ", &Answer{Boolean: &no}, &Answer{Boolean: &yes}, false, false},
		{"solutions for a boolean", sel(), &Answer{Boolean: &yes}, false, false},
		{"triples as sets", &Answer{Triples: []rdf.Triple{{S: a, P: a, O: b}, {S: a, P: a, O: b}}},
			&Answer{Triples: []rdf.Triple{{S: a, P: a, O: b}}}, false, true},
		{"a missing triple", &Answer{Triples: []rdf.Triple{}}, &Answer{Triples: []rdf.Triple{{S: a, P: a, O: b}}}, false, false},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			diff := Compare(tt.got, tt.want, tt.ordered)
			if (diff == "") != tt.same {
				t.Errorf("Compare = %q, want same = %v", diff, tt.same)
			}
		})
	}
}

// TestParseJSON reads the example of SPARQL 1.1 Query Results JSON Format §4
// (abridged to the term kinds veneer writes).
func TestParseJSON(t *testing.T) {
	doc := `{"head": {"vars": ["book", "title", "n"]},
	 "results": {"bindings": [
	   {"book": {"type": "uri", "value": "http://example.org/book/book6"},
	    "title": {"type": "literal", "value": "Harry Potter and the Half-Blood Prince", "xml:lang": "en"},
	    "n": {"type": "literal", "value": "7", "datatype": "http://www.w3.org/2001/XMLSchema#integer"}},
	   {"book": {"type": "uri", "value": "http://example.org/book/book7"}, "title": {"type": "literal", "value": "Plain"}}
	 ]}}`
	a, err := ParseJSON([]byte(doc))
	if err != nil {
		t.Fatal(err)
	}
	want := [][]rdf.Term{
		{rdf.IRI("http://example.org/book/book6"), rdf.NewLangString("Harry Potter and the Half-Blood Prince", "en"),
			rdf.NewTyped("7", rdf.IRI(rdf.XSDNS+"integer"))},
		{rdf.IRI("http://example.org/book/book7"), rdf.NewString("Plain"), nil},
	}
	if diff := Compare(a, &Answer{Vars: []string{"book", "title", "n"}, Solutions: want}, true); diff != "" {
		t.Error(diff)
	}
	if _, err := ParseJSON([]byte(`{"head": {}}`)); err == nil {
		t.Error("a document with neither results nor boolean was accepted")
	}
	b, err := ParseJSON([]byte(`{"head": {}, "boolean": true}`))
	if err != nil || b.Boolean == nil || !*b.Boolean {
		t.Errorf("boolean document: %v, %v", b, err)
	}
}
