package rewrite

import (
	"veneer/rewrite/algebra"
	"veneer/rewrite/sparql"
)

// Request is a query with what the SPARQL Protocol adds to its text.
type Request struct {
	Text string
	// Base is the IRI relative IRIs of the query resolve against until the query
	// sets its own BASE (the request's URL); empty for none.
	Base string
	// Dataset, when set, is the RDF dataset of default-graph-uri and
	// named-graph-uri; it replaces the query's FROM and FROM NAMED (SPARQL 1.1
	// Protocol §2.1.4).
	Dataset *algebra.Dataset
	// Limits bound the query text (zero fields: the parser's defaults).
	Limits sparql.Limits
}

// Compile parses a SPARQL query, translates it to algebra and plans it.
func (pl *Planner) Compile(text string) (*Plan, error) {
	p, _, err := pl.CompileRequest(Request{Text: text})
	return p, err
}

// CompileRequest parses, translates and plans a request, and returns the
// algebra too (for explain).
func (pl *Planner) CompileRequest(r Request) (*Plan, *algebra.Query, error) {
	limitsGiven := r.Limits != (sparql.Limits{})
	key := requestKey(r)
	if !limitsGiven {
		if p, q, ok := pl.cache.get(key); ok {
			return p, q, nil
		}
	}
	p, q, err := pl.compile(r)
	if err == nil && !limitsGiven {
		pl.cache.put(key, p, q)
	}
	return p, q, err
}

// CompileFresh compiles text without the plan cache: the cost a request pays
// the first time it is seen, which benchmarks measure.
func (pl *Planner) CompileFresh(text string) (*Plan, error) {
	p, _, err := pl.compile(Request{Text: text})
	return p, err
}

func (pl *Planner) compile(r Request) (*Plan, *algebra.Query, error) {
	ast, err := sparql.ParseWith(r.Text, sparql.Options{Base: r.Base, Limits: r.Limits})
	if err != nil {
		return nil, nil, err
	}
	q, err := algebra.Translate(ast)
	if err != nil {
		return nil, nil, err
	}
	if r.Dataset != nil {
		q.Dataset = *r.Dataset
	}
	p, err := pl.Plan(q)
	if err != nil {
		return nil, q, err
	}
	p.Base = r.Base
	for _, d := range ast.Prologue {
		if !d.IsPrefix {
			p.Base = string(d.IRI) // already resolved against the base before it
		}
	}
	return p, q, nil
}
