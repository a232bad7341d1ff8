package rewrite

import (
	"maps"
	"slices"
	"strings"

	"veneer/catalog"
	"veneer/catalog/source"
	"veneer/rewrite/algebra"
	"veneer/rewrite/sql"
)

// This file holds the rules that use the source's keys: a relation whose rows
// cannot repeat a solution needs no DISTINCT; two FROM items of one table
// joined on a key are one row, so one of them goes (self-join elimination);
// and a table joined on the key a foreign key references goes when no needed
// variable reads it (join elimination).

// unique reports whether no two rows of r can give the same solution, so the
// graph-as-a-set rule needs no DISTINCT: no two branches bind the variables with
// the same shapes, and within each branch the variables' columns determine every
// FROM row through the tables' keys.
func (q *query) unique(r *rel) bool {
	seen := map[string]bool{}
	for _, b := range r.branches {
		var sig strings.Builder
		for _, v := range r.vars {
			for _, o := range b.vars[v].alts {
				sig.WriteString(string(v))
				sig.WriteByte('=')
				sig.WriteString(groupKey(o))
				sig.WriteByte(';')
			}
		}
		if seen[sig.String()] {
			return false
		}
		seen[sig.String()] = true
		if !q.determined(b) {
			return false
		}
	}
	return true
}

// determined reports whether the values of the branch's variable columns fix one
// row of each of its FROM items.
func (q *query) determined(b *branch) bool {
	fixed := map[sql.ColumnRef]bool{}
	for _, bd := range b.vars {
		for _, o := range bd.alts {
			for _, e := range o.exprs {
				if c, ok := e.(sql.ColumnRef); ok {
					fixed[c] = true
				}
			}
		}
	}
	eqs := equalities(b.where)
	for _, e := range eqs {
		if e.param {
			fixed[e.l] = true
		}
	}
	for changed := true; changed; {
		changed = false
		for _, e := range eqs {
			if e.param {
				continue
			}
			if fixed[e.l] && !fixed[e.r] {
				fixed[e.r], changed = true, true
			}
			if fixed[e.r] && !fixed[e.l] {
				fixed[e.l], changed = true, true
			}
		}
	}
	for _, f := range b.from {
		t, ok := f.(*sql.Table)
		if !ok {
			return false // a view or a derived table: no key is known
		}
		if !q.keyFixed(t, func(col string) bool {
			return fixed[colRef(t.Alias, col)]
		}) {
			return false
		}
	}
	return true
}

// keyFixed reports whether some key of the table has all its columns fixed.
func (q *query) keyFixed(t *sql.Table, fixed func(col string) bool) bool {
	for _, key := range q.pl.keys[t.Key] {
		all := true
		for _, col := range key {
			all = all && fixed(col)
		}
		if all {
			return true
		}
	}
	return false
}

type equality struct {
	l, r  sql.ColumnRef
	param bool // r is a bound value, not a column: value
	value any
}

// equalities lists the column = column and column = value conjuncts of a WHERE.
func equalities(where []sql.Expr) []equality {
	var out []equality
	var walk func(e sql.Expr)
	walk = func(e sql.Expr) {
		b, ok := e.(sql.Binary)
		if !ok {
			return
		}
		switch b.Op {
		case "AND":
			walk(b.L)
			walk(b.R)
		case "=":
			l, lok := b.L.(sql.ColumnRef)
			switch r := b.R.(type) {
			case sql.ColumnRef:
				if lok {
					out = append(out, equality{l: l, r: r})
				}
			case sql.Param:
				if lok {
					out = append(out, equality{l: l, param: true, value: r.Value})
				}
			}
		}
	}
	for _, e := range where {
		walk(e)
	}
	return out
}

func colRef(alias, col string) sql.ColumnRef {
	return sql.ColumnRef{Table: alias, Column: identOf(col)}
}

