package rewrite

import (
	"strings"

	"veneer/catalog"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/rewrite/algebra"
	"veneer/rewrite/sql"
)

// relation expresses n in SQL when it can: it returns the relation and the
// solution modifiers its statement carries, nil when some part of n must run
// in-process, or an error for a query that cannot be planned at all.
func (q *query) relation(n algebra.Node, graph algebra.Item) (*rel, modifiers, error) {
	none := modifiers{limit: -1}
	switch n := n.(type) {
	case algebra.BGP:
		r, err := q.bgp(n.Patterns, graph)
		if err != nil {
			return nil, none, err
		}
		if len(n.Patterns) == 0 {
			// The empty pattern's one empty solution, or for GRAPH ?g {}, the
			// names of the graphs: the latter is left in-process for now.
			if graph != nil {
				return nil, none, nil
			}
			r = &rel{branches: []*branch{{vars: map[algebra.Var]binding{}}}}
		}
		return r, none, nil
	case algebra.Graph:
		if _, isVar := n.Name.(algebra.Var); isVar && !carriesGraph(n.Input) {
			return nil, none, nil // graph by graph, in-process (see op)
		}
		return q.relation(n.Input, n.Name)
	case algebra.PathPattern:
		r, err := q.pathPattern(n, graph)
		return r, none, err
	case algebra.Filter:
		r, mod, err := q.relation(n.Input, graph)
		if r == nil || err != nil || !plain(mod) {
			return nil, none, err
		}
		q.graph = graph
		if residual := q.pushFilters(r, n.Exprs); len(residual) > 0 {
			return nil, none, nil
		}
		return r, none, nil
	case algebra.Join:
		if vals, other, ok := valuesSide(n); ok {
			r, mod, err := q.relation(other, graph)
			if r == nil || err != nil || !plain(mod) {
				return nil, none, err
			}
			if !q.restrict(r, vals) {
				return nil, none, nil
			}
			return r, none, nil
		}
		l, r, err := q.relations(n.Left, n.Right, graph)
		if l == nil || err != nil {
			return nil, none, err
		}
		j, err := q.join(l, r)
		if j == nil || err != nil {
			return nil, none, err
		}
		return j, none, nil
	case algebra.LeftJoin:
		l, r, err := q.relations(n.Left, n.Right, graph)
		if l == nil || err != nil {
			return nil, none, err
		}
		j := q.leftJoin(l, r, n.Expr)
		return j, none, nil
	case algebra.Union:
		l, r, err := q.relations(n.Left, n.Right, graph)
		if l == nil || err != nil {
			return nil, none, err
		}
		return q.union(l, r), none, nil
	case algebra.Minus:
		l, r, err := q.relations(n.Left, n.Right, graph)
		if l == nil || err != nil {
			return nil, none, err
		}
		graphVar, _ := graph.(algebra.Var)
		return q.minus(l, r, graphVar), none, nil
	case algebra.Extend:
		r, mod, err := q.relation(n.Input, graph)
		if r == nil || err != nil || !plain(mod) {
			return nil, none, err
		}
		if !q.extend(r, n.Var, n.Expr) {
			return nil, none, nil
		}
		return r, none, nil
	case algebra.Project:
		r, mod, err := q.relation(n.Input, graph)
		if r == nil || err != nil {
			return nil, none, err
		}
		if mod.vars != nil || mod.distinct || mod.limit >= 0 || mod.offset > 0 {
			if r, err = q.nest(r, mod); r == nil || err != nil {
				return nil, none, err
			}
			mod = none
		}
		mod.vars = n.Vars
		return r, mod, nil
	case algebra.Distinct, algebra.Reduced:
		r, mod, err := q.relation(n.Children()[0], graph)
		if r == nil || err != nil {
			return nil, none, err
		}
		if mod.limit >= 0 || mod.offset > 0 {
			if r, err = q.nest(r, mod); r == nil || err != nil {
				return nil, none, err
			}
			mod = none
		}
		mod.distinct = true
		return r, mod, nil
	case algebra.OrderBy:
		r, mod, err := q.relation(n.Input, graph)
		if r == nil || err != nil || !plain(mod) {
			return nil, none, err
		}
		order, ok := q.orderBy(r, n.Conds)
		if !ok {
			return nil, none, nil
		}
		mod.order = order
		for _, c := range n.Conds {
			mod.orderVars = append(mod.orderVars, c.Expr.(algebra.Var))
		}
		return r, mod, nil
	case algebra.Group:
		r, mod, err := q.relation(n.Input, graph)
		if r == nil || err != nil || !plain(mod) {
			return nil, none, err
		}
		return q.group(r, n), none, nil
	case algebra.Slice:
		r, mod, err := q.relation(n.Input, graph)
		if r == nil || err != nil {
			return nil, none, err
		}
		if mod.limit >= 0 || mod.offset > 0 {
			if r, err = q.nest(r, mod); r == nil || err != nil {
				return nil, none, err
			}
			mod = none
		}
		mod.offset, mod.limit = n.Offset, n.Limit
		return r, mod, nil
	}
	return nil, none, nil
}

