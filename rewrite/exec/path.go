package exec

import (
	"fmt"

	"veneer/catalog/rdf"
	"veneer/rewrite"
	"veneer/rewrite/algebra"
)

// This file evaluates property paths in-process (§18.4): the planner's fallback
// for paths SQL cannot express. Each step's triples come from a pattern the
// planner plans on its own (a triple pattern for a link, and its reverse for an
// inverse); sequences, alternatives and repetition are computed here. Paths
// with *, + or ? yield each pair once (ALP is a set); sequences and
// alternatives keep multiplicities (they are joins and unions).

// pair is one (start, end) match of a path.
type pair struct{ x, y rdf.Term }

// pathEval computes the pairs of paths within one graph.
type pathEval struct {
	r     *run
	graph algebra.Item // nil: the default graph
	seq   int
	// steps caches the pairs of a path from a start (or to an end), by key.
	steps map[string][]pair
	held  int // pairs in steps
}

func (b *builder) path(op *rewrite.Path) (node, error) {
	var slots []int
	for _, it := range []algebra.Item{op.S, op.O} {
		if v, ok := it.(algebra.Var); ok {
			slots = append(slots, b.l.slot(v))
		}
	}
	it := &pathIter{b: b, op: op}
	return node{it: it, scope: slots}, nil
}

// pathIter materialises the path's solutions at the first call of next.
type pathIter struct {
	b    *builder
	op   *rewrite.Path
	sols [][]rdf.Term
	done bool
}

func (p *pathIter) next() ([]rdf.Term, error) {
	if !p.done {
		p.done = true
		if err := p.compute(); err != nil {
			return nil, err
		}
	}
	if len(p.sols) == 0 {
		return nil, nil
	}
	s := p.sols[0]
	p.sols = p.sols[1:]
	return s, nil
}

func (p *pathIter) close() { p.done, p.sols = true, nil }

func (p *pathIter) compute() error {
	r := p.b.r
	e := &pathEval{r: r, graph: p.op.Graph, steps: map[string][]pair{}}
	from, to := algebra.TermOf(p.op.S), algebra.TermOf(p.op.O)
	pairs, err := e.pairs(p.op.Path, from, to)
	if err != nil {
		return err
	}
	sv, sIsVar := p.op.S.(algebra.Var)
	ov, oIsVar := p.op.O.(algebra.Var)
	for _, pr := range pairs {
		if sIsVar && oIsVar && sv == ov && !rdf.SameTerm(pr.x, pr.y) {
			continue
		}
		sol := make([]rdf.Term, p.b.l.width())
		if sIsVar {
			sol[p.b.l.slot(sv)] = pr.x
		}
		if oIsVar {
			sol[p.b.l.slot(ov)] = pr.y
		}
		r.residual++
		p.sols = append(p.sols, sol)
		if len(p.sols) > r.limit {
			return r.tooLarge("a property path evaluated in-process")
		}
	}
	return nil
}

// pairs returns the pairs path connects, restricted to start from and end to
// where those are set.
func (e *pathEval) pairs(p algebra.Path, from, to rdf.Term) ([]pair, error) {
	switch p := p.(type) {
	case algebra.PathLink:
		return e.triples(algebra.Const{Term: p.IRI}, nil, from, to)
	case algebra.PathInv:
		ps, err := e.pairs(p.Path, to, from)
		return reversed(ps), err
	case algebra.PathSeq:
		return e.sequence(p, from, to)
	case algebra.PathAlt:
		l, err := e.pairs(p.Left, from, to)
		if err != nil {
			return nil, err
		}
		r, err := e.pairs(p.Right, from, to)
		return append(l, r...), err
	case algebra.PathNegated:
		return e.negated(p, from, to)
	case algebra.PathOneOrMore:
		return e.closure(p.Path, from, to, false)
	case algebra.PathZeroOrMore:
		return e.closure(p.Path, from, to, true)
	case algebra.PathZeroOrOne:
		one, err := e.pairs(p.Path, from, to)
		if err != nil {
			return nil, err
		}
		zero, err := e.zeroLength(from, to)
		if err != nil {
			return nil, err
		}
		return distinctPairs(append(zero, one...)), nil
	}
	return nil, badQuery("unknown property path %T", p)
}

