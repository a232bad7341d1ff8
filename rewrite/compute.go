package rewrite

import (
	"math/big"
	"math/bits"
	"strconv"
	"strings"

	"veneer/catalog"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/rewrite/algebra"
	"veneer/rewrite/sql"
)

// This file computes the values of SPARQL expressions in SQL: arithmetic,
// STRLEN, SUBSTR, CONCAT and the date-time fields, for BIND and for the
// comparisons of FILTER. A translation is made only where the SQL value is the
// SPARQL value for every row, in the dialect at hand: the same number, type and
// lexical form, NULL exactly where SPARQL has an error, and no SQL error where
// SPARQL has none. Everything else stays in-process:
//
//   - UCASE and LCASE: fn:upper-case is Unicode's full case mapping ("ß" to
//     "SS"); SQLite changes ASCII letters only, MySQL maps by collation one
//     character at a time, PostgreSQL by its locale provider and version.
//   - Doubles: SQL raises errors on overflow and division by zero where
//     IEEE 754 gives infinities (MySQL has no infinities at all).
//   - Decimal arithmetic outside PostgreSQL: MySQL's DECIMAL has at most 65
//     digits and the planner does not know a column's precision; SQLite
//     keeps decimals as binary floats.
//   - Integer arithmetic whose result might leave 64 bits (SPARQL's integers
//     have no bound; SQL's overflow is an error, or in SQLite a float): the
//     planner bounds each value by its column type, which in SQLite is always
//     64 bits.
//   - Division other than of an integer by an integer constant (see quotient).
//   - STRLEN and SUBSTR in SQLite, whose length() and substr() stop at a NUL
//     character that the value itself keeps (measured on the SQLite 3.54 the
//     driver embeds; || and group_concat keep it); the date-time fields in SQLite,
//     whose values are text that SQLite's date functions read in forms (time
//     zones, Julian days) that catalog reads differently.

// value is a SPARQL expression computed in SQL.
type value struct {
	expr sql.Expr
	// kind is the type family of the SQL value; with the empty datatype it
	// gives the term's natural datatype (xsd:integer, xsd:decimal, xsd:string).
	kind source.TypeKind
	// lang is the language tag of a string, "" for none.
	lang string
	// mag bounds an integer: |v| <= 2^mag.
	mag int
	// narrow says an integer's SQL type may be narrower than 64 bits.
	narrow bool
	// param says the value is a constant of the query: an expression of
	// constants alone is left to the evaluator, since SQL would not know the
	// parameters' types.
	param bool
}

// maxMag is the largest magnitude whose integers every dialect adds,
// subtracts and multiplies in 64 bits without overflow.
const maxMag = 62

// compute translates an expression into an SQL value, when it keeps SPARQL's
// meaning in the planner's dialect.
func (q *query) compute(b *branch, e algebra.Expr) (value, bool) {
	switch e := e.(type) {
	case algebra.Var:
		return q.columnValue(b, e)
	case algebra.Const:
		return constValue(e.Term, q.pl.dialect)
	case algebra.Call:
		if e.IRI != "" {
			return value{}, false
		}
		args := make([]value, len(e.Args))
		constant := true
		for i, a := range e.Args {
			v, ok := q.compute(b, a)
			if !ok {
				return value{}, false
			}
			args[i] = v
			constant = constant && v.param
		}
		if constant {
			return value{}, false
		}
		return q.call(e.Op, args)
	}
	return value{}, false
}

// columnValue is a variable bound to one typed literal column with the column's
// natural datatype (or xsd:string, or a language tag, for strings).
func (q *query) columnValue(b *branch, v algebra.Var) (value, bool) {
	bd, ok := b.vars[v]
	if !ok || len(bd.alts) != 1 {
		return value{}, false
	}
	o := bd.alts[0]
	if o.m.Kind != catalog.Column || o.m.TermType != rdf.KindLiteral {
		return value{}, false
	}
	col := o.cols[0]
	natural := catalog.NaturalDatatype(col.Kind)
	switch {
	case col.Kind == source.TypeString:
		if o.m.Datatype != "" && o.m.Datatype != rdf.XSDString {
			return value{}, false
		}
		if q.pl.dialect == source.Postgres && padded(col.DatabaseType) {
			return value{}, false // char(n) loses its padding in string functions
		}
	case o.m.Language != "" || natural == "" || o.m.Datatype != "" && o.m.Datatype != natural:
		return value{}, false
	}
	out := value{expr: o.exprs[0], kind: col.Kind, lang: o.m.Language}
	if col.Kind == source.TypeInteger {
		if out.mag, ok = intMag(q.pl.dialect, col.DatabaseType); !ok {
			return value{}, false
		}
		out.narrow = out.mag < 63
	}
	return out, true
}