// plain reports whether no modifier applies, so more conditions may be added.
func plain(m modifiers) bool {
	return m.vars == nil && !m.distinct && m.order == nil && m.limit < 0 && m.offset == 0
}

// nest closes a relation with its modifiers into a derived table, so that more
// can be built on top of it; nil when it cannot be nested.
func (q *query) nest(r *rel, mod modifiers) (*rel, error) {
	if plain(mod) {
		return r, nil
	}
	d, ok := q.derived(r, mod)
	if !ok {
		return nil, nil
	}
	return d, nil
}

// relations plans both inputs of a binary operator as plain relations, or returns
// nil when either cannot be.
func (q *query) relations(a, b algebra.Node, graph algebra.Item) (*rel, *rel, error) {
	l, lm, err := q.relation(a, graph)
	if l == nil || err != nil {
		return nil, nil, err
	}
	r, rm, err := q.relation(b, graph)
	if r == nil || err != nil {
		return nil, nil, err
	}
	if l, err = q.nest(l, lm); l == nil || err != nil {
		return nil, nil, err
	}
	if r, err = q.nest(r, rm); r == nil || err != nil {
		return nil, nil, err
	}
	return l, r, nil
}

// deduped returns r with repeated solutions removed (as a DISTINCT derived table
// when its rows may repeat), so it can be combined with multiset operators.
func (q *query) deduped(r *rel) (*rel, bool) {
	if !r.dedup {
		return r, true
	}
	return q.derived(r, modifiers{limit: -1})
}

// join builds the compatible-solution join of two relations: every pair of
// branches, joined on their shared variables. It returns nil when some shared
// variable is bound in a way SQL cannot compare.
func (q *query) join(l, r *rel) (*rel, error) {
	if len(l.branches) == 1 && len(l.branches[0].from) == 0 && len(l.branches[0].vars) == 0 {
		return r, nil // the empty pattern joins as identity
	}
	if len(r.branches) == 1 && len(r.branches[0].from) == 0 && len(r.branches[0].vars) == 0 {
		return l, nil
	}
	l, ok1 := q.deduped(l)
	r, ok2 := q.deduped(r)
	if !ok1 || !ok2 {
		return nil, nil
	}
	out := &rel{}
	for _, v := range append(append([]algebra.Var(nil), l.vars...), r.vars...) {
		out.addVar(v)
	}
	for _, a := range l.branches {
		for _, b := range r.branches {
			if len(out.branches) >= q.pl.limits.MaxUnions {
				return nil, &TooComplex{What: "the join unfolds into more than " + itoa(q.pl.limits.MaxUnions) + " union branches"}
			}
			nb, ok, compatible := q.joinBranches(a, b)
			if !ok {
				return nil, nil
			}
			if compatible {
				q.eliminateSelfJoins(nb)
				out.branches = append(out.branches, nb)
			}
		}
	}
	return out, nil
}

