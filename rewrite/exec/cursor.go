// Package exec runs plans: it sends the SQL of a plan's scans to the source,
// decodes each row into RDF terms, evaluates the in-process operators of the
// plan (rewrite.Op) with SPARQL's semantics (§18.5), including the whole
// expression language of §17, and hands out the result of the query form
// through a cursor.
//
// Solutions are pulled through the operator tree one at a time. Scan, Filter,
// Extend, Project, Union and Slice stream: they hold no solutions, and a Slice
// that has its LIMIT closes its input, which stops the SQL. Join, LeftJoin and
// Minus read their right input into memory (a hash table) and stream the left
// one; Order, Group and Distinct hold what they must (ORDER BY with LIMIT only
// the first Offset+Limit solutions). Options.MaxBuffered bounds every one of
// them, and a query that needs more fails with a TooLarge error rather than
// exhausting memory.
//
// A scan sends its SQL when its first solution is asked for, and a join reads
// its right side to the end before its left side starts, so one query keeps at
// most one statement open at a time, plus one for each EXISTS or DESCRIBE
// lookup running under it: a pool of a few connections per concurrent query
// is enough.
package exec

import (
	"context"
	"errors"
	"fmt"
	"slices"

	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/rewrite"
	"veneer/rewrite/algebra"
)

// Cursor iterates over the result of a plan, like database/sql.Rows.
//
// What Next advances over depends on the query form (Form):
//   - SELECT: solutions; Solution returns the current one, in Vars order.
//   - ASK: nothing; Boolean holds the answer as soon as Run returns (Run reads
//     at most one solution, then stops the SQL).
//   - CONSTRUCT and DESCRIBE: triples; Triple returns the current one. The
//     result is a graph, so a triple is yielded once (up to
//     Options.MaxBuffered distinct triples are remembered for that; past it,
//     repeats can occur, which leaves the graph the same).
//
// A cursor is used by one goroutine at a time and must be closed.
type Cursor struct {
	r    *run
	form algebra.Form
	vars []string
	proj []int // the layout slot of each result variable

	root    iterator
	cur     []rdf.Term
	triples tripleSource
	triple  rdf.Triple
	answer  bool

	// A SELECT whose plan is one scan without checks, perhaps joined with a
	// VALUES block (lookup), perhaps projected, is streamed as views
	// straight from the scan's rows (direct), by slot
	// (slotViews) and then by result variable (views); cur is then made
	// only when Solution is asked for. For any other plan views are made
	// from cur when asked for. fresh says which of cur and views holds the
	// current solution besides the one Next made.
	direct    *scanIter
	lookup    *valuesLookup // the VALUES block direct's rows join, if any
	projected bool          // direct's rows pass a Project: each is a residual evaluation
	slotViews []rdf.View
	views     []rdf.View
	buf       []byte
	fresh     bool

	err  error
	done bool
}

// Run starts a plan on src with the default Options.
func Run(ctx context.Context, src source.Source, p *rewrite.Plan) (*Cursor, error) {
	return Options{}.Run(ctx, src, p)
}

// Run starts a plan on src. The context governs the whole iteration:
// cancelling it cancels the SQL statement that is running.
func (o Options) Run(ctx context.Context, src source.Source, p *rewrite.Plan) (*Cursor, error) {
	var pp patternPlanner
	if p.Planner != nil {
		pp = p.Planner
	}
	if p.Base != "" {
		o.Base = p.Base // the query's own BASE, or its request's, comes first
	}
	return start(ctx, src, pp, p, o)
}

// start runs a plan with the given pattern planner (tests pass their own).
// An error that has no kind yet is the plan's fault: Internal.
func start(ctx context.Context, src source.Source, pp patternPlanner, p *rewrite.Plan, o Options) (*Cursor, error) {
	c, err := open(ctx, src, pp, p, o)
	var e *Error
	if err != nil && !errors.As(err, &e) {
		err = &Error{Kind: Internal, Err: err}
	}
	return c, err
}