// padded reports whether a PostgreSQL type is the blank-padded char(n).
func padded(t string) bool {
	t = strings.ToUpper(t)
	return t == "BPCHAR" || t == "CHAR" || t == "CHARACTER" ||
		strings.HasPrefix(t, "CHAR(") || strings.HasPrefix(t, "CHARACTER(")
}

// intMag bounds the integers of a column type; false for types whose SQL
// arithmetic is not signed 64-bit (MySQL's UNSIGNED types fail on a negative
// difference).
func intMag(d source.Dialect, t string) (int, bool) {
	t = strings.ToUpper(t)
	if strings.Contains(t, "UNSIGNED") {
		return 0, false
	}
	if d == source.SQLite {
		return 63, true // every SQLite integer may take 64 bits, whatever its declared type
	}
	if i := strings.IndexAny(t, "( "); i >= 0 {
		t = t[:i]
	}
	switch t {
	case "TINYINT":
		return 7, true
	case "SMALLINT", "INT2":
		return 15, true
	case "MEDIUMINT":
		return 23, true
	case "INT", "INTEGER", "INT4":
		return 31, true
	}
	return 63, true
}

// constValue is a literal constant as a parameter.
func constValue(t rdf.Term, d source.Dialect) (value, bool) {
	lit, ok := t.(rdf.Literal)
	if !ok {
		return value{}, false
	}
	switch lit.Datatype {
	case rdf.XSDInteger:
		n, err := strconv.ParseInt(lit.Lexical, 10, 64)
		if err != nil {
			return value{}, false
		}
		return value{expr: sql.Param{Value: n}, kind: source.TypeInteger, mag: bits.Len64(absInt(n)), param: true}, true
	case rdf.XSDDecimal:
		r, ok := new(big.Rat).SetString(lit.Lexical)
		if !ok || d != source.Postgres || strings.ContainsAny(lit.Lexical, "eE/") {
			return value{}, false
		}
		// The exact digits, read by PostgreSQL as numeric.
		return value{expr: sql.Cast{X: sql.Param{Value: r.FloatString(fractionDigits(lit.Lexical))}, Type: "NUMERIC"},
			kind: source.TypeDecimal, param: true}, true
	case rdf.XSDString, rdf.RDFLangString:
		return value{expr: sql.Param{Value: lit.Lexical}, kind: source.TypeString, lang: lit.Lang, param: true}, true
	}
	return value{}, false
}

func absInt(n int64) uint64 {
	if n < 0 {
		return uint64(-(n + 1)) + 1
	}
	return uint64(n)
}

// fractionDigits counts the digits after a decimal lexical form's point.
func fractionDigits(s string) int {
	if _, frac, ok := strings.Cut(s, "."); ok {
		return len(frac)
	}
	return 0
}

// call translates one operator or function over translated arguments.
func (q *query) call(op string, args []value) (value, bool) {
	d := q.pl.dialect
	switch op {
	case "+", "-", "*":
		if len(args) != 2 {
			return value{}, false
		}
		return q.arith(op, args[0], args[1])
	case "u-", "u+":
		if len(args) != 1 || !numeric(args[0].kind) {
			return value{}, false
		}
		if op == "u+" {
			return args[0], true
		}
		return q.arith("-", value{expr: sql.Int(0), kind: source.TypeInteger, param: true}, args[0])
	case "/":
		if len(args) != 2 {
			return value{}, false
		}
		return q.quotient(args[0], args[1])
	case "STRLEN":
		if len(args) != 1 || args[0].kind != source.TypeString || d == source.SQLite {
			return value{}, false
		}
		name := "char_length"
		if d == source.MySQL {
			name = "CHAR_LENGTH"
		}
		// Character strings hold less than 2^32 characters in both dialects.
		return value{expr: sql.Func{Name: name, Args: []sql.Expr{args[0].expr}}, kind: source.TypeInteger, mag: 32, narrow: true}, true
	case "SUBSTR":
		return q.substr(args)
	case "CONCAT":
		return q.concat(args)
	case "YEAR", "MONTH", "DAY", "HOURS", "MINUTES", "SECONDS":
		return datePart(op, args, d)
	}
	return value{}, false
}

func numeric(k source.TypeKind) bool { return k == source.TypeInteger || k == source.TypeDecimal }