// joinBranches joins two branches. ok is false when SQL cannot express the join;
// compatible is false when the branches can never join.
func (q *query) joinBranches(a, b *branch) (nb *branch, ok, compatible bool) {
	nb = a.clone()
	nb.from = append(nb.from, b.from...)
	nb.where = append(nb.where, b.where...)
	nb.checks = append(nb.checks, b.checks...)
	for v, bb := range b.vars {
		ab, shared := nb.vars[v]
		if !shared {
			nb.vars[v] = bb
			continue
		}
		switch {
		case ab.solid() && bb.solid():
			conds, exact, ok := q.unify(ab.alts[0], bb.alts[0])
			if !ok {
				return nil, true, false
			}
			if !exact {
				return nil, false, false
			}
			nb.where = append(nb.where, conds...)
		case len(ab.alts) == 1 && len(bb.alts) == 1 && groupKey(ab.alts[0]) == groupKey(bb.alts[0]):
			// Either side may leave v unbound: compatible when either does, or both
			// agree; the joined row takes whichever side has it.
			x, y := ab.alts[0], bb.alts[0]
			conds, exact, ok := q.unify(x, y)
			if !ok || !exact {
				return nil, false, false
			}
			var options []sql.Expr
			if ab.nullable {
				options = append(options, inactive(x))
			}
			if bb.nullable {
				options = append(options, inactive(y))
			}
			options = append(options, sql.And(conds...))
			nb.where = append(nb.where, or(options...))
			nb.vars[v] = binding{alts: []occurrence{coalesce(x, y)}, nullable: ab.nullable && bb.nullable}
		default:
			return nil, false, false
		}
	}
	return nb, true, true
}

// inactive is the condition under which an occurrence yields no term.
func inactive(o occurrence) sql.Expr {
	a := o.active()
	if a == nil {
		return sql.Binary{Op: "=", L: sql.Int(0), R: sql.Int(1)}
	}
	return sql.Not{X: a}
}

func or(es ...sql.Expr) sql.Expr {
	var out sql.Expr
	for _, e := range es {
		if e == nil {
			return nil // one option is always true
		}
		if out == nil {
			out = e
		} else {
			out = sql.Binary{Op: "OR", L: out, R: e}
		}
	}
	return out
}

// coalesce reads two occurrences of one shape as one: each column from whichever
// side has it.
func coalesce(x, y occurrence) occurrence {
	o := x
	o.exprs = make([]sql.Expr, len(x.exprs))
	o.cols = make([]source.Column, len(x.cols))
	for i := range x.exprs {
		o.cols[i] = x.cols[i]
		o.cols[i].NotNull = x.cols[i].NotNull || y.cols[i].NotNull
		o.exprs[i] = sql.Func{Name: "COALESCE", Args: []sql.Expr{x.exprs[i], y.exprs[i]}}
	}
	if x.marker != nil && y.marker != nil {
		o.marker = sql.Func{Name: "COALESCE", Args: []sql.Expr{x.marker, y.marker}}
	} else {
		o.marker = nil
	}
	return o
}