// eliminateSelfJoins merges FROM items of one table that the WHERE equates on all
// columns of a key: they read the same row, so one scan serves both.
func (q *query) eliminateSelfJoins(b *branch) {
	for {
		a1, a2, ok := q.sameRowPair(b)
		if !ok {
			return
		}
		rename := func(c sql.ColumnRef) sql.ColumnRef {
			if c.Table == a2 {
				c.Table = a1
			}
			return c
		}
		var from []sql.From
		for _, f := range b.from {
			if t, ok := f.(*sql.Table); ok && t.Alias == a2 {
				continue
			}
			from = append(from, f)
		}
		b.from = from
		var where []sql.Expr
		for _, w := range b.where {
			w = sql.MapColumns(w, rename)
			if bin, ok := w.(sql.Binary); ok && bin.Op == "=" {
				l, lok := bin.L.(sql.ColumnRef)
				r, rok := bin.R.(sql.ColumnRef)
				if lok && rok && l == r {
					continue
				}
			}
			where = append(where, w)
		}
		b.where = uniqueConds(where)
		for v, bd := range b.vars {
			alts := make([]occurrence, len(bd.alts))
			for i, o := range bd.alts {
				alts[i] = renameOcc(o, rename)
			}
			b.vars[v] = binding{alts: alts, nullable: bd.nullable}
		}
		for i, c := range b.checks {
			b.checks[i].occ = renameOcc(c.occ, rename)
		}
	}
}

func renameOcc(o occurrence, f func(sql.ColumnRef) sql.ColumnRef) occurrence {
	exprs := make([]sql.Expr, len(o.exprs))
	for i, e := range o.exprs {
		exprs[i] = sql.MapColumns(e, f)
	}
	o.exprs = exprs
	if o.marker != nil {
		o.marker = sql.MapColumns(o.marker, f)
	}
	return o
}

// sameRowPair finds two FROM items of one table equated on a whole key: to
// each other's columns, or to the same values (a constant subject read by
// several patterns).
func (q *query) sameRowPair(b *branch) (string, string, bool) {
	eqs := equalities(b.where)
	values := map[sql.ColumnRef][]string{}
	for _, e := range eqs {
		if e.param {
			values[e.l] = append(values[e.l], string(sql.AppendKey(nil, sql.Param{Value: e.value})))
		}
	}
	sameValue := func(l, r sql.ColumnRef) bool {
		for _, a := range values[l] {
			for _, b := range values[r] {
				if a == b {
					return true
				}
			}
		}
		return false
	}
	joined := func(a1, a2, col string) bool {
		l, r := colRef(a1, col), colRef(a2, col)
		for _, e := range eqs {
			if !e.param && (e.l == l && e.r == r || e.l == r && e.r == l) {
				return true
			}
		}
		return sameValue(l, r)
	}
	for i, f1 := range b.from {
		t1, ok := f1.(*sql.Table)
		if !ok {
			continue
		}
		for _, f2 := range b.from[i+1:] {
			t2, ok := f2.(*sql.Table)
			if !ok || t2.Key != t1.Key {
				continue
			}
			if q.keyFixed(t1, func(col string) bool { return joined(t1.Alias, t2.Alias, col) }) {
				return t1.Alias, t2.Alias, true
			}
		}
	}
	return "", "", false
}

func identOf(col string) catalog.Ident { return catalog.Ident{Name: col, Quoted: true} }

// pruneTables returns b without the tables that only join rows a foreign key
// guarantees (join elimination): a table read by no variable of vars and no
// check, equated on a key with the columns of another table that a foreign
// key declares to reference it, and otherwise only required to have columns
// set that the database keeps NOT NULL. Each row of the other table then
// joins exactly one of its rows when its foreign key columns are set, which
// the pruned branch requires instead. SQLite does not enforce foreign keys
// unless a session asks, so its tables are kept (as fkObject does).
func (q *query) pruneTables(b *branch, vars []algebra.Var) *branch {
	if q.pl.dialect == source.SQLite || len(b.from) < 2 {
		return b
	}
	used := map[string]bool{}
	note := func(e sql.Expr) {
		if e != nil {
			sql.MapColumns(e, func(c sql.ColumnRef) sql.ColumnRef { used[c.Table] = true; return c })
		}
	}
	notNull := map[sql.ColumnRef]bool{}
	for v, bd := range b.vars {
		needed := indexOfVar(vars, v) >= 0
		for _, o := range bd.alts {
			for i, e := range o.exprs {
				if c, ok := e.(sql.ColumnRef); ok && o.cols[i].NotNull {
					notNull[c] = true
				}
				if needed {
					note(e)
				}
			}
			if needed {
				note(o.marker)
			}
		}
	}
	for _, c := range b.checks {
		for _, e := range c.occ.exprs {
			note(e)
		}
	}
	tables := map[string]*sql.Table{}
	for _, f := range b.from {
		switch f := f.(type) {
		case *sql.Table:
			tables[f.Alias] = f
		case *sql.LeftJoin:
			return b // its condition may read any table
		}
	}
	for _, w := range b.where {
		if opaque(w) {
			return b
		}
	}
	for _, t := range tables {
		if used[t.Alias] {
			continue
		}
		if pruned, ok := q.pruneTable(b, t, tables, notNull); ok {
			return q.pruneTables(pruned, vars)
		}
	}
	return b
}

