package rewrite

import (
	"fmt"
	"strconv"
	"strings"

	"veneer/catalog"
	"veneer/catalog/source"
	"veneer/rewrite/algebra"
	"veneer/rewrite/sql"
)

// occurrence is a term map applied to SQL expressions: the columns the map reads,
// as this branch of a relation reaches them (a base table's columns, or the
// columns of a derived table).
type occurrence struct {
	m     catalog.TermMap
	exprs []sql.Expr // one per m.Columns()
	cols  []source.Column
	// marker, for a constant map read from a derived table, is the column that is
	// NULL when this alternative does not apply; nil means it always applies.
	marker sql.Expr
}

// col returns the expression and type of one of the map's columns.
func (o occurrence) col(name string) (sql.Expr, source.Column) {
	for i, c := range o.m.Columns() {
		if c == name {
			return o.exprs[i], o.cols[i]
		}
	}
	panic(fmt.Sprintf("rewrite: term map has no column %q", name))
}

// active is the SQL condition under which the occurrence yields a term; nil means
// always.
func (o occurrence) active() sql.Expr {
	if o.m.Kind == catalog.Constant {
		if o.marker == nil {
			return nil
		}
		return sql.IsNull{X: o.marker, Not: true}
	}
	var conds []sql.Expr
	for i, e := range o.exprs {
		if !o.cols[i].NotNull {
			conds = append(conds, sql.IsNull{X: e, Not: true})
		}
	}
	return sql.And(conds...)
}

// binding is how one branch binds a variable: by the first active alternative.
// nullable says that possibly none is active (the variable may be unbound).
type binding struct {
	alts     []occurrence
	nullable bool
}

// solid reports whether the variable is always bound by one known term map, the
// case SQL comparisons and joins handle directly.
func (b binding) solid() bool { return len(b.alts) == 1 && !b.nullable }

// branch is one SELECT of a relation.
type branch struct {
	from  []sql.From
	where []sql.Expr
	vars  map[algebra.Var]binding
	// checks are occurrences SQL could not equate with the variable's binding.
	checks []varCheck
}

type varCheck struct {
	v   algebra.Var
	occ occurrence
}

func (b *branch) clone() *branch {
	nb := &branch{
		from:   append([]sql.From(nil), b.from...),
		where:  append([]sql.Expr(nil), b.where...),
		vars:   make(map[algebra.Var]binding, len(b.vars)),
		checks: append([]varCheck(nil), b.checks...),
	}
	for k, v := range b.vars {
		nb.vars[k] = v
	}
	return nb
}

// rel is a relation the planner can express in SQL: the UNION ALL of its branches.
type rel struct {
	branches []*branch
	// vars are the variables some branch may bind, in order of first appearance.
	vars []algebra.Var
	// dedup says that rows may repeat a solution, which the graph-as-a-set rule
	// forbids: closing the relation adds DISTINCT.
	dedup bool
}

func (r *rel) addVar(v algebra.Var) {
	for _, x := range r.vars {
		if x == v {
			return
		}
	}
	r.vars = append(r.vars, v)
}

// query holds what planning one query shares: the planner and the alias counter
// that keeps every FROM alias of the statement distinct.
type query struct {
	pl  *Planner
	seq int
	// graph is the graph context of the pattern being planned, for the patterns
	// that expressions contain (EXISTS).
	graph algebra.Item
	// dataset is the query's FROM / FROM NAMED; empty means the service's own
	// default graph and named graphs.
	dataset algebra.Dataset
	// lift makes the conditions that VALUES blocks of the query text turn into
	// Late ones, so that the plan serves every query of the same shape (see
	// lifted); lates are those conditions, by sql.Late ID.
	lift  bool
	lates []late
}

func (q *query) alias(prefix string) string {
	q.seq++
	return prefix + strconv.Itoa(q.seq)
}

// columnName is the name of result column col of a statement the planner
// builds: c0, c1, and so on.
func columnName(col int) string { return "c" + strconv.Itoa(col) }