func open(ctx context.Context, src source.Source, pp patternPlanner, p *rewrite.Plan, o Options) (*Cursor, error) {
	r, err := newRun(ctx, src, pp, o)
	if err != nil {
		return nil, err
	}
	b := newBuilder(r)
	root, err := b.build(p.Root)
	if err != nil {
		return nil, err
	}
	c := &Cursor{r: r, form: p.Form, root: root.it}
	switch p.Form {
	case algebra.Select:
		c.vars, c.proj = make([]string, len(p.Vars)), make([]int, len(p.Vars))
		for i, v := range p.Vars {
			c.vars[i], c.proj[i] = string(v), b.l.slot(v)
		}
		c.cur = make([]rdf.Term, len(p.Vars))
		if c.direct, c.lookup, c.projected = directScan(r, root.it, c.proj, b.l.width()); c.direct != nil {
			views := make([]rdf.View, len(p.Vars)+b.l.width()) // one allocation for both
			c.views, c.slotViews = views[:len(p.Vars):len(p.Vars)], views[len(p.Vars):]
		} else {
			c.views = make([]rdf.View, len(p.Vars))
		}
	case algebra.Ask:
		sol, err := c.root.next()
		c.root.close()
		c.done = true
		if err != nil {
			return nil, err
		}
		c.answer = sol != nil
	case algebra.Construct:
		c.triples = newConstructSource(r, b.l, c.root, p.Template)
	case algebra.Describe:
		if c.triples, err = newDescribeSource(r, b.l, c.root, p.Describe); err != nil {
			c.root.close()
			return nil, err
		}
	default:
		c.root.close()
		return nil, fmt.Errorf("plan has an unknown query form %d", p.Form)
	}
	return c, nil
}

// Form returns the query form, which says what Next iterates over.
func (c *Cursor) Form() algebra.Form { return c.form }

// Vars names the result variables of SELECT, in the order of Solution's
// terms; it is empty for the other forms.
func (c *Cursor) Vars() []string { return c.vars }

// Next advances to the next solution (SELECT) or triple (CONSTRUCT and
// DESCRIBE); it returns false at the end, on error (see Err), and always for
// ASK.
func (c *Cursor) Next() bool {
	if c.done || c.err != nil {
		return false
	}
	var err error
	ok := false
	switch c.form {
	case algebra.Select:
		c.fresh = false
		if c.direct != nil {
			clear(c.slotViews)
			if c.lookup != nil {
				ok, c.buf, err = c.lookup.next(c.direct, c.slotViews, c.buf)
			} else {
				ok, c.buf, err = c.direct.nextViews(c.slotViews, c.buf[:0])
			}
			if ok {
				for i, s := range c.proj {
					c.views[i] = c.slotViews[s]
				}
				if c.projected {
					c.r.residual++
				}
			}
			break
		}
		var sol []rdf.Term
		if sol, err = c.root.next(); sol != nil {
			for i, s := range c.proj {
				c.cur[i] = sol[s]
			}
			ok = true
		}
	case algebra.Construct, algebra.Describe:
		c.triple, ok, err = c.triples.next()
	}
	if err != nil {
		c.err = c.r.fail(err)
	}
	if !ok {
		c.Close()
	}
	return ok
}

// Solution returns the current solution of SELECT: one term per result
// variable, nil where unbound. The slice is reused by the next call to Next.
func (c *Cursor) Solution() []rdf.Term {
	if c.direct != nil && !c.fresh {
		for i, v := range c.views {
			c.cur[i] = v.Term()
		}
		c.fresh = true
	}
	return c.cur
}

// Views returns the current solution of SELECT as views, one per result
// variable, the zero View where unbound: what a result writer reads. The
// views and their text are reused by the next call to Next. A plan that is
// one scan hands its rows out this way without making a term of any value.
func (c *Cursor) Views() []rdf.View {
	if c.direct == nil && !c.fresh {
		c.buf = rdf.AppendViews(c.views, c.buf[:0], c.cur)
		c.fresh = true
	}
	return c.views
}

