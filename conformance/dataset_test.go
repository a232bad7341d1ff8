package conformance

import (
	"errors"
	"reflect"
	"testing"

	"veneer/catalog/rdf"
)

// Dataset comparison: equality up to blank node renaming is RDF 1.1 Concepts
// §3.6 (graph isomorphism) and §4 (datasets); that a quad may not come twice is
// SPARQL 1.1 Query §18.5 (solution multiplicity of a basic graph pattern
// without blank nodes). The cases are made up.
func TestCompareDatasets(t *testing.T) {
	ex := func(s string) rdf.IRI { return rdf.IRI("http://example.com/" + s) }
	name := ex("name")
	g := ex("g")
	q := func(s, o rdf.Term, graph rdf.Term) rdf.Quad { return rdf.Quad{S: s, P: name, O: o, G: graph} }
	venus, bob := rdf.NewString("Venus"), rdf.NewString("Bob")
	tests := []struct {
		name      string
		want, got []rdf.Quad
		mismatch  *Mismatch // nil: the datasets agree
	}{
		{
			name: "same quads, blank nodes renamed",
			want: []rdf.Quad{q(rdf.BlankNode("a"), venus, nil), q(rdf.BlankNode("b"), bob, g)},
			got:  []rdf.Quad{q(rdf.BlankNode("x1"), venus, nil), q(rdf.BlankNode("x2"), bob, g)},
		},
		{
			name: "a triple in the wrong graph",
			want: []rdf.Quad{q(ex("s"), venus, g)},
			got:  []rdf.Quad{q(ex("s"), venus, nil)},
			mismatch: &Mismatch{Want: 1, Got: 1,
				Missing:    []string{`<http://example.com/s> <http://example.com/name> "Venus" <http://example.com/g> .`},
				Unexpected: []string{`<http://example.com/s> <http://example.com/name> "Venus" .`}},
		},
		{
			name: "a duplicate solution",
			want: []rdf.Quad{q(ex("s"), venus, nil)},
			got:  []rdf.Quad{q(ex("s"), venus, nil), q(ex("s"), venus, nil)},
			mismatch: &Mismatch{Want: 1, Got: 1, Isomorphic: true,
				Duplicates: []string{`<http://example.com/s> <http://example.com/name> "Venus" .`}},
		},
		{
			name:     "one blank node where two are expected",
			want:     []rdf.Quad{q(rdf.BlankNode("a"), venus, nil), q(rdf.BlankNode("b"), bob, nil)},
			got:      []rdf.Quad{q(rdf.BlankNode("x"), venus, nil), q(rdf.BlankNode("x"), bob, nil)},
			mismatch: &Mismatch{Want: 2, Got: 2},
		},
		{
			name: "a missing blank-node quad is shown masked",
			want: []rdf.Quad{q(rdf.BlankNode("a"), venus, nil), q(rdf.BlankNode("b"), venus, nil)},
			got:  []rdf.Quad{q(rdf.BlankNode("a"), venus, nil)},
			mismatch: &Mismatch{Want: 2, Got: 1,
				Missing: []string{`_:* <http://example.com/name> "Venus" .`}},
		},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			err := CompareDatasets(tt.want, tt.got)
			if tt.mismatch == nil {
				if err != nil {
					t.Fatalf("CompareDatasets: %v", err)
				}
				return
			}
			var m *Mismatch
			if !errors.As(err, &m) {
				t.Fatalf("CompareDatasets: %v, want a *Mismatch", err)
			}
			if !reflect.DeepEqual(m, tt.mismatch) {
				t.Errorf("CompareDatasets:\n got %+v\nwant %+v", m, tt.mismatch)
			}
			if m.Error() == "" {
				t.Error("empty message")
			}
		})
	}
}
