package rewrite

import (
	"veneer/rewrite/algebra"
	"veneer/rewrite/sparql"
)

// Compile parses a SPARQL query, translates it to algebra and plans it.
func (pl *Planner) Compile(text string) (*Plan, error) {
	ast, err := sparql.Parse(text)
	if err != nil {
		return nil, err
	}
	q, err := algebra.Translate(ast)
	if err != nil {
		return nil, err
	}
	return pl.Plan(q)
}