// columnOf refers to result column col of the FROM item alias.
func columnOf(alias string, col int) sql.ColumnRef {
	return sql.ColumnRef{Table: alias, Column: catalog.Ident{Name: columnName(col), Quoted: true}}
}

// closed is a relation turned into one statement, with how to read its columns.
type closed struct {
	stmt   sql.Stmt
	slots  []Slot
	checks []Check
	types  []source.Column // per result column
}

// modifiers are the solution modifiers a closed statement may carry.
type modifiers struct {
	// vars restricts the result to these variables (nil: all of the relation's).
	vars     []algebra.Var
	distinct bool
	// order, when set, chooses the ORDER BY from how each variable's terms are
	// built from the result columns; false means SQL cannot express the order.
	order func(slots []Slot) ([]orderCol, bool)
	// orderVars are the variables order reads; they stay in the statement's
	// columns even when vars leaves them out.
	orderVars []algebra.Var
	offset    int64
	limit     int64 // -1: none
}

// groupKey names the shape of the terms an occurrence builds: two occurrences with
// the same key build equal terms exactly when their columns hold equal values, so
// they share result columns across union branches (and DISTINCT sees them as one).
func groupKey(o occurrence) string {
	m := o.m
	b := make([]byte, 0, 64)
	b = strconv.AppendInt(b, int64(m.Kind), 10)
	b = strconv.AppendInt(append(b, '/'), int64(m.TermType), 10)
	b = append(append(b, '/'), m.Datatype...)
	b = append(append(b, '/'), strings.ToLower(m.Language)...)
	b = append(b, '/')
	kinds := o.cols
	switch m.Kind {
	case catalog.Constant:
		b = append(b, m.Constant.String()...)
	case catalog.Column:
		b = strconv.AppendInt(b, int64(kinds[0].Kind), 10)
	case catalog.TemplateMap:
		for _, p := range m.Template.Parts {
			if p.Column == "" {
				b = strconv.AppendQuote(b, p.Text)
				continue
			}
			// Template columns are listed once each, in order of first use.
			idx := indexOf(m.Template.Columns(), p.Column)
			b = strconv.AppendInt(append(b, '{'), int64(idx), 10)
			b = strconv.AppendInt(append(b, ':'), int64(kinds[idx].Kind), 10)
			b = append(b, '}')
		}
	}
	return string(b)
}

func indexOf(xs []string, x string) int {
	for i, s := range xs {
		if s == x {
			return i
		}
	}
	return -1
}

