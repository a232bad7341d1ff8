package rewrite

import (
	"veneer/catalog"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/rewrite/algebra"
	"veneer/rewrite/sql"
)

// group expresses GROUP BY with aggregates in SQL when every key is a variable
// with one shape and every aggregate has an SQL twin with SPARQL's result: COUNT
// of solutions or of a one-column variable (DISTINCT too); SUM, MIN, MAX of
// integer or decimal columns; SAMPLE of a one-column variable; GROUP_CONCAT of
// a string column where the dialect joins strings without a length limit. AVG
// and the rest stay in-process: their SQL forms round or order differently.
// nil when SQL cannot.
func (q *query) group(r *rel, n algebra.Group) *rel {
	r, ok := q.deduped(r)
	if !ok || len(r.branches) == 0 {
		return nil // an empty input still makes one group without keys: in-process
	}
	if counted := q.countsSummed(r, n); counted != nil {
		return counted
	}
	reads := groupReads(n)
	if len(r.branches) != 1 {
		if r, ok = q.derived(r, modifiers{vars: reads, limit: -1}); !ok {
			return nil
		}
	}
	b := r.branches[0]
	if reads != nil {
		b = q.pruneTables(b, reads)
	}
	sel := &sql.Select{From: b.from, Where: sql.And(uniqueConds(b.where)...)}
	alias := q.alias("g")
	out := &branch{from: []sql.From{&sql.Derived{Stmt: sel, Alias: alias}}, vars: map[algebra.Var]binding{}}
	res := &rel{branches: []*branch{out}}
	col := func(e sql.Expr, t source.Column) sql.Expr {
		ref := columnOf(alias, len(sel.Columns))
		sel.Columns = append(sel.Columns, sql.Column{Expr: e, Alias: ref.Column.Name})
		return ref
	}
	if len(b.checks) > 0 {
		return nil
	}
	for _, k := range n.Keys {
		v, ok := k.Expr.(algebra.Var)
		if !ok || (k.Var != "" && k.Var != v) {
			return nil
		}
		bd, bound := b.vars[v]
		if !bound {
			continue // an unbound key groups everything together, and stays unbound
		}
		if len(bd.alts) != 1 {
			return nil
		}
		o := bd.alts[0]
		exprs, types := carriers(o)
		no := occurrence{m: o.m}
		for i, e := range exprs {
			sel.GroupBy = append(sel.GroupBy, e)
			ref := col(e, types[i])
			t := types[i]
			t.NotNull = false
			if o.m.Kind == catalog.Constant {
				no.marker = ref
				continue
			}
			no.exprs = append(no.exprs, ref)
			no.cols = append(no.cols, t)
		}
		out.vars[v] = binding{alts: []occurrence{no}, nullable: bd.nullable}
		res.addVar(v)
	}
	for _, a := range n.Aggs {
		m := catalog.TermMap{Kind: catalog.Column, Column: "value", TermType: rdf.KindLiteral}
		var e sql.Expr
		var t source.Column
		if a.Agg.Name == "SAMPLE" {
			m, e, t, ok = q.sample(b, a.Agg)
		} else {
			e, t, ok = q.aggregate(b, a.Agg, len(n.Keys) == 0)
		}
		if !ok {
			return nil
		}
		ref := col(e, t)
		// MIN and MAX of an empty group are errors, so unbound: NULL in SQL too.
		out.vars[a.Var] = binding{alts: []occurrence{{m: m, exprs: []sql.Expr{ref}, cols: []source.Column{t}}}, nullable: true}
		res.addVar(a.Var)
	}
	if len(sel.Columns) == 0 {
		sel.Columns = []sql.Column{{Expr: sql.Int(1), Alias: "c0"}}
	}
	return res
}