func reversed(ps []pair) []pair {
	out := make([]pair, len(ps))
	for i, p := range ps {
		out[i] = pair{p.y, p.x}
	}
	return out
}

// sequence joins the two halves on the middle term, starting from the side
// that is bound.
func (e *pathEval) sequence(p algebra.PathSeq, from, to rdf.Term) ([]pair, error) {
	if from == nil && to != nil {
		right, err := e.pairs(p.Right, nil, to)
		if err != nil {
			return nil, err
		}
		var out []pair
		for _, r := range right {
			left, err := e.cached(p.Left, nil, r.x)
			if err != nil {
				return nil, err
			}
			for _, l := range left {
				out = append(out, pair{l.x, r.y})
			}
		}
		return out, nil
	}
	left, err := e.pairs(p.Left, from, nil)
	if err != nil {
		return nil, err
	}
	var out []pair
	for _, l := range left {
		right, err := e.cached(p.Right, l.y, to)
		if err != nil {
			return nil, err
		}
		for _, r := range right {
			out = append(out, pair{l.x, r.y})
		}
	}
	return out, nil
}

// cached is pairs, remembered per path and bound ends for the whole path's
// evaluation (a sequence and a closure ask for the same steps again).
func (e *pathEval) cached(p algebra.Path, from, to rdf.Term) ([]pair, error) {
	key := append([]byte(algebra.PathString(p)), 0)
	key = appendTermKey(appendTermKey(key, from), to)
	if ps, ok := e.steps[string(key)]; ok {
		return ps, nil
	}
	ps, err := e.pairs(p, from, to)
	if err != nil {
		return nil, err
	}
	e.held += len(ps)
	if e.held > e.r.limit {
		return nil, e.r.tooLarge("a property path evaluated in-process")
	}
	e.steps[string(key)] = ps
	return ps, nil
}

// closure is p+ (or p* with zero): the ends reached in one step or more from
// each start, each pair once. A bound end walks backwards.
func (e *pathEval) closure(p algebra.Path, from, to rdf.Term, zero bool) ([]pair, error) {
	if from == nil && to != nil {
		ps, err := e.closure(algebra.PathInv{Path: p}, to, nil, zero)
		return reversed(ps), err
	}
	var starts []rdf.Term
	if from != nil {
		starts = []rdf.Term{from}
	} else {
		var err error
		if starts, err = e.starts(p, zero); err != nil {
			return nil, err
		}
	}
	var out []pair
	for _, s := range starts {
		seen := map[string]bool{}
		if zero && (to == nil || rdf.SameTerm(s, to)) {
			out = append(out, pair{s, s})
			seen[termKey(s)] = true
		}
		frontier := []rdf.Term{s}
		for len(frontier) > 0 {
			var next []rdf.Term
			for _, n := range frontier {
				steps, err := e.cached(p, n, nil)
				if err != nil {
					return nil, err
				}
				for _, st := range steps {
					k := termKey(st.y)
					if seen[k] {
						continue
					}
					seen[k] = true
					next = append(next, st.y)
					if to == nil || rdf.SameTerm(st.y, to) {
						out = append(out, pair{s, st.y})
						if len(out) > e.r.limit {
							return nil, e.r.tooLarge("a property path evaluated in-process")
						}
					}
				}
			}
			frontier = next
		}
	}
	return out, nil
}

// starts lists the terms a closure over p may start from when no start is
// given: for p+, the starts of p's pairs; for p*, every node of the graph.
func (e *pathEval) starts(p algebra.Path, zero bool) ([]rdf.Term, error) {
	var ps []pair
	var err error
	if zero {
		ps, err = e.nodes()
	} else {
		ps, err = e.pairs(p, nil, nil)
	}
	if err != nil {
		return nil, err
	}
	seen := map[string]bool{}
	var out []rdf.Term
	for _, pr := range ps {
		if k := termKey(pr.x); !seen[k] {
			seen[k] = true
			out = append(out, pr.x)
		}
	}
	return out, nil
}

