package exec

import (
	"container/heap"
	"math"
	"slices"
	"strings"

	"veneer/catalog/rdf"
	"veneer/rewrite"
)

// orderTerms is the total order ORDER BY uses (§15.1): unbound (or an error)
// first, then blank nodes, IRIs and literals. Literals that < compares
// (§17.3) are ordered by it; the others are ordered, as §15.1 leaves to the
// implementation, by a rank of their type (numerics, booleans, strings,
// language-tagged strings, date-times, anything else), then by value within
// the rank and finally by datatype, lexical form and language.
func orderTerms(a, b rdf.Term) int {
	ka, kb := termRank(a), termRank(b)
	if ka != kb {
		return ka - kb
	}
	switch x := a.(type) {
	case nil:
		return 0
	case rdf.BlankNode:
		return strings.Compare(string(x), string(b.(rdf.BlankNode)))
	case rdf.IRI:
		return strings.Compare(string(x), string(b.(rdf.IRI)))
	case rdf.Literal:
		return orderLiterals(x, b.(rdf.Literal))
	}
	return 0
}

func termRank(t rdf.Term) int {
	if t == nil {
		return 0
	}
	return int(t.Kind()) // blank < IRI < literal (rdf.Kind's order)
}

// literal ranks for orderLiterals.
const (
	rankNumeric = iota
	rankBoolean
	rankString
	rankLangString
	rankTemporal
	rankOther
)

func isNaN(l rdf.Literal) bool {
	n, ok := numberOf(l)
	return ok && n.kind >= kindFloat && math.IsNaN(n.f)
}

func literalRank(l rdf.Literal) int {
	switch {
	case l.Datatype == rdf.XSDString:
		return rankString
	case l.Datatype == rdf.RDFLangString:
		return rankLangString
	case !valueTyped(l):
		return rankOther
	case isNumericType(l.Datatype):
		return rankNumeric
	case l.Datatype == rdf.XSDBoolean:
		return rankBoolean
	}
	return rankTemporal
}

func orderLiterals(a, b rdf.Literal) int {
	ra, rb := literalRank(a), literalRank(b)
	if ra != rb {
		return ra - rb
	}
	c, err := compareValues(a, b)
	switch {
	case err == nil && c != unordered:
		return c // equal values (2 and 2.0) tie, keeping their input order
	case c == unordered:
		// NaN is unordered; it goes before every other number.
		return boolInt(!isNaN(a)) - boolInt(!isNaN(b))
	}
	if c := strings.Compare(string(a.Datatype), string(b.Datatype)); c != 0 {
		return c
	}
	if c := strings.Compare(a.Lexical, b.Lexical); c != 0 {
		return c
	}
	return strings.Compare(strings.ToLower(a.Lang), strings.ToLower(b.Lang))
}

// order builds Order; with keep >= 0 (the Offset+Limit of a Slice above it)
// only the first keep solutions are held in memory.
func (b *builder) order(op *rewrite.Order, keep int64) (node, error) {
	in, err := b.build(op.Input)
	if err != nil {
		return node{}, err
	}
	it := &orderIter{r: b.r, in: in.it, keep: keep}
	for _, c := range op.Conds {
		fn, err := b.c.expr(c.Expr)
		if err != nil {
			return node{}, err
		}
		it.keys = append(it.keys, fn)
		it.desc = append(it.desc, c.Desc)
	}
	return node{it: it, scope: in.scope}, nil
}

// orderIter sorts its input; ties keep their input order.
type orderIter struct {
	r    *run
	in   iterator
	keys []evalFn
	desc []bool
	keep int64

	sorted []sortEntry
	done   bool
	seq    int
}

type sortEntry struct {
	sol  []rdf.Term
	keys []rdf.Term
	seq  int
}

// compare orders two entries by their keys, then by input order, so that no
// two entries tie.
func (o *orderIter) compare(a, b *sortEntry) int {
	for i, d := range o.desc {
		c := orderTerms(a.keys[i], b.keys[i])
		if d {
			c = -c
		}
		if c != 0 {
			return c
		}
	}
	return a.seq - b.seq
}

func (o *orderIter) next() ([]rdf.Term, error) {
	if !o.done {
		if err := o.sort(); err != nil {
			return nil, err
		}
	}
	if len(o.sorted) == 0 {
		return nil, nil
	}
	sol := o.sorted[0].sol
	o.sorted = o.sorted[1:]
	return sol, nil
}

// sort reads the whole input and sorts it.
func (o *orderIter) sort() error {
	o.done = true
	h := &sortHeap{o: o}
	for {
		sol, err := o.in.next()
		if err != nil {
			return err
		}
		if sol == nil {
			break
		}
		o.r.residual++
		o.r.newScope()
		e := sortEntry{sol: sol, keys: make([]rdf.Term, len(o.keys)), seq: o.seq}
		o.seq++
		for i, k := range o.keys {
			t, err := k(sol)
			if fatal(err) {
				return err
			}
			e.keys[i] = t // nil for an error: it sorts with unbound
		}
		switch {
		case o.keep < 0:
			if len(h.entries) >= o.r.limit {
				return o.r.tooLarge("ORDER BY")
			}
			h.entries = append(h.entries, e)
		case int64(len(h.entries)) < o.keep:
			heap.Push(h, e)
		case o.keep > 0 && o.compare(&e, &h.entries[0]) < 0:
			h.entries[0] = e
			heap.Fix(h, 0)
		}
	}
	o.in.close()
	o.sorted = h.entries
	slices.SortFunc(o.sorted, func(a, b sortEntry) int { return o.compare(&a, &b) })
	return nil
}

func (o *orderIter) close() {
	o.done = true
	o.sorted = nil
	o.in.close()
}

// sortHeap is a max-heap of the entries kept for ORDER BY with LIMIT: its top
// is the entry that leaves first when a smaller one arrives.
type sortHeap struct {
	o       *orderIter
	entries []sortEntry
}

func (h *sortHeap) Len() int           { return len(h.entries) }
func (h *sortHeap) Less(i, j int) bool { return h.o.compare(&h.entries[i], &h.entries[j]) > 0 }
func (h *sortHeap) Swap(i, j int)      { h.entries[i], h.entries[j] = h.entries[j], h.entries[i] }
func (h *sortHeap) Push(x any)         { h.entries = append(h.entries, x.(sortEntry)) }
func (h *sortHeap) Pop() any {
	e := h.entries[len(h.entries)-1]
	h.entries = h.entries[:len(h.entries)-1]
	return e
}