// countsSummed expresses COUNT(*) without GROUP BY over a union whose
// branches cannot repeat a solution of another (r is deduped) as the sum of
// one COUNT per branch, the statement a federation engine's cardinality probe
// deserves: each table is counted on its own, its joins pruned. nil when the
// group is not of that form.
func (q *query) countsSummed(r *rel, n algebra.Group) *rel {
	if len(n.Keys) > 0 || len(n.Aggs) == 0 || len(r.branches) < 2 || r.hasChecks() {
		return nil
	}
	for _, a := range n.Aggs {
		if a.Agg.Name != "COUNT" || a.Agg.Arg != nil || a.Agg.Distinct {
			return nil
		}
	}
	// The counts are scalar sub-queries added up, which a database runs one
	// after the other, as it would the hand-written sum; a union under SUM
	// may start parallel workers for a one-row answer.
	var total sql.Expr
	for _, b := range r.branches {
		b = q.pruneTables(b, []algebra.Var{})
		count := sql.Subquery{Stmt: &sql.Select{Columns: []sql.Column{{Expr: sql.Agg{Name: "COUNT"}, Alias: "c0"}},
			From: b.from, Where: sql.And(uniqueConds(b.where)...)}}
		if total == nil {
			total = count
		} else {
			total = sql.Binary{Op: "+", L: total, R: count}
		}
	}
	sum := &sql.Select{Columns: []sql.Column{{Expr: total, Alias: "c0"}}}
	alias := q.alias("g")
	out := &branch{from: []sql.From{&sql.Derived{Stmt: sum, Alias: alias}}, vars: map[algebra.Var]binding{}}
	res := &rel{branches: []*branch{out}}
	m := catalog.TermMap{Kind: catalog.Column, Column: "value", TermType: rdf.KindLiteral}
	t := source.Column{DatabaseType: "BIGINT", Kind: source.TypeInteger}
	ref := sql.ColumnRef{Table: alias, Column: catalog.Ident{Name: "c0", Quoted: true}}
	for _, a := range n.Aggs {
		out.vars[a.Var] = binding{alts: []occurrence{{m: m, exprs: []sql.Expr{ref}, cols: []source.Column{t}}}}
		res.addVar(a.Var)
	}
	return res
}

// groupReads lists the variables that a group's keys and aggregates read, or
// nil (all of them) when an aggregate reads an expression or counts distinct
// solutions.
func groupReads(n algebra.Group) []algebra.Var {
	vars := []algebra.Var{}
	for _, k := range n.Keys {
		v, ok := k.Expr.(algebra.Var)
		if !ok {
			return nil
		}
		vars = append(vars, v)
	}
	for _, a := range n.Aggs {
		switch arg := a.Agg.Arg.(type) {
		case nil:
			if a.Agg.Distinct {
				return nil
			}
		case algebra.Var:
			vars = append(vars, arg)
		default:
			return nil
		}
	}
	return vars
}

// aggregate translates one aggregate over the branch; whole says there is no
// GROUP BY, so the one group may be empty.
func (q *query) aggregate(b *branch, a algebra.Aggregate, whole bool) (sql.Expr, source.Column, bool) {
	intCol := source.Column{DatabaseType: "BIGINT", Kind: source.TypeInteger}
	if a.Name == "COUNT" {
		if a.Arg == nil {
			if a.Distinct {
				return nil, source.Column{}, false
			}
			return sql.Agg{Name: "COUNT"}, intCol, true
		}
		v, ok := a.Arg.(algebra.Var)
		if !ok {
			return nil, source.Column{}, false
		}
		bd, bound := b.vars[v]
		if !bound {
			return sql.Int(0), intCol, true
		}
		if len(bd.alts) != 1 {
			return nil, source.Column{}, false
		}
		o := bd.alts[0]
		switch {
		case len(o.exprs) == 1:
			return sql.Agg{Name: "COUNT", Distinct: a.Distinct, Arg: o.exprs[0]}, intCol, true
		case !bd.nullable && !a.Distinct:
			return sql.Agg{Name: "COUNT"}, intCol, true
		}
		return nil, source.Column{}, false
	}
	if a.Name == "GROUP_CONCAT" {
		return q.groupConcat(b, a, whole)
	}
	if a.Name != "SUM" && a.Name != "MIN" && a.Name != "MAX" {
		return nil, source.Column{}, false
	}
	v, ok := a.Arg.(algebra.Var)
	if !ok {
		return nil, source.Column{}, false
	}
	bd, bound := b.vars[v]
	if !bound || !bd.solid() {
		// An unbound value makes SPARQL's SUM, MIN and MAX an error, while SQL
		// skips NULLs: only always-bound variables have an SQL twin.
		return nil, source.Column{}, false
	}
	e, cl := q.valueSQL(b, v)
	o := bd.alts[0]
	switch k := o.cols[0].Kind; {
	case cl == classNumeric && k == source.TypeDecimal && a.Name == "SUM" && q.pl.dialect == source.SQLite:
		// SQLite keeps decimals as binary floats: their sum is not exact.
		return nil, source.Column{}, false
	case cl == classNumeric && (k == source.TypeInteger || k == source.TypeDecimal):
	case (cl == classDate || cl == classDateTime) && a.Name != "SUM":
		// Dates and timestamps without a zone order the same in SQL.
	default:
		return nil, source.Column{}, false
	}
	t := source.Column{DatabaseType: o.cols[0].DatabaseType, Kind: o.cols[0].Kind}
	agg := sql.Expr(sql.Agg{Name: a.Name, Distinct: a.Distinct, Arg: e})
	if a.Name == "SUM" {
		if pl := q.pl; pl.dialect == source.Postgres && t.Kind == source.TypeInteger {
			t.DatabaseType = "NUMERIC" // SUM(bigint) is numeric in PostgreSQL
		}
		if whole {
			// SPARQL's sum of no values is 0; SQL's is NULL.
			agg = sql.Func{Name: "COALESCE", Args: []sql.Expr{agg, sql.Int(0)}}
		}
	}
	return agg, t, true
}

