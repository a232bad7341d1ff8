package exec

import (
	"math"
	"math/big"
	"strconv"
	"strings"

	"veneer/catalog/rdf"
	"veneer/rewrite/algebra"
)

// cast compiles a call named by an IRI: an XPath constructor function (§17.5)
// for xsd:string, xsd:boolean, xsd:double, xsd:float, xsd:decimal,
// xsd:integer and xsd:dateTime, and, as extensions, the types derived from
// xsd:integer and xsd:date. Any other IRI names an extension function veneer
// does not have, which makes the query bad.
func (c *compiler) cast(e algebra.Call) (evalFn, error) {
	target := rdf.IRI(e.IRI)
	if !castTarget(target) {
		return nil, badQuery("unknown function <%s>", e.IRI)
	}
	if len(e.Args) != 1 {
		return nil, badQuery("the cast to <%s> takes 1 argument, not %d", e.IRI, len(e.Args))
	}
	arg, err := c.expr(e.Args[0])
	if err != nil {
		return nil, err
	}
	return func(sol []rdf.Term) (rdf.Term, error) {
		t, err := arg(sol)
		if err != nil {
			return nil, err
		}
		return castTo(target, t)
	}, nil
}

func castTarget(dt rdf.IRI) bool {
	switch dt {
	case rdf.XSDString, rdf.XSDBoolean, rdf.XSDDouble, rdf.XSDFloat, rdf.XSDDecimal, rdf.XSDDateTime, rdf.XSDDate:
		return true
	}
	_, ok := integerTypes[dt]
	return ok
}

// castTo converts a term to the target datatype, following the table of §17.5:
// an IRI casts only to xsd:string, a simple literal casts as its lexical form
// does, other literals by their value.
func castTo(target rdf.IRI, t rdf.Term) (rdf.Term, error) {
	var lit rdf.Literal
	switch t := t.(type) {
	case rdf.IRI:
		if target == rdf.XSDString {
			return rdf.NewString(string(t)), nil
		}
		return nil, errExpr
	case rdf.Literal:
		lit = t
	default:
		return nil, errExpr
	}
	if lit.Datatype == rdf.RDFLangString {
		return nil, errExpr
	}
	if lit.Datatype == rdf.XSDString {
		return castString(target, strings.TrimSpace(lit.Lexical), lit.Lexical)
	}
	if isNumericType(lit.Datatype) {
		n, ok := numberOf(lit)
		if !ok {
			return nil, errExpr
		}
		return castNumber(target, n)
	}
	switch lit.Datatype {
	case rdf.XSDBoolean:
		b, ok := booleanValue(lit.Lexical)
		if !ok {
			return nil, errExpr
		}
		if target == rdf.XSDString || target == rdf.XSDBoolean {
			return rdf.NewTyped(strconv.FormatBool(b), target), nil
		}
		return castNumber(target, number{kind: kindInteger, small: int64(boolInt(b))})
	case rdf.XSDDateTime, rdf.XSDDate:
		tm, ok := parseTemporal(lit)
		if !ok {
			return nil, errExpr
		}
		return castTemporal(target, lit.Datatype, tm, strings.TrimSpace(lit.Lexical))
	}
	if target == rdf.XSDString {
		return rdf.NewString(lit.Lexical), nil
	}
	return nil, errExpr
}

// castString casts the text of a simple literal (s trimmed, raw as written).
func castString(target rdf.IRI, s, raw string) (rdf.Term, error) {
	switch target {
	case rdf.XSDString:
		return rdf.NewString(raw), nil
	case rdf.XSDBoolean:
		b, ok := booleanValue(s)
		if !ok {
			return nil, errExpr
		}
		return boolTerm(b), nil
	case rdf.XSDDateTime, rdf.XSDDate:
		if _, ok := parseTemporal(rdf.NewTyped(s, target)); !ok {
			return nil, errExpr
		}
		return rdf.NewTyped(s, target), nil
	}
	n, ok := numberOf(rdf.NewTyped(s, target))
	if !ok {
		return nil, errExpr
	}
	return castNumber(target, n)
}

// castNumber casts a numeric value.
func castNumber(target rdf.IRI, n number) (rdf.Term, error) {
	switch target {
	case rdf.XSDString:
		return rdf.NewString(stringOfNumber(n)), nil
	case rdf.XSDBoolean:
		return boolTerm(!n.isZeroOrNaN()), nil
	case rdf.XSDDouble:
		return n.to(kindDouble).literal(), nil
	case rdf.XSDFloat:
		if n.kind == kindDouble {
			return floatNumber(kindFloat, n.f).literal(), nil
		}
		return n.to(kindFloat).literal(), nil
	case rdf.XSDDecimal:
		r, ok := exactValue(n)
		if !ok {
			return nil, errExpr
		}
		return number{kind: kindDecimal, exact: r}.literal(), nil
	case rdf.XSDDateTime, rdf.XSDDate:
		return nil, errExpr
	}
	r, ok := exactValue(n)
	if !ok {
		return nil, errExpr
	}
	whole := new(big.Int).Quo(r.Num(), r.Denom()) // truncates towards zero
	lexical := whole.String()
	if _, ok := parseInteger(lexical, integerTypes[target]); !ok {
		return nil, errExpr
	}
	return rdf.NewTyped(lexical, target), nil
}

// exactValue is the decimal value of a number; a float or double gives the
// decimal of its shortest text form, and INF and NaN have none.
func exactValue(n number) (*big.Rat, bool) {
	if n.kind < kindFloat {
		return n.rat(), true
	}
	if math.IsInf(n.f, 0) || math.IsNaN(n.f) {
		return nil, false
	}
	bits := 64
	if n.kind == kindFloat {
		bits = 32
	}
	r, ok := new(big.Rat).SetString(strconv.FormatFloat(n.f, 'f', -1, bits))
	return r, ok
}

// castTemporal casts an xsd:dateTime or xsd:date value.
func castTemporal(target, from rdf.IRI, t temporal, lexical string) (rdf.Term, error) {
	switch target {
	case rdf.XSDString:
		return rdf.NewString(lexical), nil
	case from:
		return rdf.NewTyped(lexical, target), nil
	case rdf.XSDDate:
		date, _, _ := strings.Cut(lexical, "T")
		return rdf.NewTyped(date+t.zone, rdf.XSDDate), nil
	case rdf.XSDDateTime:
		date := strings.TrimSuffix(lexical, t.zone)
		return rdf.NewTyped(date+"T00:00:00"+t.zone, rdf.XSDDateTime), nil
	}
	return nil, errExpr
}