// leftJoin builds OPTIONAL: each left branch LEFT JOINs the right relation as one
// derived table, on the shared variables and the optional's filter. nil when SQL
// cannot express it.
func (q *query) leftJoin(l, r *rel, expr algebra.Expr) *rel {
	l, ok := q.deduped(l)
	if !ok {
		return nil
	}
	if out := q.sameRowOptional(l, r, expr); out != nil {
		return out
	}
	d, ok := q.derived(r, modifiers{limit: -1})
	if !ok {
		return nil
	}
	if len(d.branches) == 0 {
		return l // nothing can extend the left side's solutions
	}
	db := d.branches[0]
	dt := db.from[0]
	out := &rel{}
	for _, v := range append(append([]algebra.Var(nil), l.vars...), d.vars...) {
		out.addVar(v)
	}
	for _, a := range l.branches {
		nb := a.clone()
		var on []sql.Expr
		for v, rb := range db.vars {
			ab, shared := a.vars[v]
			if !shared {
				nb.vars[v] = binding{alts: nullAble(rb.alts), nullable: true}
				continue
			}
			if !ab.solid() {
				return nil
			}
			// Compatible when the right side leaves v unbound, or binds it to the
			// left's term through one of its shapes.
			var options []sql.Expr
			var unbound []sql.Expr
			for _, alt := range rb.alts {
				unbound = append(unbound, inactive(alt))
				conds, exact, ok := q.unify(ab.alts[0], alt)
				if !ok {
					continue
				}
				if !exact {
					return nil
				}
				options = append(options, sql.And(append([]sql.Expr{alt.active()}, conds...)...))
			}
			if rb.nullable {
				options = append(options, sql.And(unbound...))
			}
			if len(options) == 0 {
				on = append(on, sql.Binary{Op: "=", L: sql.Int(0), R: sql.Int(1)})
				continue
			}
			on = append(on, or(options...))
		}
		if expr != nil {
			// The filter reads both sides' variables, as nb now binds them.
			cond, ok := q.exprSQL(nb, expr)
			if !ok {
				return nil
			}
			on = append(on, cond)
		}
		nb.from = append(nb.from, &sql.LeftJoin{Right: dt, On: sql.And(on...)})
		out.branches = append(out.branches, nb)
	}
	return out
}

// union concatenates two relations: their branches side by side, each side
// deduplicated first since UNION keeps duplicates across its sides.
func (q *query) union(l, r *rel) *rel {
	l, ok1 := q.deduped(l)
	r, ok2 := q.deduped(r)
	if !ok1 || !ok2 {
		return nil
	}
	out := &rel{}
	for _, v := range append(append([]algebra.Var(nil), l.vars...), r.vars...) {
		out.addVar(v)
	}
	// A variable one side does not bind is NULL, so unbound, in that side's rows.
	out.branches = append(append([]*branch(nil), l.branches...), r.branches...)
	return out
}

// extend binds v in SQL when expr is a variable, a constant or a value SQL
// computes (bindComputed); false otherwise.
func (q *query) extend(r *rel, v algebra.Var, expr algebra.Expr) bool {
	for _, b := range r.branches {
		if _, bound := b.vars[v]; bound {
			return false
		}
	}
	switch e := expr.(type) {
	case algebra.Var:
		for _, b := range r.branches {
			if bd, ok := b.vars[e]; ok {
				b.vars[v] = bd
			}
		}
	case algebra.Const:
		m := catalog.TermMap{Kind: catalog.Constant, Constant: e.Term, TermType: e.Term.Kind()}
		for _, b := range r.branches {
			b.vars[v] = binding{alts: []occurrence{{m: m}}}
		}
	default:
		return q.bindComputed(r, v, expr)
	}
	r.addVar(v)
	return true
}

// valuesSide splits a join with inline data into the data and the other side.
func valuesSide(n algebra.Join) (algebra.Values, algebra.Node, bool) {
	if v, ok := n.Left.(algebra.Values); ok {
		return v, n.Right, true
	}
	if v, ok := n.Right.(algebra.Values); ok {
		return v, n.Left, true
	}
	return algebra.Values{}, nil, false
}