// directScan finds the scan of a plan whose solutions can stream as views:
// one scan without checks, alone or joined with a VALUES block (lk, see
// valuesLookup), either under a Project that keeps every result variable
// (slots proj; projected says it is under one) or not. width is the
// layout's.
func directScan(r *run, it iterator, proj []int, width int) (s *scanIter, lk *valuesLookup, projected bool) {
	if p, ok := it.(*projectIter); ok {
		for _, slot := range proj {
			if !slices.Contains(p.vars, slot) {
				return nil, nil, false
			}
		}
		it, projected = p.in, true
	}
	if j, ok := it.(*joinIter); ok && j.kind == joinInner && j.filter == nil && len(j.shared) > 0 {
		s, _ := j.left.(*scanIter)
		v, _ := j.right.(*valuesIter)
		if s != nil && len(s.checks) == 0 && v != nil {
			if lk := newValuesLookup(r, v, j.shared, width); lk != nil {
				return s, lk, projected
			}
		}
		return nil, nil, false
	}
	if s, ok := it.(*scanIter); ok && len(s.checks) == 0 {
		return s, nil, projected
	}
	return nil, nil, false
}

// Triple returns the current triple of CONSTRUCT or DESCRIBE.
func (c *Cursor) Triple() rdf.Triple { return c.triple }

// Boolean returns the answer of ASK.
func (c *Cursor) Boolean() bool { return c.answer }

// Err reports the error that ended the iteration, if any.
func (c *Cursor) Err() error { return c.err }

// Close stops the iteration and releases its SQL statements; it is safe to
// call more than once.
func (c *Cursor) Close() error {
	c.done = true
	c.root.close()
	if c.triples != nil {
		c.triples.close()
	}
	return nil
}

// ResidualEvaluations counts the solutions that in-process operators have
// taken in so far (a Filter testing one, a join reading one from either side,
// ORDER BY sorting one, and so on), EXISTS patterns and DESCRIBE lookups
// included; solutions that only pass from SQL to the result are not counted.
// It is the measure of work done outside the database: the server adds it to
// its residual-evaluation metric when the cursor is done. Like the cursor, it
// is not safe for concurrent use with Next.
func (c *Cursor) ResidualEvaluations() int64 { return c.r.residual }

// tripleSource yields the triples of CONSTRUCT and DESCRIBE.
type tripleSource interface {
	next() (rdf.Triple, bool, error)
	close()
}

// tripleSet remembers triples yielded, up to the run's limit.
type tripleSet struct {
	limit int
	seen  map[string]struct{}
	key   []byte
}

// fresh reports whether t has not been yielded before, and remembers it.
func (s *tripleSet) fresh(t rdf.Triple) bool {
	s.key = appendTermKey(appendTermKey(appendTermKey(s.key[:0], t.S), t.P), t.O)
	if _, dup := s.seen[string(s.key)]; dup {
		return false
	}
	if len(s.seen) < s.limit {
		s.seen[string(s.key)] = struct{}{}
	}
	return true
}

// constructSource instantiates the template for each solution (§16.2).
type constructSource struct {
	r        *run
	in       iterator
	template []algebra.Triple
	slots    map[algebra.Var]int
	set      tripleSet
	pending  []rdf.Triple
}

func newConstructSource(r *run, l *layout, in iterator, template []algebra.Triple) *constructSource {
	c := &constructSource{r: r, in: in, template: template, slots: map[algebra.Var]int{},
		set: tripleSet{limit: r.limit, seen: map[string]struct{}{}}}
	for _, t := range template {
		for _, it := range []algebra.Item{t.S, t.P, t.O} {
			if v, ok := it.(algebra.Var); ok && !v.Hidden() {
				c.slots[v] = l.slot(v)
			}
		}
	}
	return c
}

func (c *constructSource) next() (rdf.Triple, bool, error) {
	for len(c.pending) == 0 {
		sol, err := c.in.next()
		if err != nil || sol == nil {
			return rdf.Triple{}, false, err
		}
		c.r.residual++
		c.instantiate(sol)
	}
	t := c.pending[0]
	c.pending = c.pending[1:]
	return t, true, nil
}

func (c *constructSource) close() { c.in.close() }

