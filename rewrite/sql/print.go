package sql

import (
	"fmt"
	"strconv"
	"strings"

	"veneer/catalog"
	"veneer/catalog/source"
)

// Print renders stmt in the given dialect and returns the text and the values of
// its placeholders, in order.
func Print(stmt Stmt, d source.Dialect) (string, []any) {
	return PrintLate(stmt, d, nil)
}

// PrintLate is Print for a statement with Late conditions: resolve gives each
// one's condition (nil: the condition holds). A Late met without resolve is
// printed as a condition that never holds.
func PrintLate(stmt Stmt, d source.Dialect, resolve func(Late) Expr) (string, []any) {
	p := &printer{dialect: d, resolve: resolve}
	p.stmt(stmt)
	return p.b.String(), p.args
}

type printer struct {
	dialect source.Dialect
	b       strings.Builder
	args    []any
	resolve func(Late) Expr
}

func (p *printer) w(s ...string) {
	for _, x := range s {
		p.b.WriteString(x)
	}
}

func (p *printer) param(v any) {
	p.args = append(p.args, v)
	if p.dialect == source.Postgres {
		p.w("$", strconv.Itoa(len(p.args)))
		return
	}
	p.w("?")
}

func (p *printer) stmt(s Stmt) {
	switch s := s.(type) {
	case *Select:
		p.selectBlock(s)
	case *Union:
		op := " UNION "
		if s.All {
			op = " UNION ALL "
		}
		for i, sel := range s.Selects {
			if i > 0 {
				p.w(op)
			}
			// Parentheses keep each block's own ORDER BY / LIMIT to itself; SQLite
			// does not accept them, and its blocks never carry those clauses.
			if p.dialect != source.SQLite {
				p.w("(")
			}
			p.selectBlock(sel)
			if p.dialect != source.SQLite {
				p.w(")")
			}
		}
		p.tail(s.OrderBy, s.Limit, s.Offset)
	default:
		panic(fmt.Sprintf("sql: unknown statement %T", s))
	}
}

func (p *printer) selectBlock(s *Select) {
	p.w("SELECT ")
	if s.Distinct {
		p.w("DISTINCT ")
	}
	if len(s.Columns) == 0 {
		p.w("1")
	}
	for i, c := range s.Columns {
		if i > 0 {
			p.w(", ")
		}
		p.expr(c.Expr)
		if c.Alias != "" {
			p.w(" AS ", p.quote(c.Alias))
		}
	}
	if len(s.From) > 0 {
		p.w(" FROM ")
		// A comma binds more loosely than JOIN, so ON conditions of a LEFT JOIN
		// could not see the tables before the last comma: with a LEFT JOIN in the
		// list, the items join explicitly. (SQLite's CROSS JOIN would fix the join
		// order; its plain JOIN without ON is the same product, reordered freely.)
		sep := ", "
		for _, f := range s.From {
			if _, ok := f.(*LeftJoin); ok {
				sep = " CROSS JOIN "
				if p.dialect == source.SQLite {
					sep = " JOIN "
				}
			}
		}
		for i, f := range s.From {
			if _, ok := f.(*LeftJoin); !ok && i > 0 {
				p.w(sep)
			}
			p.from(f)
		}
	}
	if s.Where != nil {
		p.w(" WHERE ")
		p.expr(s.Where)
	}
	if len(s.GroupBy) > 0 {
		p.w(" GROUP BY ")
		p.list(s.GroupBy)
	}
	if s.Having != nil {
		p.w(" HAVING ")
		p.expr(s.Having)
	}
	p.tail(s.OrderBy, s.Limit, s.Offset)
}