// restrict joins inline data into a relation as conditions: each row's terms are
// decoded into the columns of the maps that bind its variables, so the join runs
// on the columns an index serves (an IN list for one column). Rows no map can
// produce drop out without SQL. It fails when a VALUES variable is not bound by
// one term map in every branch: the data would have to supply its value.
func (q *query) restrict(r *rel, vals algebra.Values) bool {
	// Conditions keep a row or not; they cannot repeat it. So the data must not
	// let two of its rows join one row: no repeated rows, and no UNDEF (a row with
	// UNDEF joins what a fuller row joins too).
	if !setLike(vals.Rows) {
		return false
	}
	for _, b := range r.branches {
		for _, v := range vals.Vars {
			if !b.vars[v].solid() {
				return false
			}
		}
	}
	var kept []*branch
	for _, b := range r.branches {
		occs := make([]occurrence, len(vals.Vars))
		for i, v := range vals.Vars {
			occs[i] = b.vars[v].alts[0]
		}
		if q.joinData(b, late{block: vals.Block, col: -1, occs: occs}, vals.Rows) {
			kept = append(kept, b)
		}
	}
	r.branches = kept
	return true
}

// setLike reports whether inline data has neither UNDEF nor a repeated row.
func setLike(rows [][]rdf.Term) bool {
	for _, row := range rows {
		for _, t := range row {
			if t == nil {
				return false
			}
		}
	}
	return distinctRows(rows)
}

// distinctRows reports whether no two rows of inline data are the same.
func distinctRows(rows [][]rdf.Term) bool {
	seen := make(map[string]bool, len(rows))
	var k strings.Builder
	for _, row := range rows {
		k.Reset()
		for _, t := range row {
			switch t := t.(type) {
			case rdf.IRI:
				k.WriteString("<" + string(t))
			case rdf.BlankNode:
				k.WriteString("_" + string(t))
			case rdf.Literal:
				k.WriteString("\"" + t.Lexical + "\x01" + string(t.Datatype) + "\x01" + t.Lang)
			}
			k.WriteByte(0)
		}
		if seen[k.String()] {
			return false
		}
		seen[k.String()] = true
	}
	return true
}

// late is a condition on a branch's rows that inline data decides: that the
// terms the occurrences build equal those of one data row (col -1), or one
// distinct term of column col.
type late struct {
	block int
	col   int
	occs  []occurrence
}

// joinData adds to b the condition that l's data rows hold; false when no row
// of the data can match b, which then drops out. In a plan that lifts the
// query's VALUES data the condition waits for each run's data (sql.Late), and
// the branch stays.
func (q *query) joinData(b *branch, l late, rows [][]rdf.Term) bool {
	if q.lift && l.block > 0 {
		b.where = append(b.where, sql.Late{ID: len(q.lates)})
		q.lates = append(q.lates, l)
		return true
	}
	cond, ok := q.dataCondition(l, rows)
	if ok && cond != nil {
		b.where = append(b.where, cond)
	}
	return ok
}

// dataCondition is the disjunction of the conditions under which the
// occurrences build the terms of one data row; false when no row can match.
func (q *query) dataCondition(l late, rows [][]rdf.Term) (sql.Expr, bool) {
	if l.col >= 0 {
		rows = distinctColumn(rows, l.col)
	}
	var conds [][]sql.Expr
	for _, row := range rows {
		var c []sql.Expr
		match := true
		for i, o := range l.occs {
			oc, ok := q.constConds(o, row[i])
			if !ok {
				match = false
				break
			}
			c = append(c, oc...)
		}
		if match {
			conds = append(conds, c)
		}
	}
	if len(conds) == 0 {
		return nil, false
	}
	return rowsCondition(conds), true
}

// distinctColumn returns the distinct terms of column i as one-term rows.
func distinctColumn(rows [][]rdf.Term, i int) [][]rdf.Term {
	out := make([][]rdf.Term, 0, len(rows))
	seen := make(map[rdf.Term]bool, len(rows))
	for _, row := range rows {
		if t := row[i]; !seen[t] {
			seen[t] = true
			out = append(out, []rdf.Term{t})
		}
	}
	return out
}

