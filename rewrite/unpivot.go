package rewrite

import (
	"slices"
	"strconv"

	"veneer/catalog"
	"veneer/catalog/source"
	"veneer/rewrite/sql"
)

// branchSelects makes the SELECT of each branch of a relation, its columns
// from cells (by branch, then result column). Branches that read the same
// rows, the same tables under the same conditions, share one SELECT that
// reads those rows once (see merged): the branches of a subject's pattern
// with a variable predicate, one per property of its triples map, are the
// common case.
func (q *query) branchSelects(branches []*branch, cells []map[int]sql.Expr, types []source.Column) []*sql.Select {
	wheres := make([]sql.Expr, len(branches))
	for bi, b := range branches {
		wheres[bi] = sql.And(uniqueConds(b.where)...)
	}
	groups := map[string][]int{}
	var keys []string
	for bi, b := range branches {
		k, ok := "", false
		if len(branches) > 1 {
			k, ok = sameRowsKey(b, wheres[bi])
		}
		if !ok {
			k = "branch " + strconv.Itoa(bi) // a group of its own
		}
		if _, seen := groups[k]; !seen {
			keys = append(keys, k)
		}
		groups[k] = append(groups[k], bi)
	}
	var out []*sql.Select
	for _, k := range keys {
		g := groups[k]
		first := branches[g[0]]
		sel := &sql.Select{From: first.from, Where: wheres[g[0]]}
		cell := func(col int) (sql.Expr, bool) {
			e, ok := cells[g[0]][col]
			return e, ok
		}
		if len(g) > 1 {
			sel.From, cell = q.merged(branches, g, cells)
		}
		for col := range types {
			e, ok := cell(col)
			if !ok {
				e = q.nullOf(types[col])
			}
			sel.Columns = append(sel.Columns, sql.Column{Expr: e, Alias: columnName(col)})
		}
		out = append(out, sel)
	}
	return out
}

// sameRowsKey is the same for two branches exactly when they read the same
// rows: the same tables, in order, under the same conditions (where) once
// each branch's aliases are replaced by their positions. Only branches of
// plain tables have one.
func sameRowsKey(b *branch, where sql.Expr) (string, bool) {
	var key []byte
	pos := map[string]string{}
	for i, f := range b.from {
		t, ok := f.(*sql.Table)
		if !ok {
			return "", false
		}
		key = append(append(key, t.Key...), 0)
		pos[t.Alias] = "\x00" + strconv.Itoa(i)
	}
	where = sql.MapColumns(where, func(c sql.ColumnRef) sql.ColumnRef {
		c.Table = pos[c.Table]
		return c
	})
	return string(sql.AppendKey(key, where)), true
}

// merged makes the FROM list and the result columns of one SELECT for the
// branches g, which read the same rows (sameRowsKey): the first branch's
// tables joined with a table of the numbers 1 to len(g), so that each row
// comes once for every branch, and a result column that holds, on the
// repeat of branch i, what branch i puts there (nothing where it puts
// nothing). The rows are those of the branches' UNION ALL; the database
// reads them once instead of once per branch.
func (q *query) merged(branches []*branch, g []int, cells []map[int]sql.Expr) ([]sql.From, func(col int) (sql.Expr, bool)) {
	first := branches[g[0]]
	alias := q.alias("n")
	numbers := &sql.Union{All: true}
	for i := range g {
		numbers.Selects = append(numbers.Selects, &sql.Select{Columns: []sql.Column{{Expr: sql.Int(i + 1), Alias: "n"}}})
	}
	from := append(slices.Clip(first.from), &sql.Derived{Stmt: numbers, Alias: alias})
	num := sql.ColumnRef{Table: alias, Column: catalog.Ident{Name: "n", Quoted: true}}
	// Each branch's aliases become the first branch's, position by position.
	renames := make([]func(sql.ColumnRef) sql.ColumnRef, len(g))
	for i, bi := range g {
		to := map[string]string{}
		for j, f := range branches[bi].from {
			to[f.(*sql.Table).Alias] = first.from[j].(*sql.Table).Alias
		}
		renames[i] = func(c sql.ColumnRef) sql.ColumnRef {
			if a, ok := to[c.Table]; ok {
				c.Table = a
			}
			return c
		}
	}
	return from, func(col int) (sql.Expr, bool) {
		var alts []sql.Expr
		for i, bi := range g {
			if e, ok := cells[bi][col]; ok {
				alts = append(alts, sql.Case{When: sql.Binary{Op: "=", L: num, R: sql.Int(i + 1)}, Then: sql.MapColumns(e, renames[i])})
			}
		}
		switch len(alts) {
		case 0:
			return nil, false
		case 1:
			return alts[0], true
		}
		return sql.Func{Name: "COALESCE", Args: alts}, true
	}
}
