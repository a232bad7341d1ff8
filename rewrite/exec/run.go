package exec

import (
	"context"
	"errors"
	"fmt"
	"math/rand/v2"
	"net/url"
	"strconv"
	"time"

	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/rewrite"
	"veneer/rewrite/algebra"
)

// DefaultMaxBuffered is the default of Options.MaxBuffered.
const DefaultMaxBuffered = 1 << 20

// Options tune how a plan runs. The zero value is ready to use.
type Options struct {
	// Base is the base IRI that IRI() and URI() resolve relative strings against
	// (§17.4.2.8); without one, a relative string is an expression error.
	Base string
	// MaxBuffered bounds the solutions (or, for CONSTRUCT and DESCRIBE, triples)
	// that one in-process operator may hold in memory: the materialised side of
	// a join, a sort, the groups of a grouping, the seen set of DISTINCT. A query
	// that needs more fails with a TooLarge error. It also bounds the rows a
	// run reads ahead from open statements before it starts another (see
	// park); past them the statement stays open. Zero means
	// DefaultMaxBuffered.
	MaxBuffered int
	// Now fixes the value of NOW(); the zero time means the moment the run
	// starts.
	Now time.Time
	// ServiceAllow lists the endpoints SERVICE may call, as full IRIs that an
	// endpoint must equal exactly; none means SERVICE is off.
	ServiceAllow []string
	// ServiceTimeout bounds one call to a SERVICE endpoint; the query's own
	// deadline bounds it too. Zero means DefaultServiceTimeout.
	ServiceTimeout time.Duration
	// ServiceMaxBytes bounds the size of one SERVICE answer; a larger one is a
	// TooLarge error. Zero means DefaultServiceMaxBytes.
	ServiceMaxBytes int64
}

// patternPlanner plans the graph patterns that evaluation meets on the way: an
// EXISTS pattern with a solution substituted in, and the description of a
// DESCRIBE resource. *rewrite.Planner is the one veneer uses.
type patternPlanner interface {
	PlanPattern(n algebra.Node) (rewrite.Op, error)
}

// run is the state one query's evaluation shares: where its SQL goes, the
// values that must stay the same across the query (NOW, the blank node
// labels), and the residual evaluation count.
type run struct {
	ctx     context.Context
	src     source.Source
	planner patternPlanner
	limit   int
	baseIRI string      // the base IRI, until baseURL parses it
	base    *url.URL    // parsed by baseURL
	started time.Time   // NOW() and RAND()'s seed
	nowTerm rdf.Literal // NOW(), once asked for
	rand    *rand.Rand  // once asked for

	blanks int64 // labels handed out so far
	// BNODE(str) scope: the labels given to strings while one solution is
	// evaluated (§17.4.2.9).
	scope       int64
	scopeOf     int64
	scopeLabels map[string]rdf.BlankNode

	regexps map[string]*compiledRegexp

	services       []string // the endpoints SERVICE may call
	serviceTimeout time.Duration
	serviceMax     int64

	residual int64

	// open are the scans whose statements are open, parked are the rows
	// that park has read into memory (see park).
	open   []*scanIter
	parked int
}

func newRun(ctx context.Context, src source.Source, pp patternPlanner, o Options) (*run, error) {
	r := &run{ctx: ctx, src: src, planner: pp, limit: o.MaxBuffered}
	if r.limit <= 0 {
		r.limit = DefaultMaxBuffered
	}
	r.services = o.ServiceAllow
	r.serviceTimeout, r.serviceMax = o.ServiceTimeout, o.ServiceMaxBytes
	if r.serviceTimeout <= 0 {
		r.serviceTimeout = DefaultServiceTimeout
	}
	if r.serviceMax <= 0 {
		r.serviceMax = DefaultServiceMaxBytes
	}
	if o.Base != "" && !hasScheme(o.Base) {
		return nil, &Error{Kind: BadQuery, Err: fmt.Errorf("the base IRI %q is not an absolute IRI", o.Base)}
	}
	r.baseIRI = o.Base
	now := o.Now
	if now.IsZero() {
		now = time.Now()
	}
	r.started = now
	return r, nil
}

