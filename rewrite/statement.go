package rewrite

import (
	"fmt"
	"strings"

	"veneer/catalog"
	"veneer/catalog/source"
	"veneer/rewrite/algebra"
	"veneer/rewrite/sql"
)

// groupKey names the shape of the terms an occurrence builds: two occurrences with
// the same key build equal terms exactly when their columns hold equal values, so
// they can share result columns across union branches (and DISTINCT sees them as
// one).
func (pl *Planner) groupKey(o occurrence) string {
	m := o.m
	var b strings.Builder
	fmt.Fprintf(&b, "%d/%d/%s/%s/", m.Kind, m.TermType, m.Datatype, strings.ToLower(m.Language))
	switch m.Kind {
	case catalog.Constant:
		b.WriteString(m.Constant.String())
	case catalog.Column:
		fmt.Fprintf(&b, "%d", pl.kind(o.table, m.Column))
	case catalog.TemplateMap:
		for _, p := range m.Template.Parts {
			if p.Column == "" {
				fmt.Fprintf(&b, "%q", p.Text)
			} else {
				fmt.Fprintf(&b, "{%d}", pl.kind(o.table, p.Column))
			}
		}
	}
	return b.String()
}

// columnsOf returns the SQL expressions that carry an occurrence's term (its
// columns, or a marker for a constant map) with their types.
func (pl *Planner) columnsOf(o occurrence) ([]sql.Expr, []source.Column) {
	if o.m.Kind == catalog.Constant {
		return []sql.Expr{sql.Int(1)}, []source.Column{{DatabaseType: "INTEGER", Kind: source.TypeInteger}}
	}
	var exprs []sql.Expr
	var cols []source.Column
	for _, c := range o.m.Columns() {
		exprs = append(exprs, pl.colRef(o.alias, o.table, c))
		col, _ := pl.cols.Lookup(o.table, c)
		cols = append(cols, col)
	}
	return exprs, cols
}

func kindsOf(cols []source.Column) []source.TypeKind {
	kinds := make([]source.TypeKind, len(cols))
	for i, c := range cols {
		kinds[i] = c.Kind
	}
	return kinds
}

// nullOf is the NULL that fills a result column in the union branches that do not
// bind it. PostgreSQL resolves the type of a UNION column pairwise from the left,
// and NULLs alone resolve to text, so there the NULL carries the column's type.
func (pl *Planner) nullOf(col source.Column) sql.Expr {
	if pl.dialect != source.Postgres || col.DatabaseType == "" {
		return sql.Null{}
	}
	return sql.Cast{X: sql.Null{}, Type: col.DatabaseType}
}

// statement builds the SQL of an unfolded BGP. vars are the variables whose values
// the result needs: all of the BGP's, unless the query's DISTINCT is computed
// wholly in SQL, when only the projected ones matter. It returns nil when there is
// no branch.
func (pl *Planner) statement(u *unfolded, project []algebra.Var, distinct, sqlComplete bool) (sql.Stmt, []Slot, []Check) {
	if len(u.branches) == 0 {
		return nil, nil, nil
	}
	vars := u.vars
	if distinct && sqlComplete {
		vars = nil
		for _, v := range project {
			if _, ok := u.branches[0].vars[v]; ok {
				vars = append(vars, v)
			}
		}
	}
	type alloc struct {
		group int // index into the slot's groups
		start int // first result column
	}
	var (
		slots   []Slot
		checks  []Check
		ncols   int
		colType = map[int]source.Column{}
	)
	allocs := map[string]alloc{}
	cells := make([]map[int]sql.Expr, len(u.branches))
	for i := range cells {
		cells[i] = map[int]sql.Expr{}
	}
	for si, v := range vars {
		slot := Slot{Var: v}
		for bi, b := range u.branches {
			o := b.vars[v]
			key := fmt.Sprintf("%d/%s", si, pl.groupKey(o))
			exprs, types := pl.columnsOf(o)
			a, ok := allocs[key]
			if !ok {
				a = alloc{group: len(slot.Groups), start: ncols}
				allocs[key] = a
				g := Group{Map: o.m, Kinds: kindsOf(types)}
				for i := range exprs {
					g.Cols = append(g.Cols, ncols+i)
					colType[ncols+i] = types[i]
				}
				ncols += len(exprs)
				slot.Groups = append(slot.Groups, g)
			}
			for i, e := range exprs {
				cells[bi][a.start+i] = e
			}
		}
		slots = append(slots, slot)
	}
	for bi, b := range u.branches {
		for _, c := range b.checks {
			si := -1
			for i, s := range slots {
				if s.Var == c.v {
					si = i
				}
			}
			exprs, types := pl.columnsOf(c.occ)
			g := Group{Map: c.occ.m, Kinds: kindsOf(types)}
			for i, e := range exprs {
				g.Cols = append(g.Cols, ncols+i)
				cells[bi][ncols+i] = e
				colType[ncols+i] = types[i]
			}
			ncols += len(exprs)
			checks = append(checks, Check{Slot: si, Group: g})
		}
	}
	var selects []*sql.Select
	for bi, b := range u.branches {
		sel := &sql.Select{From: b.from, Where: sql.And(b.where...)}
		for c := 0; c < ncols; c++ {
			e, ok := cells[bi][c]
			if !ok {
				e = pl.nullOf(colType[c])
			}
			sel.Columns = append(sel.Columns, sql.Column{Expr: e, Alias: fmt.Sprintf("c%d", c)})
		}
		selects = append(selects, sel)
	}
	if len(selects) == 1 {
		selects[0].Distinct = true
		return selects[0], slots, checks
	}
	return &sql.Union{Selects: selects}, slots, checks
}
