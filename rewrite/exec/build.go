package exec

import (
	"fmt"
	"slices"
	"strconv"
	"strings"

	"veneer/catalog/rdf"
	"veneer/rewrite"
	"veneer/rewrite/algebra"
)

// Solutions inside the evaluator are fixed-width slices: one entry per
// variable of the plan, in the order a layout gave the variables their slots,
// nil where unbound. Every operator of one plan uses the same layout, so a
// variable is looked up by name only once, when the plan is built.

// layout gives each variable of a plan its slot. Most plans have a handful
// of variables, which a scan of vars finds faster than a map, and without
// making one for every run; index is made only for plans with many.
type layout struct {
	vars  []algebra.Var
	index map[algebra.Var]int // nil while vars is short
}

// layoutScan is the most variables a layout looks up by scanning.
const layoutScan = 16

// slot returns v's slot, giving it the next one when it has none yet.
func (l *layout) slot(v algebra.Var) int {
	if l.index != nil {
		if i, ok := l.index[v]; ok {
			return i
		}
	} else if i := slices.Index(l.vars, v); i >= 0 {
		return i
	}
	i := len(l.vars)
	l.vars = append(l.vars, v)
	switch {
	case l.index != nil:
		l.index[v] = i
	case len(l.vars) > layoutScan:
		l.index = make(map[algebra.Var]int, 2*len(l.vars))
		for j, w := range l.vars {
			l.index[w] = j
		}
	}
	return i
}

func (l *layout) width() int { return len(l.vars) }

// iterator yields solutions of one operator, pulled one at a time.
type iterator interface {
	// next returns the next solution, or nil at the end. The slice belongs to
	// the caller from then on: the iterator neither keeps nor changes it.
	next() ([]rdf.Term, error)
	// close releases the iterator and its inputs (an open SQL statement above
	// all); it is safe to call more than once, and next returns nil after it.
	close()
}

// builder turns an operator tree into iterators over one layout.
type builder struct {
	r *run
	l *layout
	c *compiler
}

func newBuilder(r *run) *builder {
	b := &struct {
		builder
		layout
		compiler
	}{}
	b.layout.vars = make([]algebra.Var, 0, 8)
	b.compiler = compiler{r: r, l: &b.layout}
	b.builder = builder{r: r, l: &b.layout, c: &b.compiler}
	return &b.builder
}

// node is a built operator: its iterator and the slots it may bind.
type node struct {
	it    iterator
	scope []int
}

// build builds the iterator of op. Nothing runs yet: a Scan sends its SQL when
// its first solution is asked for.
func (b *builder) build(op rewrite.Op) (node, error) {
	switch op := op.(type) {
	case *rewrite.Scan:
		return b.scan(op)
	case *rewrite.Values:
		return b.values(op), nil
	case *rewrite.Filter:
		in, err := b.build(op.Input)
		if err != nil {
			return node{}, err
		}
		tests, err := b.c.exprs(op.Exprs)
		if err != nil {
			return node{}, err
		}
		return node{it: &filterIter{r: b.r, in: in.it, tests: tests}, scope: in.scope}, nil
	case *rewrite.Extend:
		return b.extend(op)
	case *rewrite.Join:
		if svc, ok := op.Right.(*rewrite.Service); ok {
			return b.service(op.Left, svc)
		}
		return b.join(op.Left, op.Right, joinInner, nil)
	case *rewrite.Service:
		return b.service(nil, op)
	case *rewrite.LeftJoin:
		return b.join(op.Left, op.Right, joinLeft, op.Expr)
	case *rewrite.Minus:
		return b.join(op.Left, op.Right, joinMinus, nil)
	case *rewrite.Union:
		l, err := b.build(op.Left)
		if err != nil {
			return node{}, err
		}
		r, err := b.build(op.Right)
		if err != nil {
			return node{}, err
		}
		return node{it: &unionIter{r: b.r, inputs: []iterator{l.it, r.it}}, scope: unionScope(l.scope, r.scope)}, nil
	case *rewrite.Group:
		return b.group(op)
	case *rewrite.Order:
		return b.order(op, -1)
	case *rewrite.Project:
		in, err := b.build(op.Input)
		if err != nil {
			return node{}, err
		}
		var scope []int
		for _, v := range op.Vars {
			scope = append(scope, b.l.slot(v))
		}
		return node{it: &projectIter{r: b.r, in: in.it, vars: scope}, scope: scope}, nil
	case *rewrite.Path:
		return b.path(op)
	case *rewrite.PerGraph:
		return b.perGraph(op)
	case *rewrite.Distinct:
		in, err := b.build(op.Input)
		if err != nil {
			return node{}, err
		}
		return node{it: &distinctIter{r: b.r, in: in.it, seen: map[string]struct{}{}}, scope: in.scope}, nil
	case *rewrite.Slice:
		var in node
		var err error
		if o, ok := op.Input.(*rewrite.Order); ok && op.Limit >= 0 {
			// ORDER BY with LIMIT keeps only the first Offset+Limit solutions.
			in, err = b.order(o, op.Offset+op.Limit)
		} else {
			in, err = b.build(op.Input)
		}
		if err != nil {
			return node{}, err
		}
		return node{it: &sliceIter{r: b.r, in: in.it, offset: op.Offset, limit: op.Limit}, scope: in.scope}, nil
	case nil:
		return node{}, fmt.Errorf("plan has a nil operator")
	}
	return node{}, fmt.Errorf("plan has an unknown operator %T", op)
}