// rowsCondition is the disjunction of the rows' conditions, as an IN list when
// every row equates the same one column with a value.
func rowsCondition(rows [][]sql.Expr) sql.Expr {
	var col sql.Expr
	var list []sql.Expr
	exact := false
	for _, row := range rows {
		if len(row) != 1 {
			list = nil
			break
		}
		eq, ok := row[0].(sql.Binary)
		if !ok || eq.Op != "=" {
			list = nil
			break
		}
		if _, isParam := eq.R.(sql.Param); !isParam || (col != nil && !sql.Same(col, eq.L)) {
			list = nil
			break
		}
		col, exact = eq.L, eq.Exact
		list = append(list, eq.R)
	}
	if list != nil {
		return sql.In{X: col, List: list, Exact: exact}
	}
	var opts []sql.Expr
	for _, row := range rows {
		c := sql.And(row...)
		if c == nil {
			return nil // a row of UNDEFs matches everything
		}
		opts = append(opts, c)
	}
	return or(opts...)
}

// nullAble copies occurrences read through an outer join: their columns may be
// NULL whatever the source's constraints say.
func nullAble(alts []occurrence) []occurrence {
	out := make([]occurrence, len(alts))
	for i, o := range alts {
		o.cols = append([]source.Column(nil), o.cols...)
		for j := range o.cols {
			o.cols[j].NotNull = false
		}
		out[i] = o
	}
	return out
}

// sameRowOptional handles the OPTIONAL of attributes of a subject the left side
// already reads: when the optional part reads one row of one table, joined to a
// row of that table on the left by a whole key, that row is the left row
// itself, and the optional variables are its columns, NULL (unbound) where the
// optional part does not match. No join is needed. nil when the shape differs.
func (q *query) sameRowOptional(l, r *rel, expr algebra.Expr) *rel {
	if len(r.branches) != 1 || r.dedup || r.hasChecks() {
		return nil
	}
	rb := r.branches[0]
	var tables []*sql.Table
	for _, f := range rb.from {
		t, ok := f.(*sql.Table)
		if !ok {
			return nil
		}
		tables = append(tables, t)
	}
	if len(tables) == 0 || len(tables) > 2 {
		return nil
	}
	for i, rt := range tables {
		// rt may be the left row; the other table, if any, is left-joined to it.
		var extra *sql.Table
		if len(tables) == 2 {
			extra = tables[1-i]
		}
		out := &rel{}
		for _, v := range append(append([]algebra.Var(nil), l.vars...), r.vars...) {
			out.addVar(v)
		}
		for _, a := range l.branches {
			nb, ok := q.sameRowBranch(a, rb, rt, extra, expr)
			if !ok {
				out = nil
				break
			}
			out.branches = append(out.branches, nb)
		}
		if out != nil {
			return out
		}
	}
	return nil
}

