package rewrite

import (
	"strconv"

	"veneer/catalog"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/rewrite/algebra"
	"veneer/rewrite/sql"
)

func (u *unfolded) hasChecks() bool {
	for _, b := range u.branches {
		if len(b.checks) > 0 {
			return true
		}
	}
	return false
}

// pushFilters moves each conjunct of the filters that SQL can evaluate with
// SPARQL's meaning, in every branch, into the branches' WHERE clauses, and returns
// the conjuncts left for in-process evaluation.
//
// SQL's three-valued logic matches SPARQL's error-as-unknown logic for AND, OR and
// NOT (§17.2), so a conjunct can move when each comparison inside it yields NULL
// exactly where SPARQL yields an error: that holds for comparisons of operands
// whose RDF types are known from the mapping to be comparable.
func (pl *Planner) pushFilters(u *unfolded, filters []algebra.Expr) []algebra.Expr {
	var residual []algebra.Expr
	for _, f := range filters {
		for _, c := range conjuncts(f) {
			conds := make([]sql.Expr, len(u.branches))
			ok := true
			for i, b := range u.branches {
				if conds[i], ok = pl.boolSQL(b, c); !ok {
					break
				}
			}
			if !ok {
				residual = append(residual, c)
				continue
			}
			for i, b := range u.branches {
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

// class is the family of values a SQL operand holds, for deciding what SPARQL
// comparisons mean on it.
type class int

const (
	classNone class = iota
	classNumeric
	classString
	classBoolean
	classDate
	classDateTime
)

func (pl *Planner) boolSQL(b *branch, e algebra.Expr) (sql.Expr, bool) {
	c, ok := e.(algebra.Call)
	if !ok || c.IRI != "" {
		return nil, false
	}
	switch c.Op {
	case "&&", "||":
		if len(c.Args) != 2 {
			return nil, false
		}
		l, ok1 := pl.boolSQL(b, c.Args[0])
		r, ok2 := pl.boolSQL(b, c.Args[1])
		op := "AND"
		if c.Op == "||" {
			op = "OR"
		}
		return sql.Binary{Op: op, L: l, R: r}, ok1 && ok2
	case "!":
		if len(c.Args) != 1 {
			return nil, false
		}
		x, ok := pl.boolSQL(b, c.Args[0])
		return sql.Not{X: x}, ok
	case "=", "!=", "<", ">", "<=", ">=":
		if len(c.Args) != 2 {
			return nil, false
		}
		l, lc := pl.valueSQL(b, c.Args[0])
		r, rc := pl.valueSQL(b, c.Args[1])
		if lc == classNone || lc != rc {
			return nil, false
		}
		if _, lconst := l.(sql.Param); lconst {
			if _, rconst := r.(sql.Param); rconst {
				return nil, false // both constant: nothing to gain, keep SPARQL's own
			}
		}
		op := c.Op
		if op == "!=" {
			op = "<>"
		}
		return sql.Binary{Op: op, L: l, R: r, Exact: lc == classString}, true
	}
	return nil, false
}

// valueSQL translates a variable bound to a typed literal column, or a literal
// constant, into an SQL operand and its class.
func (pl *Planner) valueSQL(b *branch, e algebra.Expr) (sql.Expr, class) {
	switch e := e.(type) {
	case algebra.Var:
		o, ok := b.vars[e]
		if !ok || o.m.Kind != catalog.Column || o.m.TermType != rdf.KindLiteral || o.m.Language != "" {
			return nil, classNone
		}
		k := pl.kind(o.table, o.m.Column)
		natural := catalog.NaturalDatatype(k)
		if natural == "" {
			natural = rdf.XSDString
		}
		if o.m.Datatype != "" && o.m.Datatype != natural {
			return nil, classNone
		}
		return pl.colRef(o.alias, o.table, o.m.Column), kindClass(k)
	case algebra.Const:
		lit, ok := e.Term.(rdf.Literal)
		if !ok {
			return nil, classNone
		}
		switch lit.Datatype {
		case rdf.XSDInteger:
			n, err := strconv.ParseInt(lit.Lexical, 10, 64)
			if err != nil {
				return nil, classNone
			}
			return sql.Param{Value: n}, classNumeric
		case rdf.XSDDecimal, rdf.XSDDouble:
			f, err := strconv.ParseFloat(lit.Lexical, 64)
			if err != nil {
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
		}
	}
	return nil, classNone
}

func kindClass(k source.TypeKind) class {
	switch k {
	case source.TypeInteger, source.TypeFloat, source.TypeDecimal:
		return classNumeric
	case source.TypeString:
		return classString
	case source.TypeBoolean:
		return classBoolean
	}
	return classNone
}
