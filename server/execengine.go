package server

import (
	"context"
	"database/sql"
	"errors"

	"veneer/rewrite"
	"veneer/rewrite/algebra"
	"veneer/rewrite/exec"
	"veneer/rewrite/sparql"
	"veneer/server/results"
)

// FromExec adapts veneer's query engine to the server. The engine answers
// the four query forms over the service's own dataset; a request that names a
// dataset with default-graph-uri or named-graph-uri is refused with a client
// error until the engine takes one.
func FromExec(e *exec.Engine) Engine { return execEngine{e} }

type execEngine struct{ e *exec.Engine }

var errNoProtocolDataset = &exec.Error{Kind: exec.BadQuery,
	Err: errors.New("this endpoint does not take default-graph-uri or named-graph-uri yet; name graphs in the query with GRAPH")}

// Query implements Engine.
func (x execEngine) Query(ctx context.Context, q Query) (*Answer, error) {
	if len(q.DefaultGraphs) > 0 || len(q.NamedGraphs) > 0 {
		return nil, errNoProtocolDataset
	}
	c, err := x.e.Query(ctx, q.Text)
	if err != nil {
		return nil, err
	}
	a := &Answer{
		// The cursor does not show its plan; planning again is cheap next to
		// a query slow enough to be logged.
		SQL: func() []string {
			p, err := x.e.Planner.Compile(q.Text)
			if err != nil {
				return nil
			}
			return []string{rewrite.Explain(p)}
		},
		Stats: func() Stats { return Stats{ResidualEvaluations: c.ResidualEvaluations()} },
	}
	switch c.Form() {
	case algebra.Select:
		a.Kind, a.Solutions = results.Solutions, c
	case algebra.Ask:
		a.Kind, a.Boolean = results.Boolean, c.Boolean()
		err := c.Err()
		c.Close()
		if err != nil {
			return nil, err
		}
	default:
		a.Kind, a.Graph = results.Graph, c
	}
	return a, nil
}

// Ready implements Engine.
func (x execEngine) Ready(ctx context.Context) error { return x.e.Ready(ctx) }

// Explain implements Explainer: the algebra of the query and the planner's
// account of its plan.
func (x execEngine) Explain(_ context.Context, q Query) (*Explanation, error) {
	if len(q.DefaultGraphs) > 0 || len(q.NamedGraphs) > 0 {
		return nil, errNoProtocolDataset
	}
	ast, err := sparql.Parse(q.Text)
	if err != nil {
		return nil, &exec.Error{Kind: exec.BadQuery, Err: err}
	}
	aq, err := algebra.Translate(ast)
	if err != nil {
		return nil, &exec.Error{Kind: exec.BadQuery, Err: err}
	}
	p, err := x.e.Planner.Plan(aq)
	if err != nil {
		return nil, &exec.Error{Kind: exec.BadQuery, Err: err}
	}
	return &Explanation{Algebra: aq.String(), Plan: rewrite.Explain(p)}, nil
}

// PoolStats implements PoolStater for sources that report database/sql pool
// statistics.
func (x execEngine) PoolStats() map[string]sql.DBStats {
	if st, ok := x.e.Source.(interface{ Stats() sql.DBStats }); ok {
		return map[string]sql.DBStats{"default": st.Stats()}
	}
	return nil
}