func unionScope(a, b []int) []int {
	seen := map[int]bool{}
	var out []int
	for _, s := range [][]int{a, b} {
		for _, i := range s {
			if !seen[i] {
				seen[i] = true
				out = append(out, i)
			}
		}
	}
	return out
}

// values yields the rows of inline data.
func (b *builder) values(op *rewrite.Values) node {
	slots := make([]int, len(op.Vars))
	for i, v := range op.Vars {
		slots[i] = b.l.slot(v)
	}
	return node{it: &valuesIter{l: b.l, slots: slots, rows: op.Rows}, scope: slots}
}

type valuesIter struct {
	l     *layout
	slots []int
	rows  [][]rdf.Term
}

func (v *valuesIter) next() ([]rdf.Term, error) {
	if len(v.rows) == 0 {
		return nil, nil
	}
	row := v.rows[0]
	v.rows = v.rows[1:]
	sol := make([]rdf.Term, v.l.width())
	for i, t := range row {
		if i < len(v.slots) {
			sol[v.slots[i]] = t
		}
	}
	return sol, nil
}

func (v *valuesIter) close() { v.rows = nil }

// filterIter keeps the solutions for which every test's effective boolean
// value is true; an error counts as false (§17.2).
type filterIter struct {
	r     *run
	in    iterator
	tests []evalFn
}

func (f *filterIter) next() ([]rdf.Term, error) {
	for {
		sol, err := f.in.next()
		if sol == nil || err != nil {
			return nil, err
		}
		ok, err := f.r.holds(f.tests, sol)
		if err != nil {
			return nil, err
		}
		if ok {
			return sol, nil
		}
	}
}

func (f *filterIter) close() { f.in.close() }

// holds evaluates filter expressions over one solution, counting one residual
// evaluation; only fatal errors come back as errors.
func (r *run) holds(tests []evalFn, sol []rdf.Term) (bool, error) {
	r.residual++
	r.newScope()
	for _, t := range tests {
		ok, err := ebvOf(t(sol))
		if fatal(err) {
			return false, err
		}
		if err != nil || !ok {
			return false, nil
		}
	}
	return true, nil
}

// extend builds a chain of Extends as one operator, so that the expressions of
// one solution share one BNODE scope (the SELECT expressions of a query form
// such a chain).
func (b *builder) extend(op *rewrite.Extend) (node, error) {
	var chain []*rewrite.Extend
	var input rewrite.Op = op
	for {
		e, ok := input.(*rewrite.Extend)
		if !ok {
			break
		}
		chain = append(chain, e)
		input = e.Input
	}
	in, err := b.build(input)
	if err != nil {
		return node{}, err
	}
	it := &extendIter{r: b.r, in: in.it}
	scope := append([]int(nil), in.scope...)
	for i := len(chain) - 1; i >= 0; i-- {
		fn, err := b.c.expr(chain[i].Expr)
		if err != nil {
			return node{}, err
		}
		slot := b.l.slot(chain[i].Var)
		it.binds = append(it.binds, binding{slot: slot, fn: fn})
		scope = append(scope, slot)
	}
	return node{it: it, scope: scope}, nil
}

type binding struct {
	slot int
	fn   evalFn
}

// extendIter binds each variable to its expression's value, left unbound when
// the expression fails (§18.5 Extend).
type extendIter struct {
	r     *run
	in    iterator
	binds []binding
}

func (e *extendIter) next() ([]rdf.Term, error) {
	sol, err := e.in.next()
	if sol == nil || err != nil {
		return nil, err
	}
	e.r.residual++
	e.r.newScope()
	for _, bd := range e.binds {
		t, err := bd.fn(sol)
		if fatal(err) {
			return nil, err
		}
		if err == nil {
			sol[bd.slot] = t
		}
	}
	return sol, nil
}

func (e *extendIter) close() { e.in.close() }

// unionIter yields its inputs one after the other.
type unionIter struct {
	r      *run
	inputs []iterator
}

