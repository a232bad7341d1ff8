package rewrite

import (
	"math"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"

	"veneer/catalog"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/rewrite/algebra"
	"veneer/rewrite/sql"
)

// pushFilters moves each conjunct of the filters that SQL can evaluate with
// SPARQL's meaning, in every branch, into the branches' WHERE clauses, and returns
// the conjuncts left for in-process evaluation.
//
// SQL's three-valued logic matches SPARQL's error-as-unknown logic for AND, OR and
// NOT (§17.2), so a conjunct can move when each comparison inside it yields NULL
// exactly where SPARQL yields an error: that holds for comparisons of operands
// whose RDF types are known from the mapping to be comparable.
func (q *query) pushFilters(r *rel, filters []algebra.Expr) []algebra.Expr {
	var residual []algebra.Expr
	for _, f := range filters {
		for _, c := range conjuncts(f) {
			conds := make([]sql.Expr, len(r.branches))
			ok := true
			for i, b := range r.branches {
				if conds[i], ok = q.exprSQL(b, c); !ok {
					break
				}
			}
			if !ok {
				residual = append(residual, c)
				continue
			}
			for i, b := range r.branches {
				b.where = append(b.where, conds[i])
			}
		}
	}
	return residual
}

func conjuncts(e algebra.Expr) []algebra.Expr {
	if c, ok := e.(algebra.Call); ok && c.Op == "&&" && len(c.Args) == 2 {
		return append(conjuncts(c.Args[0]), conjuncts(c.Args[1])...)
	}
	return []algebra.Expr{e}
}

// class is the family of values an SQL operand holds, for deciding what SPARQL
// comparisons mean on it.
type class int

const (
	classNone class = iota
	classNumeric
	classString
	classBoolean
	classDate
	classDateTime // without a time zone on both sides
)

// exprSQL translates a boolean SPARQL expression into an SQL condition over the
// branch, when the translation keeps SPARQL's meaning.
func (q *query) exprSQL(b *branch, e algebra.Expr) (sql.Expr, bool) {
	if ex, ok := e.(algebra.Exists); ok {
		return q.existsSQL(b, ex)
	}
	c, ok := e.(algebra.Call)
	if !ok || c.IRI != "" {
		return nil, false
	}
	switch c.Op {
	case "&&", "||":
		if len(c.Args) != 2 {
			return nil, false
		}
		l, ok1 := q.exprSQL(b, c.Args[0])
		r, ok2 := q.exprSQL(b, c.Args[1])
		op := "AND"
		if c.Op == "||" {
			op = "OR"
		}
		return sql.Binary{Op: op, L: l, R: r}, ok1 && ok2
	case "!":
		if len(c.Args) != 1 {
			return nil, false
		}
		x, ok := q.exprSQL(b, c.Args[0])
		return sql.Not{X: x}, ok
	case "BOUND":
		v, ok := c.Args[0].(algebra.Var)
		if !ok {
			return nil, false
		}
		bd, bound := b.vars[v]
		if !bound {
			return sql.Binary{Op: "=", L: sql.Int(0), R: sql.Int(1)}, true
		}
		var opts []sql.Expr
		for _, o := range bd.alts {
			opts = append(opts, o.active())
		}
		if cond := or(opts...); cond != nil {
			return cond, true
		}
		return sql.Binary{Op: "=", L: sql.Int(1), R: sql.Int(1)}, true
	case "CONTAINS", "STRSTARTS", "STRENDS":
		return q.strTestSQL(b, c)
	case "IN", "NOT IN":
		// §17.4.1.9–10: IN is the disjunction of = tests, NOT IN the conjunction
		// of != tests, errors included.
		if len(c.Args) < 2 {
			return nil, false
		}
		op, join := "=", "||"
		if c.Op == "NOT IN" {
			op, join = "!=", "&&"
		}
		var e algebra.Expr
		for _, a := range c.Args[1:] {
			t := algebra.Call{Op: op, Args: []algebra.Expr{c.Args[0], a}}
			if e == nil {
				e = t
			} else {
				e = algebra.Call{Op: join, Args: []algebra.Expr{e, t}}
			}
		}
		return q.exprSQL(b, e)
	case "=", "!=", "<", ">", "<=", ">=":
		if len(c.Args) != 2 {
			return nil, false
		}
		if cond, ok := q.termEquality(b, c); ok {
			return cond, true
		}
		l, lc := q.valueSQL(b, c.Args[0])
		r, rc := q.valueSQL(b, c.Args[1])
		if lc == classNone || lc != rc {
			return nil, false
		}
		_, lconst := l.(sql.Param)
		_, rconst := r.(sql.Param)
		if lconst && rconst {
			return nil, false // two constants: nothing to gain in SQL
		}
		if !q.fits(b, c.Args[0], r) || !q.fits(b, c.Args[1], l) {
			return nil, false // a value the column cannot hold: compared in-process
		}
		op := c.Op
		if op == "!=" {
			op = "<>"
		}
		return sql.Binary{Op: op, L: l, R: r, Exact: lc == classString}, true
	}
	return nil, false
}