// zeroLength is the zero-length pairs of ?, * (§18.4: the given end itself, or
// every node of the graph with itself).
func (e *pathEval) zeroLength(from, to rdf.Term) ([]pair, error) {
	switch {
	case from != nil && to != nil:
		if rdf.SameTerm(from, to) {
			return []pair{{from, from}}, nil
		}
		return nil, nil
	case from != nil:
		return []pair{{from, from}}, nil
	case to != nil:
		return []pair{{to, to}}, nil
	}
	return e.nodes()
}

// nodes pairs every subject and object of the graph with itself.
func (e *pathEval) nodes() ([]pair, error) {
	all, err := e.triples(nil, nil, nil, nil)
	if err != nil {
		return nil, err
	}
	var out []pair
	for _, t := range all {
		out = append(out, pair{t.x, t.x}, pair{t.y, t.y})
	}
	return distinctPairs(out), nil
}

// negated is !(iri…|^iri…): the triples whose predicate none of the forward
// IRIs is, and reversed, those none of the inverse IRIs is.
func (e *pathEval) negated(p algebra.PathNegated, from, to rdf.Term) ([]pair, error) {
	var out []pair
	if len(p.Forward) > 0 || len(p.Inverse) == 0 {
		ps, err := e.triples(nil, p.Forward, from, to)
		if err != nil {
			return nil, err
		}
		out = append(out, ps...)
	}
	if len(p.Inverse) > 0 {
		ps, err := e.triples(nil, p.Inverse, to, from)
		if err != nil {
			return nil, err
		}
		out = append(out, reversed(ps)...)
	}
	return out, nil
}

// triples runs the triple pattern from pred to (pred nil: any predicate, but
// none of excluded) and returns its subject-object pairs.
func (e *pathEval) triples(pred algebra.Item, excluded []rdf.IRI, from, to rdf.Term) ([]pair, error) {
	item := func(t rdf.Term) algebra.Item {
		if t != nil {
			return algebra.Const{Term: t}
		}
		e.seq++
		return algebra.Var(fmt.Sprintf("_:#path%d", e.seq))
	}
	s, o := item(from), item(to)
	if pred == nil {
		pred = item(nil)
	}
	var pattern algebra.Node = algebra.BGP{Patterns: []algebra.Triple{{S: s, P: pred, O: o}}}
	if len(excluded) > 0 {
		args := []algebra.Expr{pred.(algebra.Var)}
		for _, iri := range excluded {
			args = append(args, algebra.Const{Term: iri})
		}
		pattern = algebra.Filter{Exprs: []algebra.Expr{algebra.Call{Op: "NOT IN", Args: args}}, Input: pattern}
	}
	if e.graph != nil {
		pattern = algebra.Graph{Name: e.graph, Input: pattern}
	}
	op, err := e.r.planner.PlanPattern(pattern)
	if err != nil {
		return nil, e.r.fail(fmt.Errorf("planning a step of a property path: %w", err))
	}
	b := newBuilder(e.r)
	n, err := b.build(op)
	if err != nil {
		return nil, err
	}
	defer n.it.close()
	read := func(it algebra.Item) func([]rdf.Term) rdf.Term {
		if v, ok := it.(algebra.Var); ok {
			slot := b.l.slot(v)
			return func(sol []rdf.Term) rdf.Term { return sol[slot] }
		}
		t := it.(algebra.Const).Term
		return func([]rdf.Term) rdf.Term { return t }
	}
	subject, object := read(s), read(o)
	var out []pair
	for {
		sol, err := n.it.next()
		if err != nil {
			return nil, err
		}
		if sol == nil {
			return out, nil
		}
		out = append(out, pair{subject(sol), object(sol)})
		if len(out) > e.r.limit {
			return nil, e.r.tooLarge("a property path evaluated in-process")
		}
	}
}

func distinctPairs(ps []pair) []pair {
	seen := map[string]bool{}
	var out []pair
	for _, p := range ps {
		k := termKey(p.x) + "\x00" + termKey(p.y)
		if !seen[k] {
			seen[k] = true
			out = append(out, p)
		}
	}
	return out
}

func termKey(t rdf.Term) string { return string(appendTermKey(nil, t)) }