func (p *printer) tail(order []Order, limit, offset *int64) {
	if len(order) > 0 {
		p.w(" ORDER BY ")
		for i, o := range order {
			if i > 0 {
				p.w(", ")
			}
			p.expr(o.Expr)
			pgNulls := p.dialect == source.Postgres && !o.NotNull
			switch {
			case o.Desc && pgNulls:
				p.w(" DESC NULLS LAST")
			case o.Desc:
				p.w(" DESC")
			case pgNulls:
				p.w(" NULLS FIRST")
			}
		}
	}
	switch {
	case limit != nil && *limit == 1 && offset == nil:
		p.w(" LIMIT 1") // see Select.Limit
	case limit != nil:
		p.w(" LIMIT ")
		p.param(*limit)
	case offset != nil && p.dialect != source.Postgres:
		// MySQL and SQLite have no OFFSET without LIMIT: use the largest limit.
		p.w(" LIMIT ")
		p.param(int64(1<<63 - 1))
	}
	if offset != nil {
		p.w(" OFFSET ")
		p.param(*offset)
	}
}

func (p *printer) from(f From) {
	switch f := f.(type) {
	case *Table:
		for i, id := range f.Name {
			if i > 0 {
				p.w(".")
			}
			p.ident(id)
		}
		if f.Alias != "" {
			p.w(" ", p.quote(f.Alias))
		}
	case *Derived:
		p.w("(")
		if f.Stmt != nil {
			p.stmt(f.Stmt)
		} else {
			p.w(f.Query)
		}
		p.w(") ", p.quote(f.Alias))
	case *Recursive:
		p.w("(WITH RECURSIVE ", p.quote(f.Name), "(")
		for i, c := range f.Columns {
			if i > 0 {
				p.w(", ")
			}
			p.w(p.quote(c))
		}
		p.w(") AS (")
		p.stmt(f.Anchor)
		p.w(" UNION ")
		p.stmt(f.Step)
		p.w(") SELECT * FROM ", p.quote(f.Name), ") ", p.quote(f.Alias))
	case *LeftJoin:
		p.w(" LEFT JOIN ")
		p.from(f.Right)
		p.w(" ON ")
		if f.On == nil {
			p.w("1 = 1")
		} else {
			p.expr(f.On)
		}
	default:
		panic(fmt.Sprintf("sql: unknown FROM item %T", f))
	}
}

func (p *printer) list(es []Expr) {
	for i, e := range es {
		if i > 0 {
			p.w(", ")
		}
		p.expr(e)
	}
}

func (p *printer) expr(e Expr) {
	switch e := e.(type) {
	case ColumnRef:
		if e.Table != "" {
			p.w(p.quote(e.Table), ".")
		}
		p.ident(e.Column)
	case Param:
		p.param(e.Value)
	case Int:
		p.w(strconv.FormatInt(int64(e), 10))
	case Null:
		p.w("NULL")
	case Late:
		p.late(e)
	case Binary:
		p.w("(")
		p.expr(e.L)
		if e.Exact && p.dialect == source.Postgres && e.Op != "=" && e.Op != "<>" {
			// Ordering of strings by code point, as SPARQL orders them (§17.4.1.7
			// compares by code points through fn:compare with the default collation).
			p.w(` COLLATE "C"`)
		}
		p.w(" ", e.Op, " ")
		if e.Exact && p.dialect == source.MySQL {
			// A binary right operand makes the comparison binary while an index
			// on the left column still serves it (BINARY on the column would not).
			p.w("BINARY ")
		}
		p.expr(e.R)
		p.w(")")
	case StrTest:
		p.strTest(e)
	case Case:
		p.w("CASE WHEN ")
		p.expr(e.When)
		p.w(" THEN ")
		p.expr(e.Then)
		p.w(" END")
	case In:
		p.w("(")
		p.expr(e.X)
		p.w(" IN (")
		for i, v := range e.List {
			if i > 0 {
				p.w(", ")
			}
			if e.Exact && p.dialect == source.MySQL {
				p.w("BINARY ") // as in Binary: the column keeps its index
			}
			p.expr(v)
		}
		p.w("))")
	case Agg:
		p.w(e.Name, "(")
		if e.Arg == nil {
			p.w("*")
		} else {
			if e.Distinct {
				p.w("DISTINCT ")
			}
			p.expr(e.Arg)
		}
		p.w(")")
	case Collate:
		switch p.dialect {
		case source.Postgres:
			p.expr(e.X)
			p.w(` COLLATE "C"`)
		case source.MySQL:
			p.w("BINARY ")
			p.expr(e.X)
		default:
			p.expr(e.X)
		}
	case Cast:
		p.w("CAST(")
		p.expr(e.X)
		p.w(" AS ", e.Type, ")")
	case Not:
		p.w("(NOT ")
		p.expr(e.X)
		p.w(")")
	case IsNull:
		p.w("(")
		p.expr(e.X)
		if e.Not {
			p.w(" IS NOT NULL)")
		} else {
			p.w(" IS NULL)")
		}
	case Func:
		p.w(e.Name, "(")
		p.list(e.Args)
		p.w(")")
	case DatePart:
		p.datePart(e)
	case GroupConcat:
		p.groupConcat(e)
	case Exists:
		if e.Not {
			p.w("NOT ")
		}
		p.w("EXISTS (")
		p.stmt(e.Stmt)
		p.w(")")
	case Subquery:
		p.w("(")
		p.stmt(e.Stmt)
		p.w(")")
	default:
		panic(fmt.Sprintf("sql: unknown expression %T", e))
	}
}