// carriers are the SQL expressions that carry an occurrence's term in a result
// row, with their types: its columns, or a marker for a constant map.
func carriers(o occurrence) ([]sql.Expr, []source.Column) {
	if o.m.Kind == catalog.Constant {
		if o.marker != nil {
			return []sql.Expr{o.marker}, []source.Column{{DatabaseType: "INTEGER", Kind: source.TypeInteger}}
		}
		return []sql.Expr{sql.Int(1)}, []source.Column{{DatabaseType: "INTEGER", Kind: source.TypeInteger}}
	}
	return o.exprs, o.cols
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
func (q *query) nullOf(col source.Column) sql.Expr {
	if q.pl.dialect != source.Postgres || col.DatabaseType == "" {
		return sql.Null{}
	}
	return sql.Cast{X: sql.Null{}, Type: col.DatabaseType}
}

// closeRel turns a relation into one statement: each variable's alternatives get
// result columns by shape, shared across branches; the branches are combined with
// UNION (or UNION ALL when rows cannot repeat), and the modifiers apply on top.
func (q *query) closeRel(r *rel, mod modifiers) (*closed, bool) {
	if len(r.branches) == 0 {
		return nil, false // an empty relation has no statement; callers plan none
	}
	if mod.limit == 1 && mod.offset == 0 && (r.dedup || mod.distinct) {
		// The first row is a first solution whether or not rows repeat: ASK
		// and other one-row answers need no DISTINCT, which would make the
		// database read every row before the first.
		cp := *r
		cp.dedup, mod.distinct = false, false
		r = &cp
	}
	vars := r.vars
	if mod.vars != nil {
		vars = nil
		for _, v := range append(append([]algebra.Var(nil), mod.vars...), mod.orderVars...) {
			if indexOfVar(r.vars, v) >= 0 && indexOfVar(vars, v) < 0 {
				vars = append(vars, v)
			}
		}
	}
	// Rows that may repeat a solution need DISTINCT over all the variables; a
	// projection that drops some of them must then wait until after it.
	if r.dedup && !mod.distinct && len(vars) < len(r.vars) {
		d, ok := q.derived(r, modifiers{limit: -1})
		if !ok {
			return nil, false
		}
		return q.closeRel(d, mod)
	}
	if len(vars) < len(r.vars) {
		pruned := &rel{vars: r.vars, dedup: r.dedup}
		for _, b := range r.branches {
			pruned.branches = append(pruned.branches, q.pruneTables(b, vars))
		}
		r = pruned
	}
	c := &closed{}
	type alloc struct{ start int }
	allocs := map[string]alloc{}
	cells := make([]map[int]sql.Expr, len(r.branches))
	for i := range cells {
		cells[i] = map[int]sql.Expr{}
	}
	for si, v := range vars {
		slot := Slot{Var: v}
		for bi, b := range r.branches {
			for _, o := range b.vars[v].alts {
				key := strconv.Itoa(si) + "/" + groupKey(o)
				exprs, types := carriers(o)
				a, ok := allocs[key]
				if !ok {
					a = alloc{start: len(c.types)}
					allocs[key] = a
					bl := newBuilder(o.m, kindsOf(types))
					for i := range exprs {
						bl.Cols = append(bl.Cols, len(c.types))
						c.types = append(c.types, types[i])
					}
					slot.Builders = append(slot.Builders, bl)
				}
				for i, e := range exprs {
					cells[bi][a.start+i] = e
				}
			}
		}
		c.slots = append(c.slots, slot)
	}
	for bi, b := range r.branches {
		for _, ch := range b.checks {
			si := indexOfVar(vars, ch.v)
			if si < 0 {
				continue // the variable is projected away; the check still filters rows
			}
			exprs, types := carriers(ch.occ)
			bl := newBuilder(ch.occ.m, kindsOf(types))
			for i, e := range exprs {
				bl.Cols = append(bl.Cols, len(c.types))
				cells[bi][len(c.types)] = e
				c.types = append(c.types, types[i])
			}
			c.checks = append(c.checks, Check{Slot: si, Builder: bl})
		}
	}
	var order []orderCol
	if mod.order != nil {
		var ok bool
		if order, ok = mod.order(c.slots); !ok {
			return nil, false
		}
	}
	if len(c.types) == 0 {
		// No variable is read: a row per solution still.
		c.types = []source.Column{{DatabaseType: "INTEGER", Kind: source.TypeInteger, NotNull: true}}
		for bi := range cells {
			cells[bi][0] = sql.Int(1)
		}
	}
	distinct := mod.distinct || r.dedup
	selects := q.branchSelects(r.branches, cells, c.types)
	var lp, op *int64
	if mod.limit >= 0 {
		lp = &mod.limit
	}
	if mod.offset > 0 {
		op = &mod.offset
	}
	if len(selects) == 1 && (!distinct || len(order) == 0) {
		s := selects[0]
		s.Distinct = distinct
		s.Limit, s.Offset = lp, op
		for _, o := range order {
			// On a single SELECT, ORDER BY names the column's expression.
			s.OrderBy = append(s.OrderBy, sql.Order{Expr: o.expr(s.Columns[o.col].Expr), Desc: o.desc, NotNull: c.types[o.col].NotNull})
		}
		c.stmt = s
		return c, true
	}
	var inner sql.Stmt = &sql.Union{All: !distinct, Selects: selects}
	if len(selects) == 1 {
		selects[0].Distinct = true
		inner = selects[0]
	}
	if len(order) == 0 {
		u := inner.(*sql.Union)
		u.Limit, u.Offset = lp, op
		c.stmt = u
		return c, true
	}
	// ORDER BY over DISTINCT or UNION may only name result columns, and an
	// ordering that must compare by code point is an expression: it orders the
	// rows of the statement read as a derived table instead.
	alias := q.alias("o")
	outer := &sql.Select{From: []sql.From{&sql.Derived{Stmt: inner, Alias: alias}}, Limit: lp, Offset: op}
	for col := range c.types {
		outer.Columns = append(outer.Columns, sql.Column{Expr: columnOf(alias, col), Alias: columnName(col)})
	}
	for _, o := range order {
		// Other union branches fill a column with NULL: only one SELECT keeps
		// its column's NOT NULL.
		notNull := len(selects) == 1 && c.types[o.col].NotNull
		outer.OrderBy = append(outer.OrderBy, sql.Order{Expr: o.expr(columnOf(alias, o.col)), Desc: o.desc, NotNull: notNull})
	}
	c.stmt = outer
	return c, true
}

// orderCol is an ORDER BY item on a result column; exact asks for code point
// order of strings.
type orderCol struct {
	col   int
	desc  bool
	exact bool
}

func (o orderCol) expr(e sql.Expr) sql.Expr {
	if o.exact {
		return sql.Collate{X: e}
	}
	return e
}
func indexOfVar(vs []algebra.Var, v algebra.Var) int {
	for i, x := range vs {
		if x == v {
			return i
		}
	}
	return -1
}

// derived closes a relation and reads it back as a single-branch relation over a
// derived table, so that it can be composed as one FROM item.
func (q *query) derived(r *rel, mod modifiers) (*rel, bool) {
	if len(r.branches) == 0 {
		return &rel{vars: r.vars}, true // nothing to read: still nothing
	}
	if r.hasChecks() {
		// Rows failing a check must not leave the derived table, and checks run
		// in-process: such a relation cannot be nested.
		return nil, false
	}
	c, ok := q.closeRel(r, mod)
	if !ok {
		return nil, false
	}
	alias := q.alias("d")
	b := &branch{from: []sql.From{&sql.Derived{Stmt: c.stmt, Alias: alias}}, vars: map[algebra.Var]binding{}}
	out := &rel{branches: []*branch{b}}
	for _, s := range c.slots {
		var bd binding
		// The columns of a variable every branch binds with one shape keep the
		// NOT NULL of their source; other shapes' branches fill columns with NULL.
		keepNotNull := len(s.Builders) == 1 && !q.mayBeUnbound(r, s.Var)
		for _, bl := range s.Builders {
			o := occurrence{m: bl.Map}
			for _, col := range bl.Cols {
				ref := columnOf(alias, col)
				if bl.Map.Kind == catalog.Constant {
					o.marker = ref
					continue
				}
				t := c.types[col]
				t.NotNull = t.NotNull && keepNotNull
				o.exprs = append(o.exprs, ref)
				o.cols = append(o.cols, t)
			}
			bd.alts = append(bd.alts, o)
		}
		bd.nullable = len(bd.alts) != 1 || q.mayBeUnbound(r, s.Var)
		b.vars[s.Var] = bd
		out.addVar(s.Var)
	}
	return out, true
}

// mayBeUnbound reports whether some branch of r may leave v unbound.
func (q *query) mayBeUnbound(r *rel, v algebra.Var) bool {
	for _, b := range r.branches {
		bd, ok := b.vars[v]
		if !ok || bd.nullable {
			return true
		}
	}
	return false
}

// hasChecks reports whether some branch needs in-process checks.
func (r *rel) hasChecks() bool {
	for _, b := range r.branches {
		if len(b.checks) > 0 {
			return true
		}
	}
	return false
}

// uniqueConds drops repeated conjuncts (each pattern states that its columns are
// not NULL, and patterns share columns).
func uniqueConds(conds []sql.Expr) []sql.Expr {
	seen := make(map[string]bool, len(conds))
	var out []sql.Expr
	var key []byte
	for _, c := range conds {
		key = sql.AppendKey(key[:0], c)
		if !seen[string(key)] {
			seen[string(key)] = true
			out = append(out, c)
		}
	}
	return out
}
