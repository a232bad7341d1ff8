package rewrite

import (
	"fmt"

	"veneer/catalog"
	"veneer/rewrite/sql"
)

// This file holds the two rules that use the source's keys: a relation whose rows
// cannot repeat a solution needs no DISTINCT, and two FROM items of one table
// joined on a key are one row, so one of them goes (self-join elimination).

// unique reports whether no two rows of r can give the same solution, so the
// graph-as-a-set rule needs no DISTINCT: no two branches bind the variables with
// the same shapes, and within each branch the variables' columns determine every
// FROM row through the tables' keys.
func (q *query) unique(r *rel) bool {
	seen := map[string]bool{}
	for _, b := range r.branches {
		sig := ""
		for _, v := range r.vars {
			for _, o := range b.vars[v].alts {
				sig += fmt.Sprintf("%s=%s;", v, groupKey(o))
			}
		}
		if seen[sig] {
			return false
		}
		seen[sig] = true
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
			values[e.l] = append(values[e.l], fmt.Sprintf("%T:%v", e.value, e.value))
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