// arith is + - * (SPARQL 1.1 §17.3, XPath op:numeric-add and the rest):
// integers stay integers, a decimal operand makes a decimal.
func (q *query) arith(op string, a, b value) (value, bool) {
	if !numeric(a.kind) || !numeric(b.kind) {
		return value{}, false
	}
	if a.kind == source.TypeDecimal || b.kind == source.TypeDecimal {
		// PostgreSQL's numeric adds, subtracts and multiplies exactly, with
		// no bound a query reaches.
		if q.pl.dialect != source.Postgres {
			return value{}, false
		}
		return value{expr: sql.Binary{Op: op, L: a.expr, R: b.expr}, kind: source.TypeDecimal}, true
	}
	mag := max(a.mag, b.mag) + 1
	if op == "*" {
		mag = a.mag + b.mag
	}
	if mag > maxMag {
		return value{}, false
	}
	return value{expr: sql.Binary{Op: op, L: q.wide(a), R: q.wide(b)}, kind: source.TypeInteger, mag: mag}, true
}

// wide makes an integer operand compute in 64 bits: PostgreSQL computes
// smallint and integer arithmetic in their own width, and fails on overflow.
func (q *query) wide(v value) sql.Expr {
	if q.pl.dialect != source.Postgres || !v.narrow {
		return v.expr
	}
	return sql.Cast{X: v.expr, Type: "BIGINT"}
}

// quotient is integer / integer (SPARQL 1.1 §17.3: an xsd:decimal, here with
// the exact quotient rounded half away from zero to the 20 fractional digits
// the evaluator keeps when the expansion does not end), for a dividend that
// SQL computes and a constant divisor. It is exact under two bounds on the
// divisor c:
//   - an ending quotient needs at most as many digits as the larger power of
//     2 or 5 in c has; with at most 20 of them the rounding changes nothing;
//   - SQL rounds the quotient to k digits before it is rounded to 20, which
//     changes the result only for a quotient closer than 10^-k / 2 to a
//     half-way point it is not on; the quotient's digits after the 20th are
//     a fraction with denominator c, at least 1 / (2c) from it, so
//     10^(k-20) >= c rules that out. PostgreSQL divides at 40 digits, the
//     scale of the dividend (its division keeps at least the operands'
//     scale: from memory of its numeric code); MySQL at 30 at least, the
//     dividend's scale (MySQL's most; MariaDB adds div_precision_increment
//     up to 38). TestComputedInSQL checks both on the live servers.
//
// Division by zero is an error, which the evaluator reports: a constant zero
// stays in-process. SQLite has no decimal type.
func (q *query) quotient(a, b value) (value, bool) {
	c, isInt := b.expr.(sql.Param)
	n, _ := c.Value.(int64)
	if !isInt || a.kind != source.TypeInteger || b.kind != source.TypeInteger || a.param || n == 0 {
		return value{}, false
	}
	if max(factorPower(n, 2), factorPower(n, 5)) > 20 {
		return value{}, false
	}
	var dividend sql.Expr
	switch q.pl.dialect {
	case source.Postgres:
		dividend = sql.Cast{X: a.expr, Type: "NUMERIC(60,40)"}
	case source.MySQL:
		if absInt(n) > 1e10 {
			return value{}, false
		}
		dividend = sql.Cast{X: a.expr, Type: "DECIMAL(65,30)"}
	default:
		return value{}, false
	}
	e := sql.Func{Name: "ROUND", Args: []sql.Expr{sql.Binary{Op: "/", L: dividend, R: c}, sql.Int(20)}}
	return value{expr: e, kind: source.TypeDecimal}, true
}

// factorPower counts how often p divides n (n != 0).
func factorPower(n int64, p int64) int {
	k := 0
	for n%p == 0 {
		n /= p
		k++
	}
	return k
}

// substr is SUBSTR with integer constants (§17.4.3.3, fn:substring): the
// characters at positions start <= p < start + length, from 1. The planner
// moves the start to 1 at least and the length to 0 at least, where the
// dialects agree (MySQL counts a start of 0 or less differently, PostgreSQL
// rejects a negative length).
func (q *query) substr(args []value) (value, bool) {
	if len(args) < 2 || len(args) > 3 || args[0].kind != source.TypeString || q.pl.dialect == source.SQLite {
		return value{}, false
	}
	const limit = 1<<31 - 1 // PostgreSQL's substr takes integer positions
	var bounds []int64
	for _, a := range args[1:] {
		p, ok := a.expr.(sql.Param)
		n, isInt := p.Value.(int64)
		if !ok || !isInt || a.kind != source.TypeInteger || n > limit || n < -limit {
			return value{}, false
		}
		bounds = append(bounds, n)
	}
	from := max(bounds[0], 1)
	fn := sql.Func{Name: "substr", Args: []sql.Expr{args[0].expr, sql.Param{Value: from}}}
	if q.pl.dialect == source.MySQL {
		fn.Name = "SUBSTRING"
	}
	if len(bounds) == 2 {
		n := max(bounds[0]+bounds[1]-from, 0)
		if n > limit {
			return value{}, false
		}
		fn.Args = append(fn.Args, sql.Param{Value: n})
	}
	return value{expr: fn, kind: source.TypeString, lang: args[0].lang}, true
}