// fits reports whether other, when it is a parameter compared with the
// column of the variable side, is a value that column can hold (holds); the
// database would refuse it otherwise.
func (q *query) fits(b *branch, side algebra.Expr, other sql.Expr) bool {
	p, isParam := other.(sql.Param)
	v, isVar := side.(algebra.Var)
	if !isParam || !isVar || len(b.vars[v].alts) != 1 || len(b.vars[v].alts[0].cols) != 1 {
		return true
	}
	return q.pl.holds(b.vars[v].alts[0].cols[0], p.Value)
}

// termEquality handles ?v = <iri> and sameTerm-like tests of a variable built by a
// template or constant map against an IRI: the IRI is decoded into column values.
func (q *query) termEquality(b *branch, c algebra.Call) (sql.Expr, bool) {
	if c.Op != "=" && c.Op != "!=" {
		return nil, false
	}
	v, ok := c.Args[0].(algebra.Var)
	k, ok2 := c.Args[1].(algebra.Const)
	if !ok || !ok2 {
		v, ok = c.Args[1].(algebra.Var)
		k, ok2 = c.Args[0].(algebra.Const)
	}
	iri, isIRI := k.Term.(rdf.IRI)
	if !ok || !ok2 || !isIRI {
		return nil, false
	}
	bd, bound := b.vars[v]
	if !bound || !bd.solid() || bd.alts[0].m.TermType != rdf.KindIRI {
		return nil, false
	}
	conds, match := q.constConds(bd.alts[0], iri)
	eq := sql.And(conds...)
	switch {
	case !match:
		eq = sql.Binary{Op: "=", L: sql.Int(0), R: sql.Int(1)}
	case eq == nil:
		eq = sql.Binary{Op: "=", L: sql.Int(1), R: sql.Int(1)}
	}
	if c.Op == "!=" {
		return sql.Not{X: eq}, true
	}
	return eq, true
}

// valueSQL translates a variable bound to a typed literal column, a literal
// constant, or a value SQL computes (compute), into an SQL operand and its
// class.
func (q *query) valueSQL(b *branch, e algebra.Expr) (sql.Expr, class) {
	switch e := e.(type) {
	case algebra.Call:
		v, ok := q.compute(b, e)
		if !ok || v.lang != "" {
			return nil, classNone // a tagged string compares only with its own kind
		}
		return v.expr, kindClass(v.kind)
	case algebra.Var:
		bd, ok := b.vars[e]
		if !ok || len(bd.alts) != 1 {
			return nil, classNone
		}
		o := bd.alts[0]
		if o.m.Kind != catalog.Column || o.m.TermType != rdf.KindLiteral || o.m.Language != "" {
			return nil, classNone
		}
		k := o.cols[0].Kind
		natural := catalog.NaturalDatatype(k)
		if natural == "" {
			natural = rdf.XSDString
		}
		if o.m.Datatype != "" && o.m.Datatype != natural {
			return nil, classNone
		}
		return o.exprs[0], kindClass(k)
	case algebra.Const:
		lit, ok := e.Term.(rdf.Literal)
		if !ok {
			return nil, classNone
		}
		switch lit.Datatype {
		case rdf.XSDInteger:
			n, err := strconv.ParseInt(lit.Lexical, 10, 64)
			if err != nil || !catalog.IntegerLexical(lit.Lexical) {
				return nil, classNone
			}
			return sql.Param{Value: n}, classNumeric
		case rdf.XSDDecimal, rdf.XSDDouble:
			// An ill-typed literal compares in-process (a type error), and so
			// do NaN and the infinities, which SQL orders and equates otherwise
			// (or, in MySQL, cannot hold), and decimals with more digits than a
			// double keeps.
			f, ok := catalog.DoubleLexical(lit.Lexical)
			if lit.Datatype == rdf.XSDDecimal {
				ok = ok && catalog.DecimalLexical(lit.Lexical) && significantDigits(lit.Lexical) <= 15
			}
			if !ok || math.IsNaN(f) || math.IsInf(f, 0) {
				return nil, classNone
			}
			return sql.Param{Value: f}, classNumeric
		case rdf.XSDString:
			return sql.Param{Value: lit.Lexical}, classString
		case rdf.XSDBoolean:
			v, ok := catalog.ParseLexical(lit.Lexical, source.TypeBoolean)
			if !ok {
				return nil, classNone
			}
			return sql.Param{Value: v}, classBoolean
		case rdf.XSDDate:
			if t, err := time.Parse("2006-01-02", lit.Lexical); err != nil || !q.pl.holds(source.Column{}, t) {
				return nil, classNone
			}
			return sql.Param{Value: lit.Lexical}, classDate
		case rdf.XSDDateTime:
			t, err := time.Parse("2006-01-02T15:04:05.999999999", lit.Lexical)
			if err != nil || !q.pl.holds(source.Column{}, t) {
				return nil, classNone // ill-formed, with a time zone, or before year 1
			}
			// The text form every dialect compares with its timestamps; SQLite,
			// which keeps them as text, compares it character by character.
			return sql.Param{Value: t.Format("2006-01-02 15:04:05.999999999")}, classDateTime
		}
	}
	return nil, classNone
}

