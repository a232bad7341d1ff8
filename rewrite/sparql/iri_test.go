package sparql_test

import (
	"testing"

	"veneer/rewrite/sparql"
)

// TestRelativeIRIs checks where the parser takes the base from (SPARQL 1.1
// Query §4.1.1.2: BASE per RFC 3986 §5.1.1, else the retrieval IRI per
// §5.1.3). Resolution itself is rdf.ResolveIRI's, tested in catalog/rdf
// against the RFC's examples; the expected IRIs here follow RFC 3986 §5.2.
func TestRelativeIRIs(t *testing.T) {
	tests := []struct {
		name, base, src, want string
	}{
		{"BASE, with dot segments", "",
			"BASE <http://example.org/wf/site/1> ASK { <../turbine/7> ?p ?o }", "http://example.org/wf/turbine/7"},
		{"a second BASE resolves against the first", "",
			"BASE <http://example.org/wf/> BASE <parts/> ASK { <blade> ?p ?o }", "http://example.org/wf/parts/blade"},
		{"PREFIX IRIs resolve against BASE", "",
			"BASE <http://example.org/wf/> PREFIX t: <turbine/> ASK { t:7 ?p ?o }", "http://example.org/wf/turbine/7"},
		{"fragment against BASE", "",
			"BASE <http://example.org/wf/terms> ASK { <#Turbine> ?p ?o }", "http://example.org/wf/terms#Turbine"},
		{"retrieval IRI", "http://example.org/queries/q1.rq",
			"ASK { <data/t1> ?p ?o }", "http://example.org/queries/data/t1"},
		{"BASE wins over the retrieval IRI", "http://example.org/queries/q1.rq",
			"BASE <http://example.org/wf/> ASK { <t1> ?p ?o }", "http://example.org/wf/t1"},
		// Our choice, with no source: with no base at all the reference stays as written.
		{"no base", "", "ASK { <turbine/../7> ?p ?o }", "turbine/../7"},
	}
	for _, tc := range tests {
		q, err := sparql.ParseBase(tc.src, tc.base)
		if err != nil {
			t.Errorf("%s: %v", tc.name, err)
			continue
		}
		subj := q.Where.Elems[0].(*sparql.TriplesBlock).Triples[0].Subject.(*sparql.IRI)
		if string(subj.IRI) != tc.want {
			t.Errorf("%s: subject is <%s>, want <%s>", tc.name, subj.IRI, tc.want)
		}
	}
}
