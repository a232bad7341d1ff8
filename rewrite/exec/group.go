package exec

import (
	"strings"

	"veneer/catalog/rdf"
	"veneer/rewrite"
	"veneer/rewrite/algebra"
)

// group builds Group: the partition of its input by the keys (§18.5 Group)
// and the aggregates of each part (§18.5.1 Aggregation).
func (b *builder) group(op *rewrite.Group) (node, error) {
	in, err := b.build(op.Input)
	if err != nil {
		return node{}, err
	}
	it := &groupIter{r: b.r, l: b.l, in: in.it}
	var scope []int
	for _, k := range op.Keys {
		fn, err := b.c.expr(k.Expr)
		if err != nil {
			return node{}, err
		}
		slot := -1
		if k.Var != "" {
			slot = b.l.slot(k.Var)
			scope = append(scope, slot)
		}
		it.keys = append(it.keys, fn)
		it.keySlots = append(it.keySlots, slot)
	}
	for _, a := range op.Aggs {
		spec := aggSpec{slot: b.l.slot(a.Var), agg: a.Agg}
		if a.Agg.Arg != nil {
			if spec.arg, err = b.c.expr(a.Agg.Arg); err != nil {
				return node{}, err
			}
		}
		if newAccumulator(spec.agg) == nil {
			return node{}, badQuery("unknown aggregate %s", a.Agg.Name)
		}
		if spec.arg == nil && a.Agg.Name != "COUNT" {
			return node{}, badQuery("the aggregate %s needs an argument", a.Agg.Name)
		}
		it.aggs = append(it.aggs, spec)
		scope = append(scope, spec.slot)
	}
	return node{it: it, scope: scope}, nil
}

type aggSpec struct {
	slot int
	agg  algebra.Aggregate
	arg  evalFn // nil for COUNT(*)
}

// groupIter reads its whole input, then yields one solution per group in the
// order the groups first appeared.
type groupIter struct {
	r        *run
	l        *layout
	in       iterator
	keys     []evalFn
	keySlots []int
	aggs     []aggSpec

	started bool
	groups  []*groupState
	byKey   map[string]*groupState
	key     []byte
}

type groupState struct {
	keys []rdf.Term
	accs []accumulator
}

func (g *groupIter) next() ([]rdf.Term, error) {
	if !g.started {
		if err := g.consume(); err != nil {
			return nil, err
		}
	}
	if len(g.groups) == 0 {
		return nil, nil
	}
	st := g.groups[0]
	g.groups = g.groups[1:]
	sol := make([]rdf.Term, g.l.width())
	for i, s := range g.keySlots {
		if s >= 0 {
			sol[s] = st.keys[i] // nil when the key was an error
		}
	}
	for i, a := range g.aggs {
		if t, ok := st.accs[i].result(); ok {
			sol[a.slot] = t
		}
	}
	return sol, nil
}

func (g *groupIter) newGroup(keys []rdf.Term) *groupState {
	st := &groupState{keys: keys}
	for _, a := range g.aggs {
		acc := newAccumulator(a.agg)
		if a.agg.Distinct {
			acc = &distinctAcc{inner: acc, seen: map[string]bool{}, limit: g.r.limit}
		}
		st.accs = append(st.accs, acc)
	}
	return st
}

func (g *groupIter) consume() error {
	g.started = true
	g.byKey = map[string]*groupState{}
	for {
		sol, err := g.in.next()
		if err != nil {
			return err
		}
		if sol == nil {
			break
		}
		g.r.residual++
		g.r.newScope()
		keys := make([]rdf.Term, len(g.keys))
		g.key = g.key[:0]
		for i, k := range g.keys {
			t, err := k(sol)
			if fatal(err) {
				return err
			}
			keys[i] = t
			g.key = appendTermKey(g.key, t)
		}
		st, ok := g.byKey[string(g.key)]
		if !ok {
			if len(g.groups) >= g.r.limit {
				return g.r.tooLarge("GROUP BY")
			}
			st = g.newGroup(keys)
			g.byKey[string(g.key)] = st
			g.groups = append(g.groups, st)
		}
		for i, a := range g.aggs {
			var t rdf.Term
			var err error
			if a.arg == nil {
				t = solutionTerm(sol) // COUNT(*): the solution itself
			} else if t, err = a.arg(sol); fatal(err) {
				return err
			}
			if err := st.accs[i].add(t, err); err != nil {
				return g.r.tooLarge("DISTINCT in an aggregate")
			}
		}
	}
	g.in.close()
	g.byKey = nil
	if len(g.groups) == 0 && len(g.keys) == 0 {
		// Without GROUP BY, an empty input still forms one group (§11.2).
		g.groups = append(g.groups, g.newGroup(nil))
	}
	return nil
}

func (g *groupIter) close() {
	g.started = true
	g.groups = nil
	g.in.close()
}

// solutionTerm stands for a whole solution in COUNT(*), so that COUNT(DISTINCT
// *) can tell solutions apart: a literal whose lexical form is the solution's key.
func solutionTerm(sol []rdf.Term) rdf.Term {
	return rdf.NewString(string(appendSolutionKey(nil, sol)))
}

