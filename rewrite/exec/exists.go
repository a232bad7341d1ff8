package exec

import (
	"fmt"

	"veneer/catalog/rdf"
	"veneer/rewrite/algebra"
)

// existsCacheLimit bounds the answers one EXISTS remembers.
const existsCacheLimit = 1 << 14

// exists compiles EXISTS and NOT EXISTS (§17.4.1.4, §18.6 Exists): the
// solution's bindings of the pattern's variables are substituted into the
// pattern, which is then planned and run; EXISTS is true when it yields a
// solution. Each distinct set of bindings is planned and run once: the answer
// is remembered.
func (c *compiler) exists(e algebra.Exists) (evalFn, error) {
	r := c.r
	if r.planner == nil {
		return nil, badQuery("EXISTS cannot be evaluated: the plan has no planner for its pattern")
	}
	vars := patternVars(e.Pattern)
	slots := make([]int, len(vars))
	for i, v := range vars {
		slots[i] = c.l.slot(v)
	}
	cache := map[string]bool{}
	var key []byte
	return func(sol []rdf.Term) (rdf.Term, error) {
		key = key[:0]
		for _, s := range slots {
			key = appendTermKey(key, sol[s])
		}
		found, ok := cache[string(key)]
		if !ok {
			mu := map[algebra.Var]rdf.Term{}
			for i, s := range slots {
				if sol[s] != nil {
					mu[vars[i]] = sol[s]
				}
			}
			var err error
			if found, err = r.matches(substitute(e.Pattern, mu)); err != nil {
				return nil, err
			}
			if len(cache) >= existsCacheLimit {
				clear(cache)
			}
			cache[string(key)] = found
		}
		return boolTerm(found != e.Not), nil
	}, nil
}

// matches plans a pattern and reports whether it has a solution; it stops the
// pattern's SQL at the first one.
func (r *run) matches(p algebra.Node) (bool, error) {
	op, err := r.planner.PlanPattern(p)
	if err != nil {
		return false, r.fail(fmt.Errorf("planning the pattern of EXISTS: %w", err))
	}
	n, err := newBuilder(r).build(op)
	if err != nil {
		return false, err
	}
	defer n.it.close()
	sol, err := n.it.next()
	return sol != nil, err
}

// patternVars lists the variables a pattern mentions anywhere, its
// expressions and nested patterns included, in order of first appearance.
func patternVars(n algebra.Node) []algebra.Var {
	var vs []algebra.Var
	seen := map[algebra.Var]bool{}
	add := func(it algebra.Item) {
		if v, ok := it.(algebra.Var); ok && !seen[v] {
			seen[v] = true
			vs = append(vs, v)
		}
	}
	var node func(algebra.Node)
	var expr func(algebra.Expr)
	expr = func(e algebra.Expr) {
		switch e := e.(type) {
		case algebra.Var:
			add(e)
		case algebra.Call:
			for _, a := range e.Args {
				expr(a)
			}
		case algebra.Exists:
			node(e.Pattern)
		case algebra.Aggregate:
			if e.Arg != nil {
				expr(e.Arg)
			}
		}
	}
	node = func(n algebra.Node) {
		switch n := n.(type) {
		case algebra.BGP:
			for _, t := range n.Patterns {
				add(t.S)
				add(t.P)
				add(t.O)
			}
		case algebra.PathPattern:
			add(n.S)
			add(n.O)
		case algebra.Graph:
			add(n.Name)
		case algebra.Service:
			add(n.Endpoint)
		case algebra.Values:
			for _, v := range n.Vars {
				add(v)
			}
		case algebra.Filter:
			for _, e := range n.Exprs {
				expr(e)
			}
		case algebra.LeftJoin:
			if n.Expr != nil {
				expr(n.Expr)
			}
		case algebra.Extend:
			add(n.Var)
			expr(n.Expr)
		case algebra.Group:
			for _, k := range n.Keys {
				expr(k.Expr)
			}
			for _, a := range n.Aggs {
				expr(a.Agg)
			}
		case algebra.OrderBy:
			for _, c := range n.Conds {
				expr(c.Expr)
			}
		case algebra.Project:
			for _, v := range n.Vars {
				add(v)
			}
		}
		for _, c := range n.Children() {
			node(c)
		}
	}
	node(n)
	return vs
}

