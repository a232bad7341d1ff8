package rewrite

import (
	"veneer/rewrite/algebra"
	"veneer/rewrite/sql"
)

// This file expresses MINUS and FILTER (NOT) EXISTS as correlated SQL NOT EXISTS /
// EXISTS sub-queries over the other pattern's statement.

// minus removes from each branch of l the rows with a compatible solution of r
// that shares a bound variable with them (§18.5 Minus). Inside GRAPH ?g the two
// sides are evaluated graph by graph (§18.5 Graph), so graphVar, which both
// carry, must agree but does not count as a shared variable. nil when SQL cannot.
func (q *query) minus(l, r *rel, graphVar algebra.Var) *rel {
	l, ok := q.deduped(l)
	if !ok {
		return nil
	}
	shared := false
	for _, v := range r.vars {
		if v != graphVar && indexOfVar(l.vars, v) >= 0 {
			shared = true
		}
	}
	if !shared {
		return l // no solution of r shares a variable: nothing is removed
	}
	for _, b := range l.branches {
		cond, ok := q.existsCond(b, r, true, graphVar)
		if !ok {
			return nil
		}
		b.where = append(b.where, sql.Not{X: cond})
	}
	return l
}

// existsCond is EXISTS (a row of r compatible with the branch's row). With
// needShared, the two must also both bind at least one common variable (MINUS);
// without it, a row sharing nothing is compatible (EXISTS).
func (q *query) existsCond(b *branch, r *rel, needShared bool, graphVar algebra.Var) (sql.Expr, bool) {
	d, ok := q.derived(r, modifiers{limit: -1})
	if !ok {
		return nil, false
	}
	if len(d.branches) == 0 {
		return sql.Binary{Op: "=", L: sql.Int(0), R: sql.Int(1)}, true // no row of r exists
	}
	db := d.branches[0]
	var conds, bothBound []sql.Expr
	for v, rb := range db.vars {
		ab, shared := b.vars[v]
		if !shared {
			continue
		}
		if len(ab.alts) != 1 {
			return nil, false
		}
		a := ab.alts[0]
		var rActive, matches []sql.Expr
		for _, alt := range rb.alts {
			rActive = append(rActive, alt.active())
			c, exact, ok := q.unify(a, alt)
			if !ok {
				continue
			}
			if !exact {
				return nil, false
			}
			matches = append(matches, sql.And(append([]sql.Expr{alt.active()}, c...)...))
		}
		rBound := or(rActive...)
		// Compatible on v: unbound on either side, or the same term.
		options := []sql.Expr{}
		if ab.nullable {
			options = append(options, inactive(a))
		}
		if rBound != nil {
			options = append(options, sql.Not{X: rBound})
		}
		if len(matches) > 0 {
			options = append(options, or(matches...))
		}
		if len(options) == 0 {
			conds = append(conds, sql.Binary{Op: "=", L: sql.Int(0), R: sql.Int(1)})
		} else {
			conds = append(conds, or(options...))
		}
		if v != graphVar {
			bothBound = append(bothBound, sql.And(a.active(), rBound))
		}
	}
	if needShared {
		bb := or(bothBound...)
		if bb != nil {
			conds = append(conds, bb)
		}
	}
	sub := &sql.Select{Columns: []sql.Column{{Expr: sql.Int(1)}}, From: db.from, Where: sql.And(conds...)}
	return sql.Exists{Stmt: sub}, true
}

// existsSQL translates FILTER EXISTS / NOT EXISTS over the branch. The SQL
// correlation joins on shared variables, which equals §18.6's substitution of the
// current solution when the pattern's own expressions only read variables the
// pattern binds; otherwise the test stays in-process.
func (q *query) existsSQL(b *branch, e algebra.Exists) (sql.Expr, bool) {
	if !selfContained(e.Pattern) {
		return nil, false
	}
	r, mod, err := q.relation(e.Pattern, q.graph)
	if r == nil || err != nil {
		return nil, false
	}
	if r, err = q.nest(r, mod); r == nil || err != nil {
		return nil, false
	}
	cond, ok := q.existsCond(b, r, false, "")
	if !ok {
		return nil, false
	}
	if e.Not {
		return sql.Not{X: cond}, true
	}
	return cond, true
}

// selfContained reports whether every expression inside the pattern reads only
// variables in scope of the part it filters.
func selfContained(n algebra.Node) bool {
	ok := true
	var walk func(n algebra.Node)
	walk = func(n algebra.Node) {
		switch n := n.(type) {
		case algebra.Filter:
			scope := scopeSet(n.Input)
			for _, e := range n.Exprs {
				ok = ok && exprWithin(e, scope)
			}
		case algebra.LeftJoin:
			if n.Expr != nil {
				scope := scopeSet(n)
				ok = ok && exprWithin(n.Expr, scope)
			}
		case algebra.Extend:
			ok = ok && exprWithin(n.Expr, scopeSet(n.Input))
		}
		for _, c := range n.Children() {
			walk(c)
		}
	}
	walk(n)
	return ok
}

func scopeSet(n algebra.Node) map[algebra.Var]bool {
	out := map[algebra.Var]bool{}
	for _, v := range algebra.InScope(n) {
		out[v] = true
	}
	return out
}

// exprWithin reports whether e reads only variables of scope (EXISTS inside it
// counts as not).
func exprWithin(e algebra.Expr, scope map[algebra.Var]bool) bool {
	switch e := e.(type) {
	case algebra.Var:
		return scope[e]
	case algebra.Call:
		for _, a := range e.Args {
			if !exprWithin(a, scope) {
				return false
			}
		}
		return true
	case algebra.Exists:
		return false
	}
	return true
}