// pruneTable drops t from b when the foreign key rule of pruneTables allows.
func (q *query) pruneTable(b *branch, t *sql.Table, tables map[string]*sql.Table, notNull map[sql.ColumnRef]bool) (*branch, bool) {
	var child *sql.Table
	pairs := map[string]string{} // t's column → the child's column
	var kept []sql.Expr
	for _, w := range b.where {
		reads := false
		sql.MapColumns(w, func(c sql.ColumnRef) sql.ColumnRef { reads = reads || c.Table == t.Alias; return c })
		if !reads {
			kept = append(kept, w)
			continue
		}
		if n, ok := w.(sql.IsNull); ok && n.Not {
			if c, ok := n.X.(sql.ColumnRef); ok && notNull[c] {
				continue // always true
			}
			return nil, false
		}
		eq, ok := w.(sql.Binary)
		l, lok := eq.L.(sql.ColumnRef)
		r, rok := eq.R.(sql.ColumnRef)
		if !ok || eq.Op != "=" || !lok || !rok {
			return nil, false
		}
		if l.Table == t.Alias {
			l, r = r, l
		}
		if r.Table != t.Alias || l.Table == t.Alias || tables[l.Table] == nil || (child != nil && child.Alias != l.Table) {
			return nil, false
		}
		child = tables[l.Table]
		pairs[r.Column.Name] = l.Column.Name
	}
	if child == nil || !q.keyFixed(t, func(col string) bool { _, ok := pairs[col]; return ok }) ||
		!q.declaresReference(child, t, pairs) {
		return nil, false
	}
	out := *b
	out.from = nil
	for _, f := range b.from {
		if f != sql.From(t) {
			out.from = append(out.from, f)
		}
	}
	out.where = kept
	ct := q.pl.tables[child.Key]
	for _, c := range slices.Sorted(maps.Values(pairs)) {
		if !q.pl.cols.NotNull(ct, c) { // a NOT NULL column needs no test
			out.where = append(out.where, sql.IsNull{X: colRef(child.Alias, c), Not: true})
		}
	}
	return &out, true
}

// declaresReference reports whether a foreign key of child's table references
// parent's table on exactly the column pairs (parent column → child column).
func (q *query) declaresReference(child, parent *sql.Table, pairs map[string]string) bool {
	ct, ok := q.pl.tables[child.Key]
	pt, pok := q.pl.tables[parent.Key]
	if !ok || !pok || ct.Query != "" || pt.Query != "" {
		return false
	}
	parentName, err := catalog.ParseName(pt.TableName)
	if err != nil || len(parentName) != 1 {
		return false
	}
	for _, fk := range q.pl.cols.ForeignKeys(ct) {
		if !parentName[0].Matches(fk.RefTable) || len(fk.Columns) != len(pairs) {
			continue
		}
		match := true
		for i, c := range fk.Columns {
			match = match && pairs[fk.RefColumns[i]] == c
		}
		if match {
			return true
		}
	}
	return false
}

// opaque reports whether a condition may read columns that sql.MapColumns
// does not show (a Late condition, a sub-query), or is of a kind this file
// does not know.
func opaque(e sql.Expr) bool {
	switch e := e.(type) {
	case sql.ColumnRef, sql.Param, sql.Int, sql.Null:
		return false
	case sql.Binary:
		return opaque(e.L) || opaque(e.R)
	case sql.Not:
		return opaque(e.X)
	case sql.IsNull:
		return opaque(e.X)
	case sql.Cast:
		return opaque(e.X)
	case sql.Collate:
		return opaque(e.X)
	case sql.StrTest:
		return opaque(e.X) || opaque(e.Arg)
	case sql.In:
		for _, x := range e.List {
			if opaque(x) {
				return true
			}
		}
		return opaque(e.X)
	case sql.Func:
		for _, x := range e.Args {
			if opaque(x) {
				return true
			}
		}
		return false
	case sql.Case:
		return opaque(e.When) || opaque(e.Then)
	}
	return true
}