func kindClass(k source.TypeKind) class {
	switch k {
	case source.TypeInteger, source.TypeFloat, source.TypeReal, source.TypeDecimal:
		return classNumeric
	case source.TypeString:
		return classString
	case source.TypeBoolean:
		return classBoolean
	case source.TypeDate:
		return classDate
	case source.TypeTimestamp:
		return classDateTime
	}
	return classNone
}

// orderBy expresses ORDER BY in SQL when every condition is a variable whose terms
// come from one typed literal column: SQL then orders as SPARQL does (numbers by
// value, strings by code point, unbound first).
func (q *query) orderBy(r *rel, conds []algebra.OrderCond) (func([]Slot) ([]orderCol, bool), bool) {
	for _, c := range conds {
		v, ok := c.Expr.(algebra.Var)
		if !ok || !orderable(r, v) {
			return nil, false
		}
	}
	return func(slots []Slot) ([]orderCol, bool) {
		var out []orderCol
		for _, c := range conds {
			v := c.Expr.(algebra.Var)
			var slot *Slot
			for i := range slots {
				if slots[i].Var == v {
					slot = &slots[i]
				}
			}
			if slot == nil {
				continue // never bound: every solution ties
			}
			if len(slot.Builders) != 1 {
				return nil, false
			}
			bl := slot.Builders[0]
			m := bl.Map
			if m.Kind != catalog.Column || m.TermType != rdf.KindLiteral || m.Language != "" {
				return nil, false
			}
			natural := catalog.NaturalDatatype(bl.Kinds[0])
			if m.Datatype != "" && m.Datatype != natural {
				return nil, false
			}
			cl := kindClass(bl.Kinds[0])
			if cl == classNone {
				return nil, false
			}
			out = append(out, orderCol{col: bl.Cols[0], desc: c.Desc, exact: cl == classString})
		}
		return out, true
	}, true
}

// orderable reports whether SQL can order by v as SPARQL does: every branch builds
// it with one shape, a typed literal column of a class SQL orders by value.
func orderable(r *rel, v algebra.Var) bool {
	key := ""
	for _, b := range r.branches {
		bd, ok := b.vars[v]
		if !ok {
			continue
		}
		if len(bd.alts) != 1 {
			return false
		}
		o := bd.alts[0]
		if o.m.Kind != catalog.Column || o.m.TermType != rdf.KindLiteral || o.m.Language != "" {
			return false
		}
		natural := catalog.NaturalDatatype(o.cols[0].Kind)
		if o.m.Datatype != "" && o.m.Datatype != natural || kindClass(o.cols[0].Kind) == classNone {
			return false
		}
		if k := groupKey(o); key == "" {
			key = k
		} else if k != key {
			return false
		}
	}
	return true
}

// strTestSQL translates CONTAINS, STRSTARTS and STRENDS of a variable bound to a
// string column (tagged or not) and a simple literal (§17.4.3: a simple second
// argument is compatible with any string first argument). The SQL test is by
// code point; an empty second argument holds for every bound value.
func (q *query) strTestSQL(b *branch, c algebra.Call) (sql.Expr, bool) {
	if len(c.Args) != 2 {
		return nil, false
	}
	v, ok := c.Args[0].(algebra.Var)
	k, ok2 := c.Args[1].(algebra.Const)
	if !ok || !ok2 {
		return nil, false
	}
	lit, isLit := k.Term.(rdf.Literal)
	bd, bound := b.vars[v]
	if !isLit || lit.Datatype != rdf.XSDString || !bound || len(bd.alts) != 1 {
		return nil, false
	}
	o := bd.alts[0]
	if o.m.Kind != catalog.Column || o.m.TermType != rdf.KindLiteral || o.cols[0].Kind != source.TypeString {
		return nil, false
	}
	if o.m.Datatype != "" && o.m.Datatype != rdf.XSDString {
		return nil, false
	}
	if !q.pl.holds(o.cols[0], lit.Lexical) {
		return nil, false // NUL in PostgreSQL: tested in-process
	}
	if lit.Lexical == "" {
		if a := o.active(); a != nil {
			return a, true
		}
		return sql.Binary{Op: "=", L: sql.Int(1), R: sql.Int(1)}, true
	}
	op := map[string]string{"CONTAINS": "contains", "STRSTARTS": "starts", "STRENDS": "ends"}[c.Op]
	n := int64(utf8.RuneCountInString(lit.Lexical))
	return sql.StrTest{Op: op, X: o.exprs[0], Arg: sql.Param{Value: lit.Lexical}, Len: sql.Param{Value: n}}, true
}

// significantDigits counts the digits of a decimal lexical form from its
// first to its last non-zero digit.
func significantDigits(lexical string) int {
	first, last := -1, -1
	for i := 0; i < len(lexical); i++ {
		if c := lexical[i]; c >= '1' && c <= '9' {
			if first < 0 {
				first = i
			}
			last = i
		}
	}
	if first < 0 {
		return 0
	}
	n := last - first + 1
	if strings.Contains(lexical[first:last+1], ".") {
		n-- // the point between them is no digit
	}
	return n
}