// instantiate adds the template's triples for one solution to pending: a
// template blank node (a Hidden variable) is a fresh blank node per solution;
// a triple with an unbound variable, a literal subject or a predicate that is
// not an IRI is left out, as is a triple yielded before.
func (c *constructSource) instantiate(sol []rdf.Term) {
	blanks := map[algebra.Var]rdf.Term{}
	term := func(it algebra.Item) rdf.Term {
		switch it := it.(type) {
		case algebra.Const:
			return it.Term
		case algebra.Var:
			if it.Hidden() {
				b, ok := blanks[it]
				if !ok {
					b = c.r.freshBlank()
					blanks[it] = b
				}
				return b
			}
			return sol[c.slots[it]]
		}
		return nil
	}
	for _, tp := range c.template {
		t := rdf.Triple{S: term(tp.S), P: term(tp.P), O: term(tp.O)}
		if t.S == nil || t.P == nil || t.O == nil || t.S.Kind() == rdf.KindLiteral || t.P.Kind() != rdf.KindIRI {
			continue
		}
		if c.set.fresh(t) {
			c.pending = append(c.pending, t)
		}
	}
}

// describeSource yields, for each resource DESCRIBE names (an IRI given in
// the query, or a term a variable takes in the root's solutions), the triples
// that have it as subject, found by planning the pattern { resource ?p ?o }.
// Each resource is described once; the IRIs come first, so they are described
// even when the root has no solution.
type describeSource struct {
	r         *run
	in        iterator
	slots     []int // of the variables among the items
	described map[string]bool
	queue     []rdf.Term
	current   rdf.Term
	lookup    *node
	set       tripleSet
}

func newDescribeSource(r *run, l *layout, in iterator, items []algebra.Item) (*describeSource, error) {
	if r.planner == nil {
		return nil, badQuery("DESCRIBE cannot be evaluated: the plan has no planner for the descriptions")
	}
	d := &describeSource{r: r, in: in, described: map[string]bool{},
		set: tripleSet{limit: r.limit, seen: map[string]struct{}{}}}
	for _, it := range items {
		switch it := it.(type) {
		case algebra.Var:
			d.slots = append(d.slots, l.slot(it))
		case algebra.Const:
			d.enqueue(it.Term)
		}
	}
	return d, nil
}

// describeVars are the variables of the lookup pattern; the lookup has its
// own layout, so they cannot clash with the query's.
var describeVars = [2]algebra.Var{"p", "o"}

func (d *describeSource) next() (rdf.Triple, bool, error) {
	for {
		if d.lookup != nil {
			sol, err := d.lookup.it.next()
			if err != nil {
				return rdf.Triple{}, false, err
			}
			if sol != nil {
				d.r.residual++
				t := rdf.Triple{S: d.current, P: sol[0], O: sol[1]}
				if t.P != nil && t.O != nil && d.set.fresh(t) {
					return t, true, nil
				}
				continue
			}
			d.lookup.it.close()
			d.lookup = nil
		}
		if len(d.queue) == 0 {
			if d.in == nil {
				return rdf.Triple{}, false, nil
			}
			sol, err := d.in.next()
			if err != nil {
				return rdf.Triple{}, false, err
			}
			if sol == nil {
				d.in.close()
				d.in = nil
				continue
			}
			d.r.residual++
			for _, slot := range d.slots {
				d.enqueue(sol[slot])
			}
			continue
		}
		d.current, d.queue = d.queue[0], d.queue[1:]
		if err := d.startLookup(d.current); err != nil {
			return rdf.Triple{}, false, err
		}
	}
}

func (d *describeSource) close() {
	if d.lookup != nil {
		d.lookup.it.close()
		d.lookup = nil
	}
	if d.in != nil {
		d.in.close()
		d.in = nil
	}
}

// enqueue adds a resource to describe, unless it is described already or is
// a literal, which is never a subject.
func (d *describeSource) enqueue(t rdf.Term) {
	if t == nil || t.Kind() == rdf.KindLiteral {
		return
	}
	key := termKey(t)
	if d.described[key] {
		return
	}
	if len(d.described) < d.r.limit {
		d.described[key] = true
	}
	d.queue = append(d.queue, t)
}

func (d *describeSource) startLookup(resource rdf.Term) error {
	pattern := algebra.BGP{Patterns: []algebra.Triple{{S: algebra.Const{Term: resource}, P: describeVars[0], O: describeVars[1]}}}
	op, err := d.r.planner.PlanPattern(pattern)
	if err != nil {
		return fmt.Errorf("planning the description of %s: %w", resource, err)
	}
	b := newBuilder(d.r)
	b.l.slot(describeVars[0])
	b.l.slot(describeVars[1])
	n, err := b.build(op)
	if err != nil {
		return err
	}
	d.lookup = &n
	return nil
}