// sample is SAMPLE (§18.5.1.8: any value of the group) as the least value of a
// variable built from one column: SQL's MIN skips NULLs as Sample skips
// errors, yields one of the group's values, and NULL for none. The term map
// stays the variable's, now reading the aggregate. Kinds without MIN in some
// dialect (booleans and byte strings in PostgreSQL) stay in-process.
func (q *query) sample(b *branch, a algebra.Aggregate) (catalog.TermMap, sql.Expr, source.Column, bool) {
	v, ok := a.Arg.(algebra.Var)
	bd, bound := b.vars[v]
	if !ok || !bound || len(bd.alts) != 1 {
		return catalog.TermMap{}, nil, source.Column{}, false
	}
	o := bd.alts[0]
	if o.m.Kind == catalog.Constant || len(o.exprs) != 1 {
		return catalog.TermMap{}, nil, source.Column{}, false
	}
	switch o.cols[0].Kind {
	case source.TypeBoolean, source.TypeBinary, source.TypeOther:
		return catalog.TermMap{}, nil, source.Column{}, false
	}
	t := source.Column{DatabaseType: o.cols[0].DatabaseType, Kind: o.cols[0].Kind}
	return o.m, sql.Agg{Name: "MIN", Arg: o.exprs[0]}, t, true
}

// groupConcat is GROUP_CONCAT (§18.5.1.7) of an always bound variable built
// from a string column (with or without a language tag; the result is a simple
// literal): an unbound or non-string value would make SPARQL's result an
// error, while SQL skips NULLs. The order of the values is not defined, so any
// order SQL takes is right. PostgreSQL's string_agg joins them exactly, and
// SQLite's group_concat too, though only without DISTINCT when the separator
// is given; MySQL's GROUP_CONCAT cuts its result at group_concat_max_len
// bytes (1024 by default in MySQL, from memory; 1 MiB in the MariaDB 10.11
// the tests use), which may cut an answer, and no statement-level setting
// works in both MySQL and MariaDB, so there it stays in-process. A group of
// no values is the empty string.
func (q *query) groupConcat(b *branch, a algebra.Aggregate, whole bool) (sql.Expr, source.Column, bool) {
	d := q.pl.dialect
	v, ok := a.Arg.(algebra.Var)
	bd, bound := b.vars[v]
	if !ok || !bound || !bd.solid() || d == source.MySQL || d == source.SQLite && a.Distinct {
		return nil, source.Column{}, false
	}
	o := bd.alts[0]
	if o.m.Kind != catalog.Column || o.m.TermType != rdf.KindLiteral || o.cols[0].Kind != source.TypeString ||
		o.m.Datatype != "" && o.m.Datatype != rdf.XSDString || d == source.Postgres && padded(o.cols[0].DatabaseType) {
		return nil, source.Column{}, false
	}
	agg := sql.Expr(sql.GroupConcat{X: o.exprs[0], Sep: sql.Param{Value: a.Separator}, Distinct: a.Distinct})
	if whole {
		agg = sql.Func{Name: "COALESCE", Args: []sql.Expr{agg, sql.Param{Value: ""}}}
	}
	return agg, source.Column{DatabaseType: "TEXT", Kind: source.TypeString}, true
}