// accumulator computes one aggregate over the values of a group, each value a
// term or an expression error.
type accumulator interface {
	add(t rdf.Term, err error) error
	// result returns the aggregate, or false for an error (the variable stays
	// unbound).
	result() (rdf.Term, bool)
}

func newAccumulator(a algebra.Aggregate) accumulator {
	switch a.Name {
	case "COUNT":
		return &countAcc{}
	case "SUM":
		return &sumAcc{sum: number{kind: kindInteger}}
	case "AVG":
		return &avgAcc{sumAcc: sumAcc{sum: number{kind: kindInteger}}}
	case "MIN":
		return &extremeAcc{sign: -1}
	case "MAX":
		return &extremeAcc{sign: 1}
	case "SAMPLE":
		return &sampleAcc{}
	case "GROUP_CONCAT":
		return &concatAcc{sep: a.Separator}
	}
	return nil
}

// distinctAcc passes each distinct value once to its inner accumulator.
type distinctAcc struct {
	inner accumulator
	seen  map[string]bool
	limit int
	key   []byte
}

func (d *distinctAcc) add(t rdf.Term, err error) error {
	if err != nil {
		d.key = append(d.key[:0], 'e')
	} else {
		d.key = appendTermKey(d.key[:0], t)
	}
	k := string(d.key)
	if d.seen[k] {
		return nil
	}
	if len(d.seen) >= d.limit {
		return errExpr
	}
	d.seen[k] = true
	return d.inner.add(t, err)
}

func (d *distinctAcc) result() (rdf.Term, bool) { return d.inner.result() }

// countAcc is Count (§18.5.1.2): the values without error.
type countAcc struct{ n int64 }

func (c *countAcc) add(_ rdf.Term, err error) error {
	if err == nil {
		c.n++
	}
	return nil
}

func (c *countAcc) result() (rdf.Term, bool) {
	return number{kind: kindInteger, small: c.n}.literal(), true
}

// sumAcc is Sum (§18.5.1.3): op:numeric-add over the values, with promotion;
// an error or a non-numeric value makes the sum an error.
type sumAcc struct {
	sum    number
	n      int64
	failed bool
}

func (s *sumAcc) add(t rdf.Term, err error) error {
	if s.failed {
		return nil
	}
	x, ok := numberOf(t)
	if err != nil || !ok {
		s.failed = true
		return nil
	}
	s.sum, _ = arith('+', s.sum, x)
	s.n++
	return nil
}

func (s *sumAcc) result() (rdf.Term, bool) {
	if s.failed {
		return nil, false
	}
	return s.sum.literal(), true
}

// avgAcc is Avg (§18.5.1.4): Sum / Count, and 0 for no values.
type avgAcc struct{ sumAcc }

func (a *avgAcc) result() (rdf.Term, bool) {
	if a.failed {
		return nil, false
	}
	if a.n == 0 {
		return number{kind: kindInteger}.literal(), true
	}
	avg, ok := arith('/', a.sum, number{kind: kindInteger, small: a.n})
	if !ok {
		return nil, false
	}
	return avg.literal(), true
}

// extremeAcc is Min (sign -1) and Max (sign 1) in the ORDER BY order
// (§18.5.1.5, §18.5.1.6); no values at all is an error.
type extremeAcc struct {
	sign int
	best rdf.Term
	// failed records an error value, which makes the aggregate an error: the
	// values keep their errors (§18.5.1 ListEval), and the reference engine of
	// the differential tests (npm oxigraph) answers MIN and MAX over a group
	// with an unbound value as unbound.
	failed bool
}

func (e *extremeAcc) add(t rdf.Term, err error) error {
	if err != nil {
		e.failed = true
		return nil
	}
	if e.best == nil || orderTerms(t, e.best)*e.sign > 0 {
		e.best = t
	}
	return nil
}

func (e *extremeAcc) result() (rdf.Term, bool) {
	if e.failed {
		return nil, false
	}
	return e.best, e.best != nil
}

// sampleAcc is Sample (§18.5.1.8): the first value without error.
type sampleAcc struct{ value rdf.Term }

func (s *sampleAcc) add(t rdf.Term, err error) error {
	if err == nil && s.value == nil {
		s.value = t
	}
	return nil
}

func (s *sampleAcc) result() (rdf.Term, bool) { return s.value, s.value != nil }

// concatAcc is GroupConcat (§18.5.1.7): the lexical forms of the values with
// the separator between them. Every value must be a string literal, as for
// CONCAT; the result is a simple literal even when the values share a
// language tag, as the W3C tests agg-groupconcat-4 and -6 expect.
type concatAcc struct {
	sep    string
	b      strings.Builder
	n      int
	failed bool
}

func (c *concatAcc) add(t rdf.Term, err error) error {
	if c.failed {
		return nil
	}
	s, ok := stringLiteral(t)
	if err != nil || !ok {
		c.failed = true
		return nil
	}
	if c.n > 0 {
		c.b.WriteString(c.sep)
	}
	c.b.WriteString(s.Lexical)
	c.n++
	return nil
}

func (c *concatAcc) result() (rdf.Term, bool) {
	if c.failed {
		return nil, false
	}
	return rdf.NewString(c.b.String()), true
}
