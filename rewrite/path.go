package rewrite

import (
	"fmt"

	"veneer/catalog"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/rewrite/algebra"
	"veneer/rewrite/sql"
)

// This file expresses property paths (§18.4) in SQL: sequences as joins,
// alternatives as unions, negated property sets as excluded predicates, and
// p+ as a recursive common table expression over p's pairs; p* and p? add the
// zero-length pairs.

// fresh returns a hidden variable of the planner's own.
func (q *query) fresh() algebra.Var {
	q.seq++
	return algebra.Var(fmt.Sprintf("_:#r%d", q.seq))
}

// pathPattern plans S path O as a relation binding S and O (those that are
// variables); nil when SQL cannot express it.
func (q *query) pathPattern(n algebra.PathPattern, graph algebra.Item) (*rel, error) {
	// Constant ends are bound after the fact; inside, a recursion starts from
	// a constant end (walking backwards from a constant end alone).
	sv, ov := q.endVar(n.S), q.endVar(n.O)
	if n.S == n.O {
		ov = q.fresh()
	}
	r, err := q.path(n.Path, sv, ov, graph, ends{algebra.TermOf(n.S), algebra.TermOf(n.O)})
	if r == nil || err != nil {
		return nil, err
	}
	for _, end := range []struct {
		v  algebra.Var
		it algebra.Item
	}{{sv, n.S}, {ov, n.O}} {
		if c, ok := end.it.(algebra.Const); ok {
			if !q.restrict(r, algebra.Values{Vars: []algebra.Var{end.v}, Rows: [][]rdf.Term{{c.Term}}}) {
				return nil, nil
			}
		}
	}
	if n.S == n.O {
		// ?x path ?x: both ends the same term.
		for _, b := range r.branches {
			x, y := b.vars[sv], b.vars[ov]
			if !x.solid() || !y.solid() {
				return nil, nil
			}
			conds, exact, ok := q.unify(x.alts[0], y.alts[0])
			if !exact {
				return nil, nil
			}
			if !ok {
				conds = []sql.Expr{sql.Binary{Op: "=", L: sql.Int(0), R: sql.Int(1)}}
			}
			b.where = append(b.where, conds...)
		}
	}
	return r, nil
}

// ends are the constant ends of a path, where it has them (nil: a variable).
type ends struct{ start, end rdf.Term }

func (e ends) reversed() ends { return ends{e.end, e.start} }

func (q *query) endVar(it algebra.Item) algebra.Var {
	if v, ok := it.(algebra.Var); ok {
		return v
	}
	return q.fresh()
}

// path plans one path expression between two variables; at holds the constant
// ends of the whole pattern where this part of the path touches them (for the
// zero-length case and the anchor of a recursion).
func (q *query) path(p algebra.Path, s, o algebra.Var, graph algebra.Item, at ends) (*rel, error) {
	switch p := p.(type) {
	case algebra.PathLink:
		return q.bgp([]algebra.Triple{{S: s, P: algebra.Const{Term: p.IRI}, O: o}}, graph)
	case algebra.PathInv:
		return q.path(p.Path, o, s, graph, at.reversed())
	case algebra.PathSeq:
		mid := q.fresh()
		l, err := q.path(p.Left, s, mid, graph, ends{start: at.start})
		if l == nil || err != nil {
			return nil, err
		}
		r, err := q.path(p.Right, mid, o, graph, ends{end: at.end})
		if r == nil || err != nil {
			return nil, err
		}
		return q.join(l, r)
	case algebra.PathAlt:
		l, err := q.path(p.Left, s, o, graph, at)
		if l == nil || err != nil {
			return nil, err
		}
		r, err := q.path(p.Right, s, o, graph, at)
		if r == nil || err != nil {
			return nil, err
		}
		return q.union(l, r), nil
	case algebra.PathNegated:
		return q.negated(p, s, o, graph)
	case algebra.PathOneOrMore:
		return q.closure(p.Path, s, o, graph, at)
	case algebra.PathZeroOrMore:
		plus, err := q.closure(p.Path, s, o, graph, at)
		if plus == nil || err != nil {
			return nil, err
		}
		return q.withZeroLength(plus, s, o, graph, at)
	case algebra.PathZeroOrOne:
		one, err := q.path(p.Path, s, o, graph, at)
		if one == nil || err != nil {
			return nil, err
		}
		return q.withZeroLength(one, s, o, graph, at)
	}
	return nil, nil
}