// concat is CONCAT (§17.4.3.12): the strings joined, with the language tag
// all of them share, NULL when one is. MySQL compares and joins strings in
// their columns' character sets and collations, and refuses to mix two
// collations: every argument is read as utf8mb4 first.
func (q *query) concat(args []value) (value, bool) {
	if len(args) == 0 {
		return value{}, false
	}
	lang := args[0].lang
	parts := make([]sql.Expr, len(args))
	for i, a := range args {
		if a.kind != source.TypeString {
			return value{}, false
		}
		if !strings.EqualFold(a.lang, lang) {
			lang = ""
		}
		parts[i] = a.expr
		switch {
		case q.pl.dialect == source.MySQL:
			parts[i] = sql.Cast{X: a.expr, Type: "CHAR CHARACTER SET utf8mb4"}
		case q.pl.dialect == source.Postgres && a.param:
			parts[i] = sql.Cast{X: a.expr, Type: "TEXT"}
		}
	}
	if q.pl.dialect == source.MySQL {
		return value{expr: sql.Func{Name: "CONCAT", Args: parts}, kind: source.TypeString, lang: lang}, true
	}
	e := parts[0]
	for _, p := range parts[1:] {
		e = sql.Binary{Op: "||", L: e, R: p}
	}
	return value{expr: e, kind: source.TypeString, lang: lang}, true
}

// datePart is YEAR, MONTH, DAY, HOURS, MINUTES and SECONDS (§17.4.5) of a
// date or timestamp column without a time zone, whose lexical form has the
// column's own fields; HOURS, MINUTES and SECONDS take timestamps only, as the
// evaluator does.
func datePart(op string, args []value, d source.Dialect) (value, bool) {
	if len(args) != 1 || d == source.SQLite || args[0].param {
		return value{}, false
	}
	a := args[0]
	stamp := a.kind == source.TypeTimestamp
	if !stamp && (a.kind != source.TypeDate || op != "YEAR" && op != "MONTH" && op != "DAY") {
		return value{}, false
	}
	field := map[string]string{"YEAR": "YEAR", "MONTH": "MONTH", "DAY": "DAY",
		"HOURS": "HOUR", "MINUTES": "MINUTE", "SECONDS": "SECOND"}[op]
	e := sql.DatePart{Field: field, X: a.expr, Timestamp: stamp}
	if field == "SECOND" {
		return value{expr: e, kind: source.TypeDecimal}, true
	}
	// Years reach 294276 in PostgreSQL, 9999 in MySQL.
	return value{expr: e, kind: source.TypeInteger, mag: 19, narrow: true}, true
}

// bindComputed binds v to an expression every branch computes in SQL
// (BIND, and SELECT expressions); false when some branch cannot. An error
// leaves v unbound (§18.5 Extend), as the NULL SQL gives then does.
func (q *query) bindComputed(r *rel, v algebra.Var, e algebra.Expr) bool {
	if _, ok := e.(algebra.Call); !ok {
		return false
	}
	occs := make([]occurrence, len(r.branches))
	for i, b := range r.branches {
		x, ok := q.compute(b, e)
		if !ok {
			return false
		}
		dbType := map[source.TypeKind]string{source.TypeInteger: "BIGINT", source.TypeDecimal: "NUMERIC", source.TypeString: "TEXT"}[x.kind]
		if dbType == "" {
			return false
		}
		m := catalog.TermMap{Kind: catalog.Column, Column: "value", TermType: rdf.KindLiteral, Language: x.lang}
		occs[i] = occurrence{m: m, exprs: []sql.Expr{x.expr}, cols: []source.Column{{DatabaseType: dbType, Kind: x.kind}}}
	}
	for i, b := range r.branches {
		b.vars[v] = binding{alts: []occurrence{occs[i]}, nullable: true}
	}
	r.addVar(v)
	return true
}
