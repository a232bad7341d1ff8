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
// reads those rows once (see unpivot): the branches of a subject's pattern
// with a variable predicate, one per property of its triples map, are the
// common case.
func (q *query) branchSelects(branches []*branch, cells []map[int]sql.Expr, types []source.Column) []*sql.Select {
	groups := map[string][]int{}
	var keys []string
	for bi, b := range branches {
		k, ok := sameRowsKey(b)
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
		out = append(out, q.unpivot(branches, groups[k], cells, types))
	}
	return out
}

// sameRowsKey is the same for two branches exactly when they read the same
// rows: the same tables, in order, under the same conditions once each
// branch's aliases are replaced by their positions. Only branches of plain
// tables have one.
func sameRowsKey(b *branch) (string, bool) {
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
	where := sql.MapColumns(sql.And(uniqueConds(b.where)...), func(c sql.ColumnRef) sql.ColumnRef {
		c.Table = pos[c.Table]
		return c
	})
	return string(sql.AppendKey(key, where)), true
}

// unpivot makes the SELECT of the branches g, which read the same rows
// (sameRowsKey), from the first one's tables and conditions: joined with a
// table of the numbers 1 to len(g), each row comes once for every branch, and
// a result column holds, on the repeat of branch i, what branch i puts there
// (NULL where it puts nothing). The rows are those of the branches' UNION ALL;
// the database reads them once instead of once per branch. A group of one
// branch is that branch's SELECT.
func (q *query) unpivot(branches []*branch, g []int, cells []map[int]sql.Expr, types []source.Column) *sql.Select {
	first := branches[g[0]]
	sel := &sql.Select{From: first.from, Where: sql.And(uniqueConds(first.where)...)}
	var num sql.Expr
	if len(g) > 1 {
		alias := q.alias("n")
		numbers := &sql.Union{All: true}
		for i := range g {
			numbers.Selects = append(numbers.Selects, &sql.Select{Columns: []sql.Column{{Expr: sql.Int(i + 1), Alias: "n"}}})
		}
		sel.From = append(slices.Clip(first.from), &sql.Derived{Stmt: numbers, Alias: alias})
		num = sql.ColumnRef{Table: alias, Column: catalog.Ident{Name: "n", Quoted: true}}
	}
	// A group of more than one branch holds plain tables only (sameRowsKey).
	renames := make([]map[string]string, len(g))
	for i, bi := range g[1:] {
		renames[i+1] = map[string]string{}
		for j, f := range branches[bi].from {
			renames[i+1][f.(*sql.Table).Alias] = first.from[j].(*sql.Table).Alias
		}
	}
	for col := range types {
		var alts []sql.Expr
		for i, bi := range g {
			e, ok := cells[bi][col]
			if !ok {
				continue
			}
			if len(g) == 1 {
				alts = append(alts, e)
				break
			}
			e = sql.MapColumns(e, func(c sql.ColumnRef) sql.ColumnRef {
				if a, ok := renames[i][c.Table]; ok {
					c.Table = a
				}
				return c
			})
			alts = append(alts, sql.Case{When: sql.Binary{Op: "=", L: num, R: sql.Int(i + 1)}, Then: e})
		}
		var e sql.Expr
		switch len(alts) {
		case 0:
			e = q.nullOf(types[col])
		case 1:
			e = alts[0]
		default:
			e = sql.Func{Name: "COALESCE", Args: alts}
		}
		sel.Columns = append(sel.Columns, sql.Column{Expr: e, Alias: "c" + strconv.Itoa(col)})
	}
	return sel
}