// late prints the condition a Late stands for, renamed as the Late was.
func (p *printer) late(l Late) {
	if p.resolve == nil {
		p.w("(1 = 0)")
		return
	}
	e := p.resolve(l)
	if e == nil {
		p.w("(1 = 1)")
		return
	}
	for _, f := range l.renames {
		e = MapColumns(e, f)
	}
	p.expr(e)
}

// ident prints an identifier from a mapping: a delimited one keeps its case and is
// quoted for the dialect; a regular one (catalog.ParseName checked its characters)
// is printed as written so that the database folds its case as it always does.
func (p *printer) ident(id catalog.Ident) {
	if id.Quoted {
		p.w(p.quote(id.Name))
		return
	}
	p.w(id.Name)
}

func (p *printer) quote(name string) string { return p.dialect.QuoteIdent(name) }

// strTest prints a code-point exact substring test.
func (p *printer) strTest(e StrTest) {
	x := func() { p.expr(e.X) }
	arg := func() { p.expr(e.Arg) }
	n := func() { p.expr(e.Len) }
	switch p.dialect {
	case source.Postgres:
		switch e.Op {
		case "contains":
			p.w("(strpos(")
			x()
			p.w(", ")
			arg()
			p.w(") > 0)")
		case "starts":
			p.w("(left(")
			x()
			p.w(", ")
			n()
			p.w(") = ")
			arg()
			p.w(")")
		default:
			p.w("(right(")
			x()
			p.w(", ")
			n()
			p.w(") = ")
			arg()
			p.w(")")
		}
	case source.MySQL:
		switch e.Op {
		case "contains":
			p.w("(LOCATE(BINARY ")
			arg()
			p.w(", ")
			x()
			p.w(") > 0)")
		case "starts":
			p.w("(LEFT(")
			x()
			p.w(", ")
			n()
			p.w(") = BINARY ")
			arg()
			p.w(")")
		default:
			p.w("(RIGHT(")
			x()
			p.w(", ")
			n()
			p.w(") = BINARY ")
			arg()
			p.w(")")
		}
	default:
		switch e.Op {
		case "contains":
			p.w("(instr(")
			x()
			p.w(", ")
			arg()
			p.w(") > 0)")
		case "starts":
			p.w("(substr(")
			x()
			p.w(", 1, ")
			n()
			p.w(") = ")
			arg()
			p.w(")")
		default:
			p.w("(substr(")
			x()
			p.w(", -")
			n()
			p.w(") = ")
			arg()
			p.w(")")
		}
	}
}
