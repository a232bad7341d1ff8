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
	return q.existsBranch(b, d.branches[0], nil, needShared, graphVar)
}

// existsBranch is EXISTS (a row of the branch rb, for which the conditions
// more hold too, compatible with the row of b).
func (q *query) existsBranch(b, rb *branch, more []sql.Expr, needShared bool, graphVar algebra.Var) (sql.Expr, bool) {
	var conds, bothBound []sql.Expr
	for v, vb := range rb.vars {
		ab, shared := b.vars[v]
		if !shared {
			continue
		}
		if len(ab.alts) != 1 {
			return nil, false
		}
		a := ab.alts[0]
		var rActive, matches []sql.Expr
		for _, alt := range vb.alts {
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
	where := append(append(append([]sql.Expr(nil), rb.where...), more...), conds...)
	sub := &sql.Select{Columns: []sql.Column{{Expr: sql.Int(1)}}, From: rb.from, Where: sql.And(uniqueConds(where)...)}
	return sql.Exists{Stmt: sub}, true
}

// existsSQL translates FILTER EXISTS / NOT EXISTS over the branch. The SQL
// correlation joins on shared variables, which equals §18.6's substitution of the
// current solution when the pattern's own expressions only read variables the
// pattern binds; otherwise the test stays in-process.
func (q *query) existsSQL(b *branch, e algebra.Exists) (sql.Expr, bool) {
	var cond sql.Expr
	ok := false
	if selfContained(e.Pattern) {
		r, mod, err := q.relation(e.Pattern, q.graph)
		if r == nil || err != nil {
			return nil, false
		}
		if r, err = q.nest(r, mod); r == nil || err != nil {
			return nil, false
		}
		cond, ok = q.existsCond(b, r, false, "")
	} else if f, isFilter := e.Pattern.(algebra.Filter); isFilter {
		cond, ok = q.correlatedExists(b, f)
	}
	if !ok {
		return nil, false
	}
	if e.Not {
		return sql.Not{X: cond}, true
	}
	return cond, true
}

// correlatedExists is EXISTS { P FILTER(...) } whose filter reads variables
// that P does not bind, a self-contained P: §18.6 substitutes the outer
// solution's terms for them, so the filter reads the outer row's columns (or
// finds them unbound, as SQL's NULL is). The filter runs inside the
// sub-query of each of P's branches, which reads P's tables directly: a
// derived table could not see the outer row in every dialect. EXISTS over the
// branches is the disjunction of their EXISTS.
func (q *query) correlatedExists(b *branch, f algebra.Filter) (sql.Expr, bool) {
	if !selfContained(f.Input) {
		return nil, false
	}
	scope := scopeSet(f.Input)
	outer := map[algebra.Var]bool{}
	for _, e := range f.Exprs {
		if !freeVars(e, scope, outer) {
			return nil, false
		}
	}
	r, mod, err := q.relation(f.Input, q.graph)
	if r == nil || err != nil || !plain(mod) || r.hasChecks() {
		return nil, false
	}
	var opts []sql.Expr
	for _, rb := range r.branches {
		view := rb.clone()
		for v := range outer {
			if ob, bound := b.vars[v]; bound {
				view.vars[v] = ob
			}
		}
		var conds []sql.Expr
		for _, e := range f.Exprs {
			for _, c := range conjuncts(e) {
				cond, ok := q.exprSQL(view, c)
				if !ok {
					return nil, false
				}
				conds = append(conds, cond)
			}
		}
		ex, ok := q.existsBranch(b, rb, conds, false, "")
		if !ok {
			return nil, false
		}
		opts = append(opts, ex)
	}
	if len(opts) == 0 {
		return sql.Binary{Op: "=", L: sql.Int(0), R: sql.Int(1)}, true // P has no rows
	}
	return or(opts...), true
}

// freeVars adds to free the variables e reads outside scope; false when e
// holds an EXISTS, whose own scopes this does not follow.
func freeVars(e algebra.Expr, scope, free map[algebra.Var]bool) bool {
	switch e := e.(type) {
	case algebra.Var:
		if !scope[e] {
			free[e] = true
		}
	case algebra.Call:
		for _, a := range e.Args {
			if !freeVars(a, scope, free) {
				return false
			}
		}
	case algebra.Exists:
		return false
	}
	return true
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
