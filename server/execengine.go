package server

import (
	"context"
	"database/sql"

	"veneer/rewrite"
	"veneer/rewrite/algebra"
	"veneer/rewrite/exec"
	"veneer/server/results"
)

// FromExec adapts veneer's query engine to the server.
func FromExec(e *exec.Engine) Engine { return execEngine{e} }

type execEngine struct{ e *exec.Engine }

// request is the planner's form of a protocol query: default-graph-uri and
// named-graph-uri, when given, are its dataset (SPARQL 1.1 Protocol §2.1.4).
func request(q Query) rewrite.Request {
	r := rewrite.Request{Text: q.Text, Base: q.Base}
	if len(q.DefaultGraphs) > 0 || len(q.NamedGraphs) > 0 {
		r.Dataset = &algebra.Dataset{Default: q.DefaultGraphs, Named: q.NamedGraphs}
	}
	return r
}

// Prepare implements Engine.
func (x execEngine) Prepare(q Query) (Prepared, error) {
	p, err := x.e.Prepare(request(q))
	if err != nil {
		return nil, err
	}
	return execPrepared{x.e, q, p}, nil
}

// execPrepared is a query prepared by veneer's engine.
type execPrepared struct {
	e *exec.Engine
	q Query
	p *exec.Prepared
}

// Start implements Prepared. An ASK query runs when its Boolean is asked
// for; the cursor of any other form runs its SQL when it is first advanced.
func (x execPrepared) Start(ctx context.Context) (*Answer, error) {
	var c *exec.Cursor
	a := &Answer{
		// The cursor does not show its plan; planning again is cheap next to
		// a query slow enough to be logged.
		SQL: func() []string {
			p, _, err := x.e.Planner.CompileRequest(request(x.q))
			if err != nil {
				return nil
			}
			return []string{rewrite.Explain(p)}
		},
		Stats: func() Stats {
			took, cached := x.p.Compilation()
			st := Stats{Translation: took, PlanCached: cached}
			if c != nil {
				st.ResidualEvaluations = c.ResidualEvaluations()
			}
			return st
		},
	}
	if x.p.Form() == algebra.Ask {
		a.Kind = results.Boolean
		a.Boolean = func() (bool, error) {
			var err error
			if c, err = x.p.Run(ctx); err != nil {
				return false, err
			}
			defer c.Close()
			return c.Boolean(), c.Err()
		}
		return a, nil
	}
	c, err := x.p.Run(ctx)
	if err != nil {
		return nil, err
	}
	if c.Form() == algebra.Select {
		a.Kind, a.Solutions = results.Solutions, c
	} else {
		a.Kind, a.Graph = results.Graph, c
	}
	return a, nil
}

// Ready implements Engine.
func (x execEngine) Ready(ctx context.Context) error { return x.e.Ready(ctx) }

// Explain implements Explainer: the algebra of the query and the planner's
// account of its plan.
func (x execEngine) Explain(_ context.Context, q Query) (*Explanation, error) {
	p, _, err := x.e.Planner.CompileRequest(request(q))
	if err != nil {
		return nil, &exec.Error{Kind: exec.BadQuery, Err: err}
	}
	aq, err := rewrite.Translate(request(q))
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