func (q *query) sameRowBranch(a, rb *branch, rt, extra *sql.Table, expr algebra.Expr) (*branch, bool) {
	var matched sql.Expr // with extra: the condition that its row was found
	if extra != nil {
		keys := q.pl.keys[extra.Key]
		if len(keys) == 0 {
			return nil, false
		}
		matched = sql.IsNull{X: colRef(extra.Alias, keys[0][0]), Not: true}
	}
	for _, f := range a.from {
		lt, ok := f.(*sql.Table)
		if !ok || lt.Key != rt.Key {
			continue
		}
		// The shared variables must equate a whole key of the two rows.
		var joins []sql.Expr
		for v, rbd := range rb.vars {
			abd, shared := a.vars[v]
			if !shared {
				continue
			}
			if !abd.solid() || !rbd.solid() {
				return nil, false
			}
			conds, exact, ok := q.unify(abd.alts[0], rbd.alts[0])
			if !ok || !exact {
				return nil, false
			}
			joins = append(joins, conds...)
		}
		probe := &branch{from: []sql.From{lt, rt}, where: joins}
		if l1, l2, same := q.sameRowPair(probe); !same || !(l1 == lt.Alias && l2 == rt.Alias || l1 == rt.Alias && l2 == lt.Alias) {
			continue
		}
		rename := func(c sql.ColumnRef) sql.ColumnRef {
			if c.Table == rt.Alias {
				c.Table = lt.Alias
			}
			return c
		}
		// What the optional part requires of the row, its filter included.
		var conds []sql.Expr
		for _, w := range rb.where {
			conds = append(conds, sql.MapColumns(w, rename))
		}
		nb := a.clone()
		added := map[algebra.Var]bool{}
		for v, rbd := range rb.vars {
			if _, shared := a.vars[v]; !shared {
				nb.vars[v] = binding{alts: nullAble([]occurrence{renameOcc(rbd.alts[0], rename)}), nullable: true}
				added[v] = true
			}
		}
		if expr != nil {
			cond, ok := q.exprSQL(nb, expr)
			if !ok {
				return nil, false
			}
			conds = append(conds, cond)
		}
		all := sql.And(uniqueConds(conds)...)
		if extra != nil {
			// The other table joins the left row on what the optional part
			// requires; a variable read from the left row alone is bound only
			// when that join found a row.
			nb.from = append(nb.from, &sql.LeftJoin{Right: extra, On: all})
			for v := range added {
				o := nb.vars[v].alts[0]
				if readsTable(o, extra.Alias) {
					continue // NULL through the outer join when nothing matched
				}
				nb.vars[v] = binding{alts: []occurrence{onlyWhen(o, matched)}, nullable: true}
			}
			return nb, true
		}
		// A variable of the optional part is bound only when all of it matches.
		for v := range added {
			o := nb.vars[v].alts[0]
			if all == nil || sameConds(all, o.active()) {
				continue // its own columns being set is all the part requires
			}
			nb.vars[v] = binding{alts: []occurrence{onlyWhen(o, all)}, nullable: true}
		}
		return nb, true
	}
	return nil, false
}

// onlyWhen makes an occurrence yield its term only when cond holds (NULL, so
// unbound, otherwise).
func onlyWhen(o occurrence, cond sql.Expr) occurrence {
	exprs := make([]sql.Expr, len(o.exprs))
	for i, e := range o.exprs {
		exprs[i] = sql.Case{When: cond, Then: e}
	}
	o.exprs = exprs
	if o.m.Kind == catalog.Constant {
		o.marker = sql.Case{When: cond, Then: sql.Int(1)}
	}
	return o
}

// sameConds reports whether a and b are the same condition; a missing (nil)
// condition is never the same as another.
func sameConds(a, b sql.Expr) bool {
	return a != nil && b != nil && sql.Same(a, b)
}

// readsTable reports whether an occurrence reads a column of the FROM alias.
func readsTable(o occurrence, alias string) bool {
	found := false
	for _, e := range append(append([]sql.Expr(nil), o.exprs...), o.marker) {
		if e == nil {
			continue
		}
		sql.MapColumns(e, func(c sql.ColumnRef) sql.ColumnRef {
			found = found || c.Table == alias
			return c
		})
	}
	return found
}

// prefilter narrows a relation to the rows whose variables hold values that
// inline data names, for each variable the data binds in every row (UNDEF
// matches anything, so a variable with UNDEF narrows nothing) and that every
// branch binds with one term map. It keeps rows the join may still reject,
// never drops one it would keep; false when no variable narrows anything.
func (q *query) prefilter(r *rel, vals algebra.Values) bool {
	narrowed := false
	for i, v := range vals.Vars {
		usable := true
		for _, row := range vals.Rows {
			usable = usable && row[i] != nil
		}
		for _, b := range r.branches {
			usable = usable && b.vars[v].solid()
		}
		if !usable {
			continue
		}
		var kept []*branch
		for _, b := range r.branches {
			if q.joinData(b, late{block: vals.Block, col: i, occs: []occurrence{b.vars[v].alts[0]}}, vals.Rows) {
				kept = append(kept, b)
			}
		}
		r.branches = kept
		narrowed = true
	}
	return narrowed
}
