package differential

import (
	"encoding/json"
	"fmt"

	"veneer/catalog/rdf"
)

// Answer is the answer to one query: solutions (SELECT), a boolean (ASK) or
// triples (CONSTRUCT).
type Answer struct {
	// Vars are the variables the results' head lists.
	Vars      []string
	Solutions []Solution
	Boolean   *bool
	Triples   []rdf.Triple
	// Graph says the answer is triples.
	Graph bool
}

// Solution binds variables to terms; an unbound variable has no entry.
type Solution map[string]rdf.Term

// ParseResultsJSON reads a SPARQL 1.1 Query Results JSON document (W3C SPARQL
// 1.1 Query Results JSON Format, §3).
func ParseResultsJSON(b []byte) (*Answer, error) {
	var doc struct {
		Head struct {
			Vars []string `json:"vars"`
		} `json:"head"`
		Boolean *bool `json:"boolean"`
		Results *struct {
			Bindings []map[string]jsonTerm `json:"bindings"`
		} `json:"results"`
	}
	if err := json.Unmarshal(b, &doc); err != nil {
		return nil, fmt.Errorf("reading SPARQL JSON results: %w", err)
	}
	a := &Answer{Vars: doc.Head.Vars, Boolean: doc.Boolean}
	switch {
	case doc.Boolean != nil && doc.Results != nil:
		return nil, fmt.Errorf("reading SPARQL JSON results: both a boolean and bindings")
	case doc.Boolean != nil:
		return a, nil
	case doc.Results == nil:
		return nil, fmt.Errorf("reading SPARQL JSON results: neither a boolean nor bindings")
	}
	for i, b := range doc.Results.Bindings {
		s := Solution{}
		for v, jt := range b {
			t, err := jt.term()
			if err != nil {
				return nil, fmt.Errorf("reading SPARQL JSON results: solution %d, variable %s: %w", i+1, v, err)
			}
			s[v] = t
		}
		a.Solutions = append(a.Solutions, s)
	}
	return a, nil
}

// jsonTerm is an RDF term in SPARQL JSON results (§3.2.2).
type jsonTerm struct {
	Type     string `json:"type"`
	Value    string `json:"value"`
	Lang     string `json:"xml:lang"`
	Datatype string `json:"datatype"`
}

func (t jsonTerm) term() (rdf.Term, error) {
	switch t.Type {
	case "uri":
		return rdf.IRI(t.Value), nil
	case "bnode":
		return rdf.BlankNode(t.Value), nil
	case "literal", "typed-literal": // typed-literal: the 2008 draft's form, still written by some
		switch {
		case t.Lang != "":
			return rdf.NewLangString(t.Value, t.Lang), nil
		case t.Datatype != "":
			return rdf.NewTyped(t.Value, rdf.IRI(t.Datatype)), nil
		}
		return rdf.NewString(t.Value), nil
	}
	return nil, fmt.Errorf("unknown term type %q", t.Type)
}

// ParseGraph reads the N-Triples answer of a graph query.
func ParseGraph(b []byte) (*Answer, error) {
	doc, err := rdf.ParseNTriples("answer", b)
	if err != nil {
		return nil, fmt.Errorf("reading N-Triples: %w", err)
	}
	return &Answer{Graph: true, Triples: doc.Triples()}, nil
}