// negated plans !(iri1|…|^iriN): the triples whose predicate is none of the
// forward IRIs, and the reversed triples whose predicate is none of the inverse
// ones (§18.2.2.3's NPS and inv(NPS)).
func (q *query) negated(p algebra.PathNegated, s, o algebra.Var, graph algebra.Item) (*rel, error) {
	part := func(excluded []rdf.IRI, s, o algebra.Var) (*rel, error) {
		pv := q.fresh()
		r, err := q.bgp([]algebra.Triple{{S: s, P: pv, O: o}}, graph)
		if err != nil {
			return nil, err
		}
		var kept []*branch
	branches:
		for _, b := range r.branches {
			occ := b.vars[pv].alts[0]
			for _, iri := range excluded {
				conds, ok := q.constConds(occ, iri)
				if !ok {
					continue
				}
				if len(conds) == 0 {
					continue branches // this branch's predicate is always excluded
				}
				b.where = append(b.where, sql.Not{X: sql.And(conds...)})
			}
			kept = append(kept, b)
		}
		r.branches = kept
		return r, nil
	}
	switch {
	case len(p.Inverse) == 0:
		return part(p.Forward, s, o)
	case len(p.Forward) == 0:
		return part(p.Inverse, o, s)
	}
	f, err := part(p.Forward, s, o)
	if err != nil {
		return nil, err
	}
	i, err := part(p.Inverse, o, s)
	if err != nil {
		return nil, err
	}
	return q.union(f, i), nil
}

// closure plans p+ as a recursive CTE over the distinct pairs of p. It needs
// the pairs' ends to have one shape, the same at both ends, so a step joins on
// columns.
func (q *query) closure(p algebra.Path, s, o algebra.Var, graph algebra.Item, at ends) (*rel, error) {
	if at.start == nil && at.end != nil {
		// Only the end is known: walk backwards from it.
		return q.closure(algebra.PathInv{Path: p}, o, s, graph, at.reversed())
	}
	step, err := q.path(p, s, o, graph, ends{})
	if step == nil || err != nil {
		return nil, err
	}
	if len(step.branches) == 0 {
		return &rel{vars: []algebra.Var{s, o}}, nil // no step at all: no path
	}
	stepClosed, ok := q.closeRel(step, modifiers{vars: []algebra.Var{s, o}, distinct: true, limit: -1})
	if !ok || len(stepClosed.slots) != 2 || len(stepClosed.checks) > 0 {
		return nil, nil
	}
	sb, ob := stepClosed.slots[0].Builders, stepClosed.slots[1].Builders
	if stepClosed.slots[0].Var != s || len(sb) != 1 || len(ob) != 1 {
		return nil, nil
	}
	startShape := occurrence{m: sb[0].Map, cols: colsAt(stepClosed.types, sb[0].Cols)}
	endShape := occurrence{m: ob[0].Map, cols: colsAt(stepClosed.types, ob[0].Cols)}
	if groupKey(startShape) != groupKey(endShape) {
		// A step's end can never be a step's start: no path is longer than one step.
		if !q.mayEqual(startShape, endShape) {
			return q.path(p, s, o, graph, ends{})
		}
		return nil, nil
	}
	anchor := stepClosed
	if at.start != nil {
		// Start the walk at the constant: only its first steps seed the recursion.
		first, err := q.path(p, s, o, graph, ends{})
		if first == nil || err != nil {
			return nil, err
		}
		if !q.restrict(first, algebra.Values{Vars: []algebra.Var{s}, Rows: [][]rdf.Term{{at.start}}}) {
			return nil, nil
		}
		if len(first.branches) == 0 {
			return &rel{vars: []algebra.Var{s, o}}, nil
		}
		if anchor, ok = q.closeRel(first, modifiers{vars: []algebra.Var{s, o}, distinct: true, limit: -1}); !ok {
			return nil, nil
		}
		if len(anchor.slots) != 2 || len(anchor.slots[0].Builders) != 1 || len(anchor.slots[1].Builders) != 1 {
			return nil, nil
		}
	}
	name, alias, edge := q.alias("path"), q.alias("p"), q.alias("e")
	ncols := len(sb[0].Cols) + len(ob[0].Cols)
	var cols []string
	for i := 0; i < ncols; i++ {
		cols = append(cols, columnName(i))
	}
	// The step statement, read as a table: its start columns join the path so
	// far's end columns.
	prev := q.alias("r")
	stepSel := &sql.Select{From: []sql.From{
		&sql.Table{Name: []catalog.Ident{{Name: name, Quoted: true}}, Alias: prev},
		&sql.Derived{Stmt: stepClosed.stmt, Alias: edge},
	}}
	for i, c := range sb[0].Cols {
		stepSel.Columns = append(stepSel.Columns, sql.Column{Expr: columnOf(prev, i), Alias: cols[i]})
		stepSel.Where = sql.And(stepSel.Where, sql.Binary{Op: "=", L: columnOf(prev, len(sb[0].Cols)+i), R: columnOf(edge, c),
			Exact: stringKind(stepClosed.types[c].Kind)})
	}
	for i, c := range ob[0].Cols {
		stepSel.Columns = append(stepSel.Columns, sql.Column{Expr: columnOf(edge, c), Alias: cols[len(sb[0].Cols)+i]})
	}
	anchorSel := &sql.Select{From: []sql.From{&sql.Derived{Stmt: anchor.stmt, Alias: q.alias("a")}}}
	aAlias := anchorSel.From[0].(*sql.Derived).Alias
	for i, c := range append(append([]int(nil), anchor.slots[0].Builders[0].Cols...), anchor.slots[1].Builders[0].Cols...) {
		anchorSel.Columns = append(anchorSel.Columns, sql.Column{Expr: q.recursionType(columnOf(aAlias, c), anchor.types[c]), Alias: cols[i]})
	}
	b := &branch{from: []sql.From{&sql.Recursive{Name: name, Columns: cols, Anchor: anchorSel, Step: stepSel, Alias: alias}},
		vars: map[algebra.Var]binding{}}
	col := 0
	for _, end := range []struct {
		v  algebra.Var
		bl Builder
	}{{s, sb[0]}, {o, ob[0]}} {
		occ := occurrence{m: end.bl.Map}
		for _, c := range end.bl.Cols {
			t := stepClosed.types[c]
			t.NotNull = true // every pair binds both ends
			if end.bl.Map.Kind == catalog.Constant {
				occ.marker = columnOf(alias, col)
			} else {
				occ.exprs = append(occ.exprs, columnOf(alias, col))
				occ.cols = append(occ.cols, t)
			}
			col++
		}
		b.vars[end.v] = binding{alts: []occurrence{occ}}
	}
	return &rel{branches: []*branch{b}, vars: []algebra.Var{s, o}}, nil
}