func (u *unionIter) next() ([]rdf.Term, error) {
	for len(u.inputs) > 0 {
		sol, err := u.inputs[0].next()
		if err != nil {
			return nil, err
		}
		if sol != nil {
			u.r.residual++
			return sol, nil
		}
		u.inputs[0].close()
		u.inputs = u.inputs[1:]
	}
	return nil, nil
}

func (u *unionIter) close() {
	for _, in := range u.inputs {
		in.close()
	}
	u.inputs = nil
}

// projectIter unbinds every variable not projected.
type projectIter struct {
	r    *run
	in   iterator
	vars []int
	keep []bool // by slot, made for the layout's final width
}

func (p *projectIter) next() ([]rdf.Term, error) {
	sol, err := p.in.next()
	if sol == nil || err != nil {
		return nil, err
	}
	p.r.residual++
	if p.keep == nil {
		p.keep = make([]bool, len(sol))
		for _, i := range p.vars {
			p.keep[i] = true
		}
	}
	for i, k := range p.keep {
		if !k {
			sol[i] = nil
		}
	}
	return sol, nil
}

func (p *projectIter) close() { p.in.close() }

// distinctIter drops solutions it has yielded before; it keeps the first of
// each, so an order from below survives (§18.5 Distinct).
type distinctIter struct {
	r    *run
	in   iterator
	seen map[string]struct{}
	key  []byte
}

func (d *distinctIter) next() ([]rdf.Term, error) {
	for {
		sol, err := d.in.next()
		if sol == nil || err != nil {
			return nil, err
		}
		d.r.residual++
		d.key = appendSolutionKey(d.key[:0], sol)
		if _, dup := d.seen[string(d.key)]; dup {
			continue
		}
		if len(d.seen) >= d.r.limit {
			return nil, d.r.tooLarge("DISTINCT")
		}
		d.seen[string(d.key)] = struct{}{}
		return sol, nil
	}
}

func (d *distinctIter) close() { d.in.close(); d.seen = nil }

// sliceIter skips offset solutions and yields limit (-1: all) of the rest;
// reaching the limit closes the input, which stops its SQL.
type sliceIter struct {
	r             *run
	in            iterator
	offset, limit int64
	done          bool
}

func (s *sliceIter) next() ([]rdf.Term, error) {
	if s.done {
		return nil, nil
	}
	for {
		if s.limit == 0 {
			s.close()
			return nil, nil
		}
		sol, err := s.in.next()
		if sol == nil || err != nil {
			return nil, err
		}
		s.r.residual++
		if s.offset > 0 {
			s.offset--
			continue
		}
		if s.limit > 0 {
			s.limit--
		}
		return sol, nil
	}
}

func (s *sliceIter) close() {
	s.done = true
	s.in.close()
}

// appendSolutionKey appends a key that two solutions share exactly when they
// bind the same variables to the same terms.
func appendSolutionKey(dst []byte, sol []rdf.Term) []byte {
	for _, t := range sol {
		dst = appendTermKey(dst, t)
	}
	return dst
}

// appendTermKey appends a key that two terms share exactly when they are the
// same RDF term (language tags compare without case).
func appendTermKey(dst []byte, t rdf.Term) []byte {
	switch t := t.(type) {
	case nil:
		return append(dst, 'u')
	case rdf.IRI:
		return appendKeyString(append(dst, 'i'), string(t))
	case rdf.BlankNode:
		return appendKeyString(append(dst, 'b'), string(t))
	case rdf.Literal:
		dst = appendKeyString(append(dst, 'l'), t.Lexical)
		dst = appendKeyString(dst, string(t.Datatype))
		return appendKeyString(dst, strings.ToLower(t.Lang))
	}
	return dst
}

// appendViewKey appends the key appendTermKey gives v.Term(), without
// making the term.
func appendViewKey(dst []byte, v rdf.View) []byte {
	switch v.Kind {
	case 0:
		return append(dst, 'u')
	case rdf.KindIRI:
		return appendKeyString(append(dst, 'i'), v.Text)
	case rdf.KindBlank:
		return appendKeyString(append(dst, 'b'), v.Text)
	case rdf.KindLiteral:
		dst = appendKeyString(append(dst, 'l'), v.Text)
		dst = appendKeyString(dst, string(v.Datatype))
		return appendKeyString(dst, strings.ToLower(v.Lang))
	}
	return dst
}

// appendKeyString appends s with its length in front, so that no two
// sequences of strings give the same key.
func appendKeyString[T ~string | ~[]byte](dst []byte, s T) []byte {
	dst = strconv.AppendInt(dst, int64(len(s)), 10)
	return append(append(dst, ':'), s...)
}
