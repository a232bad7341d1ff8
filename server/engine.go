package server

import (
	"context"
	"database/sql"
	"strings"
	"time"

	"veneer/catalog/rdf"
	"veneer/server/results"
)

// Engine answers SPARQL queries; FromExec adapts veneer's query engine. The
// server calls it from many goroutines at once.
type Engine interface {
	// Prepare parses and plans q. Neither it nor Prepared.Start reads a
	// source: the answer's cursors and Boolean do. The server admits a query
	// to one of its query slots (see Limits) only when it reads the answer,
	// so that a query that does not parse costs no slot and a slot is held
	// only while the sources are read. Errors carry an exec.ErrorKind (see
	// exec.Error), which decides the HTTP status.
	Prepare(q Query) (Prepared, error)
	// Ready reports whether the engine can answer: its catalog is loaded and
	// every source it reads answers.
	Ready(ctx context.Context) error
}

// Prepared is a query its engine has planned.
type Prepared interface {
	// Start readies the answer to the query, without reading a source. The
	// context bounds the whole answer: the cursors of the Answer stop, and
	// the SQL is cancelled, when it ends. Errors carry an exec.ErrorKind, as
	// Prepare's do.
	Start(ctx context.Context) (*Answer, error)
}

// Query is one query operation of the SPARQL 1.1 Protocol (§2.1).
type Query struct {
	// Text is the query string.
	Text string
	// DefaultGraphs and NamedGraphs are the IRIs of the protocol's
	// default-graph-uri and named-graph-uri parameters. When either is
	// non-empty they are the RDF dataset of the query, in place of any FROM
	// and FROM NAMED clauses in Text (SPARQL 1.1 Protocol §2.1.4).
	DefaultGraphs, NamedGraphs []rdf.IRI
	// Base is the IRI that relative IRIs in Text resolve against until a BASE
	// declaration replaces it: the endpoint's URL as the client asked for it
	// (the protocol lets the service define the base, SPARQL 1.1 Query §4.1.1.1).
	Base string
}

// Answer is the answer to a query, of one of the three kinds the query forms
// have. The server reads it once and then closes it.
type Answer struct {
	// Kind says which of the fields below holds the answer.
	Kind results.Kind
	// Solutions holds the answer of a SELECT query.
	Solutions Solutions
	// Boolean answers an ASK query; it reads the sources, once.
	Boolean func() (bool, error)
	// Graph holds the answer of a CONSTRUCT or DESCRIBE query.
	Graph Triples
	// Prefixes are the query's prefix declarations, which make a Turtle
	// answer easier to read.
	Prefixes []rdf.Prefix
	// SQL, when set, returns the SQL the answer runs, as text for people:
	// the slow-query log calls it for the queries it logs, and only for those.
	SQL func() []string
	// Stats, when set, reports what the engine measured; the server calls it
	// once, after closing the answer, for its metrics.
	Stats func() Stats
}

// Close closes the answer's cursor.
func (a *Answer) Close() error {
	switch {
	case a.Kind == results.Solutions && a.Solutions != nil:
		return a.Solutions.Close()
	case a.Kind == results.Graph && a.Graph != nil:
		return a.Graph.Close()
	}
	return nil
}

// Stats are the measurements of one answer.
type Stats struct {
	// SQLDuration is the time spent in the database: running the statements
	// and reading their rows.
	SQLDuration time.Duration
	// SQLRows is the number of rows read from the database.
	SQLRows int64
	// ResidualEvaluations counts the operators the engine evaluated
	// in-process on decoded solutions because SQL could not express them
	// (filters, term checks, distinct, slices), one per solution each.
	ResidualEvaluations int64
	// Translation is the time spent parsing and planning the query, and
	// PlanCached whether the plan cache served the plan.
	Translation time.Duration
	PlanCached  bool
}

// Solutions is a cursor over query solutions, in the manner of
// database/sql.Rows.
type Solutions interface {
	// Vars names the variables, without "?", in the order of Views.
	Vars() []string
	// Next advances to the next solution and reports whether there is one.
	Next() bool
	// Views returns the current solution, one view per variable, the zero
	// View for an unbound one. The views and their text may be reused by
	// the next call to Next.
	Views() []rdf.View
	// Err returns the error that ended the iteration, if any.
	Err() error
	// Close releases the cursor.
	Close() error
}

// Triples is a cursor over the triples of a CONSTRUCT or DESCRIBE answer.
type Triples interface {
	// Next advances to the next triple and reports whether there is one.
	Next() bool
	// Triple returns the current triple.
	Triple() rdf.Triple
	// Err returns the error that ended the iteration, if any.
	Err() error
	// Close releases the cursor.
	Close() error
}

// Explainer is implemented by engines that can say how they would answer a
// query; the explain route needs it.
type Explainer interface {
	Explain(ctx context.Context, q Query) (*Explanation, error)
}

// Explanation says how an engine answers a query.
type Explanation struct {
	// Algebra is the query's SPARQL algebra expression.
	Algebra string `json:"algebra"`
	// Plan is the plan: the SQL for each source with its parameters, and the
	// residual operators that run in-process.
	Plan string `json:"plan"`
}

// Text returns the explanation for people: the algebra, indented, under an
// "algebra:" line, then the plan.
func (e *Explanation) Text() string {
	alg := strings.TrimRight(e.Algebra, "\n")
	return "algebra:\n  " + strings.ReplaceAll(alg, "\n", "\n  ") + "\n" + e.Plan
}

// PoolStater is implemented by engines that can report on the connection
// pools of their sources, for the metrics.
type PoolStater interface {
	// PoolStats reports on each source's pool, by source name.
	PoolStats() map[string]sql.DBStats
}