// baseURL is the base IRI that IRI() resolves against, parsed the first time
// it is asked for (most queries never ask); nil when there is none or it does
// not parse.
func (r *run) baseURL() *url.URL {
	if r.baseIRI != "" {
		r.base, _ = url.Parse(r.baseIRI)
		r.baseIRI = ""
	}
	return r.base
}

// now is what NOW() returns throughout the run: the time it started (§17.4.5.1).
func (r *run) now() rdf.Literal {
	if r.nowTerm == (rdf.Literal{}) {
		r.nowTerm = nowLiteral(r.started)
	}
	return r.nowTerm
}

// random returns RAND()'s next number, from a generator seeded with the
// run's start the first time it is asked for.
func (r *run) random() float64 {
	if r.rand == nil {
		seed := uint64(r.started.UnixNano())
		r.rand = rand.New(rand.NewPCG(seed, seed>>32|1))
	}
	return r.rand.Float64()
}

// freshBlank returns a blank node no other call returns in this run. Labels
// start with "x", which the labels of mapped blank nodes never do (they start
// with "b", see BuildTerm).
func (r *run) freshBlank() rdf.BlankNode {
	r.blanks++
	return rdf.BlankNode("x" + strconv.FormatInt(r.blanks, 10))
}

// newScope starts the evaluation of the expressions over a new solution: BNODE
// with a string argument gives new blank nodes from here on.
func (r *run) newScope() { r.scope++ }

// scopedBlank is BNODE(s): one blank node per string within a scope.
func (r *run) scopedBlank(s string) rdf.BlankNode {
	if r.scopeLabels == nil || r.scopeOf != r.scope {
		r.scopeLabels = map[string]rdf.BlankNode{}
		r.scopeOf = r.scope
	}
	b, ok := r.scopeLabels[s]
	if !ok {
		b = r.freshBlank()
		r.scopeLabels[s] = b
	}
	return b
}

// regexp compiles a pattern with flags, once per run for each pair; a pattern
// that does not compile is an expression error.
func (r *run) regexp(pattern, flags string) (*compiledRegexp, error) {
	key := flags + "\x00" + pattern
	if c, ok := r.regexps[key]; ok {
		if c == nil {
			return nil, errExpr
		}
		return c, nil
	}
	if r.regexps == nil || len(r.regexps) > 1024 {
		r.regexps = map[string]*compiledRegexp{}
	}
	re, f, err := compileRegexp(pattern, flags)
	if err != nil {
		r.regexps[key] = nil
		return nil, errExpr
	}
	c := &compiledRegexp{re: re, flags: f}
	r.regexps[key] = c
	return c, nil
}

// tooLarge is the error of an operator that would buffer more than the limit.
func (r *run) tooLarge(what string) error {
	return &Error{Kind: TooLarge, Err: fmt.Errorf("%s holds more than %d solutions in memory (the limit on buffered solutions)", what, r.limit)}
}

// park reads the rest of the rows of every open statement into memory and
// closes the statement; a scan calls it before it starts its own. A run so
// holds one pooled connection at a time: queries that nest statements (an
// in-process EXISTS, a join that reads one side while the other is open)
// would otherwise each hold a connection while they wait for a second, and
// with as many of them running as the pool has connections, every one would
// wait until its time limit. The rows parked count against MaxBuffered; a
// statement with more rows than that stays open for the rest, as it would
// without parking.
func (r *run) park() error {
	for _, s := range r.open {
		if err := s.rows.park(r); err != nil {
			return err
		}
	}
	r.open = r.open[:0] // parked, or left open for good
	return nil
}

// fail gives an error that ends the iteration its kind: planner errors are the
// query's fault, failures of the source depend on the context.
func (r *run) fail(err error) error {
	if e := planError(err); e != nil {
		return e
	}
	return classify(r.ctx, err)
}

// planError gives a planner's error its kind: a query the planner does not
// support is a bad query, one beyond its limits too large; nil for errors that
// are neither.
func planError(err error) error {
	var unsupported *rewrite.Unsupported
	var complex *rewrite.TooComplex
	switch {
	case errors.As(err, &unsupported):
		return &Error{Kind: BadQuery, Err: err}
	case errors.As(err, &complex):
		return &Error{Kind: TooLarge, Err: err}
	}
	return nil
}