// substitute replaces the variables bound in mu by their terms (§18.6,
// substitute(pattern, μ)). Inside a sub-SELECT only its projected variables
// are the outer ones, so only they are replaced there. A BIND of a variable mu
// binds becomes a test that the expression, where it has a value, gives mu's
// term, which is what joining the bound solution with the pattern would keep.
func substitute(n algebra.Node, mu map[algebra.Var]rdf.Term) algebra.Node {
	if len(mu) == 0 {
		return n
	}
	item := func(it algebra.Item) algebra.Item {
		if v, ok := it.(algebra.Var); ok {
			if t, ok := mu[v]; ok {
				return algebra.Const{Term: t}
			}
		}
		return it
	}
	ex := func(e algebra.Expr) algebra.Expr { return substituteExpr(e, mu) }
	var out algebra.Node
	switch x := n.(type) {
	case algebra.BGP:
		b := algebra.BGP{Patterns: make([]algebra.Triple, len(x.Patterns))}
		for i, t := range x.Patterns {
			b.Patterns[i] = algebra.Triple{S: item(t.S), P: item(t.P), O: item(t.O)}
		}
		return b
	case algebra.PathPattern:
		x.S, x.O = item(x.S), item(x.O)
		return x
	case algebra.Values:
		return substituteValues(x, mu)
	case algebra.Project:
		inner := map[algebra.Var]rdf.Term{}
		for _, v := range x.Vars {
			if t, ok := mu[v]; ok {
				inner[v] = t
			}
		}
		x.Input = substitute(x.Input, inner)
		return x
	case algebra.Extend:
		if t, ok := mu[x.Var]; ok {
			same := algebra.Call{Op: "SAMETERM", Args: []algebra.Expr{ex(x.Expr), algebra.Const{Term: t}}}
			test := algebra.Call{Op: "COALESCE", Args: []algebra.Expr{same, algebra.Const{Term: termTrue}}}
			return algebra.Filter{Exprs: []algebra.Expr{test}, Input: substitute(x.Input, mu)}
		}
		x.Expr = ex(x.Expr)
		out = x
	case algebra.Graph:
		x.Name = item(x.Name)
		out = x
	case algebra.Service:
		x.Endpoint = item(x.Endpoint)
		out = x
	case algebra.Filter:
		exprs := make([]algebra.Expr, len(x.Exprs))
		for i, e := range x.Exprs {
			exprs[i] = ex(e)
		}
		x.Exprs = exprs
		out = x
	case algebra.LeftJoin:
		if x.Expr != nil {
			x.Expr = ex(x.Expr)
		}
		out = x
	case algebra.Group:
		keys := make([]algebra.GroupKey, len(x.Keys))
		for i, k := range x.Keys {
			keys[i] = algebra.GroupKey{Expr: ex(k.Expr), Var: k.Var}
		}
		aggs := make([]algebra.AggBinding, len(x.Aggs))
		for i, a := range x.Aggs {
			aggs[i] = algebra.AggBinding{Var: a.Var, Agg: ex(a.Agg).(algebra.Aggregate)}
		}
		x.Keys, x.Aggs = keys, aggs
		out = x
	case algebra.OrderBy:
		conds := make([]algebra.OrderCond, len(x.Conds))
		for i, c := range x.Conds {
			conds[i] = algebra.OrderCond{Expr: ex(c.Expr), Desc: c.Desc}
		}
		x.Conds = conds
		out = x
	default:
		out = n
	}
	kids := out.Children()
	if len(kids) == 0 {
		return out
	}
	next := make([]algebra.Node, len(kids))
	for i, k := range kids {
		next[i] = substitute(k, mu)
	}
	return out.WithChildren(next...)
}

// substituteValues keeps the rows of inline data that agree with mu.
func substituteValues(n algebra.Values, mu map[algebra.Var]rdf.Term) algebra.Node {
	out := algebra.Values{Vars: n.Vars}
	for _, row := range n.Rows {
		keep := true
		for i, v := range n.Vars {
			if t, ok := mu[v]; ok && i < len(row) && row[i] != nil && !rdf.SameTerm(row[i], t) {
				keep = false
				break
			}
		}
		if keep {
			out.Rows = append(out.Rows, row)
		}
	}
	return out
}

// substituteExpr replaces bound variables in an expression.
func substituteExpr(e algebra.Expr, mu map[algebra.Var]rdf.Term) algebra.Expr {
	switch e := e.(type) {
	case algebra.Var:
		if t, ok := mu[e]; ok {
			return algebra.Const{Term: t}
		}
	case algebra.Call:
		args := make([]algebra.Expr, len(e.Args))
		for i, a := range e.Args {
			args[i] = substituteExpr(a, mu)
		}
		e.Args = args
		return e
	case algebra.Exists:
		e.Pattern = substitute(e.Pattern, mu)
		return e
	case algebra.Aggregate:
		if e.Arg != nil {
			e.Arg = substituteExpr(e.Arg, mu)
		}
		return e
	}
	return e
}
