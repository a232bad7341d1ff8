package exec

import (
	"slices"

	"veneer/catalog/rdf"
	"veneer/rewrite"
	"veneer/rewrite/algebra"
)

// The kinds of join.
const (
	joinInner = iota // Join: merged compatible pairs
	joinLeft         // LeftJoin: as Join, or the left solution alone
	joinMinus        // Minus: left solutions no right solution excludes
)

var joinNames = [...]string{joinInner: "a join", joinLeft: "OPTIONAL", joinMinus: "MINUS"}

// join builds Join, LeftJoin and Minus. All three read the right input into
// memory first (a hash table on the variables every right solution binds,
// bounded by Options.MaxBuffered), then stream the left input past it; the
// planner puts the side it expects to be smaller on the right. Reading the
// right side to its end before the left one starts means that at most one of
// the two has an open SQL statement at any time.
func (b *builder) join(left, right rewrite.Op, kind int, expr algebra.Expr) (node, error) {
	_, leftInline := left.(*rewrite.Values)
	_, rightInline := right.(*rewrite.Values)
	if kind == joinInner && leftInline && !rightInline {
		// Inline data is the smaller side; Join does not depend on the order
		// of its inputs.
		left, right = right, left
	}
	l, err := b.build(left)
	if err != nil {
		return node{}, err
	}
	r, err := b.build(right)
	if err != nil {
		return node{}, err
	}
	it := &joinIter{r: b.r, kind: kind, left: l.it, right: r.it, rightScope: r.scope}
	for _, i := range l.scope {
		if slices.Contains(r.scope, i) {
			it.shared = append(it.shared, i)
		}
	}
	if expr != nil {
		f, err := b.c.expr(expr)
		if err != nil {
			return node{}, err
		}
		it.filter = []evalFn{f}
	}
	if kind == joinMinus {
		return node{it: it, scope: l.scope}, nil
	}
	return node{it: it, scope: unionScope(l.scope, r.scope)}, nil
}

type joinIter struct {
	r           *run
	kind        int
	left, right iterator
	shared      []int // slots both sides may bind
	rightScope  []int
	filter      []evalFn // LeftJoin's expression, or none

	built bool
	rows  [][]rdf.Term // the right solutions
	keys  []int        // shared slots every right solution binds
	index map[string][]int
	all   []int // every row, for probes that cannot use the index
	key   []byte

	out  [][]rdf.Term // results for the current left solution not yet yielded
	done bool
}

func (j *joinIter) next() ([]rdf.Term, error) {
	for {
		if len(j.out) > 0 {
			sol := j.out[0]
			j.out = j.out[1:]
			return sol, nil
		}
		if j.done {
			return nil, nil
		}
		if !j.built {
			if err := j.buildRight(); err != nil {
				return nil, err
			}
			if len(j.rows) == 0 && j.kind == joinInner {
				j.close() // nothing to join with: the left input never runs
				return nil, nil
			}
		}
		sol, err := j.left.next()
		if err != nil {
			return nil, err
		}
		if sol == nil {
			j.close()
			return nil, nil
		}
		j.r.residual++
		if err := j.probe(sol); err != nil {
			return nil, err
		}
	}
}

// buildRight reads the right input and indexes it.
func (j *joinIter) buildRight() error {
	j.built = true
	if j.kind == joinMinus && len(j.shared) == 0 {
		// No right solution can share a variable with a left one (§18.5 Minus),
		// so the right side need not run at all.
		j.right.close()
		return nil
	}
	for {
		sol, err := j.right.next()
		if err != nil {
			return err
		}
		if sol == nil {
			break
		}
		j.r.residual++
		if len(j.rows) >= j.r.limit {
			return j.r.tooLarge("the right side of " + joinNames[j.kind])
		}
		j.rows = append(j.rows, sol)
	}
	j.right.close()
	for _, s := range j.shared {
		everywhere := true
		for _, row := range j.rows {
			if row[s] == nil {
				everywhere = false
				break
			}
		}
		if everywhere {
			j.keys = append(j.keys, s)
		}
	}
	j.all = make([]int, len(j.rows))
	for i := range j.rows {
		j.all[i] = i
	}
	if len(j.keys) > 0 {
		j.index = map[string][]int{}
		for i, row := range j.rows {
			k := string(j.keyOf(row))
			j.index[k] = append(j.index[k], i)
		}
	}
	return nil
}

// keyOf is the index key of a solution that binds every key slot.
// The key is reused by the next call.
func (j *joinIter) keyOf(sol []rdf.Term) []byte {
	j.key = j.key[:0]
	for _, s := range j.keys {
		j.key = appendTermKey(j.key, sol[s])
	}
	return j.key
}

// candidates returns the right rows that may be compatible with sol.
func (j *joinIter) candidates(sol []rdf.Term) []int {
	if j.index == nil {
		return j.all
	}
	for _, s := range j.keys {
		if sol[s] == nil {
			return j.all
		}
	}
	return j.index[string(j.keyOf(sol))]
}

// compatible reports whether two solutions agree on every variable both bind
// (§18.3), and whether they share one at all.
func (j *joinIter) compatible(a, b []rdf.Term) (ok, shares bool) {
	for _, s := range j.shared {
		x, y := a[s], b[s]
		if x == nil || y == nil {
			continue
		}
		if !rdf.SameTerm(x, y) {
			return false, true
		}
		shares = true
	}
	return true, shares
}

func (j *joinIter) merge(a, b []rdf.Term) []rdf.Term {
	out := append([]rdf.Term(nil), a...)
	for _, s := range j.rightScope {
		if out[s] == nil {
			out[s] = b[s]
		}
	}
	return out
}

// probe computes the results of one left solution into j.out.
func (j *joinIter) probe(sol []rdf.Term) error {
	matched := false
	for n, i := range j.candidates(sol) {
		if n&4095 == 4095 {
			if err := j.r.ctx.Err(); err != nil {
				return j.r.fail(err)
			}
		}
		row := j.rows[i]
		ok, shares := j.compatible(sol, row)
		if !ok {
			continue
		}
		switch j.kind {
		case joinMinus:
			if shares {
				return nil // excluded
			}
		case joinInner:
			j.out = append(j.out, j.merge(sol, row))
		case joinLeft:
			m := j.merge(sol, row)
			if j.filter != nil {
				keep, err := j.r.holds(j.filter, m)
				if err != nil {
					return err
				}
				if !keep {
					continue
				}
			}
			matched = true
			j.out = append(j.out, m)
		}
	}
	if j.kind == joinMinus || j.kind == joinLeft && !matched {
		j.out = append(j.out, sol)
	}
	return nil
}

func (j *joinIter) close() {
	j.done = true
	j.left.close()
	j.right.close()
	j.rows, j.index, j.all = nil, nil, nil
}
