package sql

import "veneer/catalog/source"

// This file holds the expressions that compute values the planner binds or
// compares (date-time fields, string aggregation), whose spelling differs
// between dialects, and the column renaming of sub-queries.

// DatePart is one field of a date or timestamp without a time zone, as SPARQL's
// YEAR, MONTH, DAY, HOURS, MINUTES and SECONDS read it from the value's XSD
// lexical form (§17.4.5): Field is "YEAR", "MONTH", "DAY", "HOUR", "MINUTE" or
// "SECOND" (seconds with their fraction, as a decimal). Timestamp says X is a
// timestamp rather than a date. The value is NULL where the lexical form the
// row's term gets has no such field (see the printer).
type DatePart struct {
	Field     string
	X         Expr
	Timestamp bool
}

func (DatePart) expr() {}

// GroupConcat is the aggregate that joins the string values of a group with
// Sep between them (NULL for no values); Distinct joins each value once.
type GroupConcat struct {
	X, Sep   Expr
	Distinct bool
}

func (GroupConcat) expr() {}

// datePart prints a DatePart. Its guard makes the field NULL for the values
// that have no XSD lexical form with the field, and that the source does not
// read as dates either: PostgreSQL's infinities and dates before the common
// era, MySQL's zero dates and dates with a zero month or day (which
// non-strict modes store).
func (p *printer) datePart(e DatePart) {
	low := "0001-01-01"
	if e.Timestamp {
		low = "0001-01-01 00:00:00"
	}
	switch p.dialect {
	case source.Postgres:
		p.w("CASE WHEN isfinite(")
		p.expr(e.X)
		p.w(") AND ")
		p.expr(e.X)
		p.w(" >= ")
		p.param(low)
		p.w(" THEN ")
		if e.Field == "SECOND" {
			// numeric since PostgreSQL 14, double before: six digits are the
			// precision of timestamps either way.
			p.w("CAST(EXTRACT(SECOND FROM ")
			p.expr(e.X)
			p.w(") AS NUMERIC(9,6))")
		} else {
			p.w("CAST(EXTRACT(", e.Field, " FROM ")
			p.expr(e.X)
			p.w(") AS INTEGER)")
		}
		p.w(" END")
	case source.MySQL:
		p.w("CASE WHEN ")
		p.expr(e.X)
		p.w(" >= ")
		p.param(low)
		p.w(" AND MONTH(")
		p.expr(e.X)
		p.w(") > 0 AND DAYOFMONTH(")
		p.expr(e.X)
		p.w(") > 0 THEN ")
		if e.Field == "SECOND" {
			// Multiplying keeps the decimal exact; a division would round to
			// div_precision_increment digits.
			p.w("CAST(EXTRACT(SECOND_MICROSECOND FROM ")
			p.expr(e.X)
			p.w(") AS DECIMAL(8,0)) * 0.000001")
		} else {
			p.w("EXTRACT(", e.Field, " FROM ")
			p.expr(e.X)
			p.w(")")
		}
		p.w(" END")
	default:
		panic("sql: DatePart has no SQLite spelling")
	}
}

// groupConcat prints a GroupConcat. MySQL's GROUP_CONCAT cuts its result at
// group_concat_max_len bytes, so the planner does not use it there.
func (p *printer) groupConcat(e GroupConcat) {
	switch p.dialect {
	case source.Postgres:
		p.w("string_agg(")
	case source.SQLite:
		p.w("group_concat(")
	default:
		panic("sql: GroupConcat has no MySQL spelling")
	}
	if e.Distinct {
		p.w("DISTINCT ")
	}
	p.expr(e.X)
	p.w(", ")
	p.expr(e.Sep)
	p.w(")")
}

// mapStmt rebuilds a sub-query with f applied to its column references, so
// that a renaming of the outer query's tables reaches the sub-query's
// references to them (its own aliases are distinct from the outer ones, so f
// leaves those alone).
func mapStmt(s Stmt, f func(ColumnRef) ColumnRef) Stmt {
	switch s := s.(type) {
	case *Select:
		n := *s
		n.Columns = make([]Column, len(s.Columns))
		for i, c := range s.Columns {
			n.Columns[i] = Column{Expr: MapColumns(c.Expr, f), Alias: c.Alias}
		}
		n.From = make([]From, len(s.From))
		for i, fr := range s.From {
			n.From[i] = mapFrom(fr, f)
		}
		if s.Where != nil {
			n.Where = MapColumns(s.Where, f)
		}
		if s.Having != nil {
			n.Having = MapColumns(s.Having, f)
		}
		n.GroupBy = mapExprs(s.GroupBy, f)
		n.OrderBy = make([]Order, len(s.OrderBy))
		for i, o := range s.OrderBy {
			o.Expr = MapColumns(o.Expr, f)
			n.OrderBy[i] = o
		}
		return &n
	case *Union:
		n := *s
		n.Selects = make([]*Select, len(s.Selects))
		for i, sel := range s.Selects {
			n.Selects[i] = mapStmt(sel, f).(*Select)
		}
		return &n
	}
	return s
}

func mapFrom(fr From, f func(ColumnRef) ColumnRef) From {
	switch x := fr.(type) {
	case *Derived:
		if x.Stmt == nil {
			return x // a view's own text reads only its own tables
		}
		return &Derived{Stmt: mapStmt(x.Stmt, f), Alias: x.Alias}
	case *LeftJoin:
		n := &LeftJoin{Right: mapFrom(x.Right, f)}
		if x.On != nil {
			n.On = MapColumns(x.On, f)
		}
		return n
	}
	return fr // tables, and recursive expressions, which are closed
}

func mapExprs(es []Expr, f func(ColumnRef) ColumnRef) []Expr {
	if es == nil {
		return nil
	}
	out := make([]Expr, len(es))
	for i, e := range es {
		out[i] = MapColumns(e, f)
	}
	return out
}
