package exec

import (
	"context"
	"errors"
	"time"

	"veneer/catalog/source"
	"veneer/rewrite"
	"veneer/rewrite/algebra"
)

// Engine answers SPARQL query text from one catalog over one source.
type Engine struct {
	Planner *rewrite.Planner
	Source  source.Source
	// Options tune every run.
	Options Options
}

// Query compiles and starts a query. The returned cursor must be closed.
func (e *Engine) Query(ctx context.Context, text string) (*Cursor, error) {
	return e.QueryRequest(ctx, rewrite.Request{Text: text})
}

// QueryRequest compiles and starts a query with what the protocol adds to it
// (base IRI, dataset). The returned cursor must be closed.
func (e *Engine) QueryRequest(ctx context.Context, r rewrite.Request) (*Cursor, error) {
	p, err := e.Prepare(r)
	if err != nil {
		return nil, err
	}
	return p.Run(ctx)
}

// Prepared is a compiled query, ready to run on its engine's source.
type Prepared struct {
	e      *Engine
	plan   *rewrite.Plan
	took   time.Duration // parsing and planning
	cached bool          // the plan came from the plan cache
}

// Prepare compiles a query with what the protocol adds to it (base IRI,
// dataset). It reads nothing from the source.
func (e *Engine) Prepare(r rewrite.Request) (*Prepared, error) {
	start := time.Now()
	p, cached, err := e.Planner.CompileRequest(r)
	took := time.Since(start)
	if err != nil {
		if pe := planError(err); pe != nil {
			return nil, pe
		}
		return nil, &Error{Kind: BadQuery, Err: err}
	}
	return &Prepared{e: e, plan: p, took: took, cached: cached}, nil
}

// Compilation reports how long parsing and planning the query took, and
// whether the plan cache served the plan.
func (p *Prepared) Compilation() (time.Duration, bool) { return p.took, p.cached }

// Form returns the query form, which says what the cursor Run returns
// iterates over.
func (p *Prepared) Form() algebra.Form { return p.plan.Form }

// Run starts the query. The returned cursor must be closed.
func (p *Prepared) Run(ctx context.Context) (*Cursor, error) {
	c, err := p.e.Options.Run(ctx, p.e.Source, p.plan)
	if err != nil {
		return nil, classify(ctx, err)
	}
	return c, nil
}

// Ready checks that the source answers.
func (e *Engine) Ready(ctx context.Context) error { return e.Source.Ping(ctx) }

// ErrorKind classifies a failure for the client: it decides the HTTP status.
type ErrorKind int

// The kinds of failure.
const (
	Internal ErrorKind = iota
	BadQuery
	Timeout
	Canceled
	Unavailable
	TooLarge
	// Remote is the failure of a SERVICE endpoint veneer called.
	Remote
)

// Error is a failure with its kind.
type Error struct {
	Kind ErrorKind
	Err  error
}

func (e *Error) Error() string { return e.Err.Error() }

// Unwrap returns the underlying error.
func (e *Error) Unwrap() error { return e.Err }

// KindOf returns the kind of err: the kind of the first *Error in its chain, or
// Internal.
func KindOf(err error) ErrorKind {
	var e *Error
	if errors.As(err, &e) {
		return e.Kind
	}
	return Internal
}

// classify gives a database failure its kind from the context's state.
func classify(ctx context.Context, err error) error {
	switch {
	case errors.Is(ctx.Err(), context.DeadlineExceeded):
		return &Error{Kind: Timeout, Err: err}
	case errors.Is(ctx.Err(), context.Canceled):
		return &Error{Kind: Canceled, Err: err}
	}
	var e *Error
	if errors.As(err, &e) {
		return err
	}
	if source.IsUnavailable(err) {
		return &Error{Kind: Unavailable, Err: err}
	}
	// The database refused the statement: a fault of ours (or of a view's SQL),
	// not a reason to try again.
	return &Error{Kind: Internal, Err: err}
}