func colsAt(types []source.Column, idx []int) []source.Column {
	out := make([]source.Column, len(idx))
	for i, c := range idx {
		out[i] = types[c]
	}
	return out
}

// withZeroLength adds the zero-length pairs to a path's (§18.4: the start term
// itself when it is a constant, else every node of the graph paired with itself)
// and removes repeats: p* and p? are sets.
func (q *query) withZeroLength(r *rel, s, o algebra.Var, graph algebra.Item, at ends) (*rel, error) {
	var zero *rel
	c := at.start
	if c == nil {
		c = at.end
	}
	if c != nil {
		// The constant end itself, whether or not the graph holds it (§18.4).
		zero = &rel{branches: []*branch{{vars: map[algebra.Var]binding{}}}}
		if !q.extend(zero, s, algebra.Const{Term: c}) || !q.extend(zero, o, algebra.Const{Term: c}) {
			return nil, nil
		}
	} else {
		nodes, err := q.nodes(s, graph)
		if nodes == nil || err != nil {
			return nil, err
		}
		if !q.extend(nodes, o, s) {
			return nil, nil
		}
		zero = nodes
	}
	u := q.union(r, zero)
	if u == nil {
		return nil, nil
	}
	d, ok := q.derived(u, modifiers{vars: []algebra.Var{s, o}, distinct: true, limit: -1})
	if !ok {
		return nil, nil
	}
	return d, nil
}

// nodes is every subject and object of the graph, bound to v, without repeats.
func (q *query) nodes(v algebra.Var, graph algebra.Item) (*rel, error) {
	p1, o1 := q.fresh(), q.fresh()
	subjects, err := q.bgp([]algebra.Triple{{S: v, P: p1, O: o1}}, graph)
	if err != nil {
		return nil, err
	}
	s2, p2 := q.fresh(), q.fresh()
	objects, err := q.bgp([]algebra.Triple{{S: s2, P: p2, O: v}}, graph)
	if err != nil {
		return nil, err
	}
	u := q.union(subjects, objects)
	if u == nil {
		return nil, nil
	}
	d, ok := q.derived(u, modifiers{vars: []algebra.Var{v}, distinct: true, limit: -1})
	if !ok {
		return nil, nil
	}
	return d, nil
}

// recursionType casts an anchor column of a recursive CTE to its type without
// modifiers where PostgreSQL needs it: there the anchor's varchar(20) does not
// match the union's varchar, and the recursion is refused.
func (q *query) recursionType(e sql.Expr, col source.Column) sql.Expr {
	if q.pl.dialect != source.Postgres {
		return e
	}
	switch col.Kind {
	case source.TypeString:
		return sql.Cast{X: e, Type: "TEXT"}
	case source.TypeDecimal:
		return sql.Cast{X: e, Type: "NUMERIC"}
	}
	return e
}

// mayEqual reports whether two shapes can build the same term.
func (q *query) mayEqual(a, b occurrence) bool {
	fill := func(o occurrence) occurrence {
		o.exprs = make([]sql.Expr, len(o.cols))
		for i := range o.exprs {
			o.exprs[i] = sql.Null{}
		}
		return o
	}
	_, _, ok := q.unify(fill(a), fill(b))
	return ok
}
