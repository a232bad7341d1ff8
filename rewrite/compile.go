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

// CompileRequest parses, translates and plans a request; cached reports that
// the plan cache served it, by its text or by its shape (the text without the
// data of its VALUES blocks, which are bound into the shape's plan).
//
// The first query of a shape gets a plan made for its own data, in which the
// union branches that no data row fits are gone; from the second on, the
// shape's queries share one plan that takes their data at each run.
func (pl *Planner) CompileRequest(r Request) (p *Plan, cached bool, err error) {
	if r.Limits != (sparql.Limits{}) {
		p, err := pl.compile(r) // plans under other limits are not for the cache
		return p, false, err
	}
	key := requestKey(r)
	if p, ok := pl.cache.get(key); ok {
		return p, true, nil
	}
	ast, err := parse(r)
	if err != nil {
		return nil, false, err
	}
	if len(ast.Data) > 0 {
		data := blockData(ast)
		shape := shapeKey(r, ast, data)
		lp, seen := pl.cache.get(shape)
		switch {
		case lp == unshared:
		case lp != nil:
			return lp.bind(data), true, nil
		case seen:
			lp, shared, err := pl.liftPlan(r, ast)
			if err != nil {
				return nil, false, err
			}
			if !shared {
				pl.cache.put(shape, unshared)
			} else {
				pl.cache.put(shape, lp)
			}
			return lp.bind(data), false, nil
		default:
			pl.cache.put(shape, nil)
		}
	}
	p, err = pl.planAST(r, ast)
	if err == nil {
		pl.cache.put(key, p)
	}
	return p, false, err
}

// unshared marks a shape whose data stays inside its lifted plan: its queries
// are planned one by one.
var unshared = &Plan{}

// CompileFresh compiles text without the plan cache: the cost a request pays
// the first time it is seen, which benchmarks measure.
func (pl *Planner) CompileFresh(text string) (*Plan, error) {
	return pl.compile(Request{Text: text})
}

// Translate parses a request and translates it to algebra, as the planner
// sees it (for explain).
func Translate(r Request) (*algebra.Query, error) {
	ast, err := parse(r)
	if err != nil {
		return nil, err
	}
	return translate(r, ast)
}

func (pl *Planner) compile(r Request) (*Plan, error) {
	ast, err := parse(r)
	if err != nil {
		return nil, err
	}
	return pl.planAST(r, ast)
}

func parse(r Request) (*sparql.Query, error) {
	return sparql.ParseWith(r.Text, sparql.Options{Base: r.Base, Limits: r.Limits})
}

func translate(r Request, ast *sparql.Query) (*algebra.Query, error) {
	q, err := algebra.Translate(ast)
	if err != nil {
		return nil, err
	}
	if r.Dataset != nil {
		q.Dataset = *r.Dataset
	}
	return q, nil
}

func (pl *Planner) planAST(r Request, ast *sparql.Query) (*Plan, error) {
	q, err := translate(r, ast)
	if err != nil {
		return nil, err
	}
	p, err := pl.Plan(q)
	if err != nil {
		return nil, err
	}
	p.Base = baseOf(r, ast)
	return p, nil
}

// baseOf is the base IRI in effect after the query's prologue.
func baseOf(r Request, ast *sparql.Query) string {
	base := r.Base
	for _, d := range ast.Prologue {
		if !d.IsPrefix {
			base = string(d.IRI) // already resolved against the base before it
		}
	}
	return base
}
