package exec

import (
	"errors"
	"fmt"
	"math/big"
	"regexp"
	"strings"
	"time"

	"veneer/catalog/rdf"
	"veneer/rewrite/algebra"
)

// errType is SPARQL's expression error (§17.3): an unbound variable, a type error,
// a function outside its domain. Filters treat it as false.
var errType = errors.New("type error")

// value is the result of evaluating an expression: a term or an error.
type value struct {
	term rdf.Term
	err  error
}

// EBVOf is the effective boolean value of an evaluation result (§17.2.2), with an
// error counting as false, as FILTER treats it.
func EBVOf(v value) bool {
	b, err := ebv(v)
	return err == nil && b
}

func ebv(v value) (bool, error) {
	if v.err != nil {
		return false, v.err
	}
	lit, ok := v.term.(rdf.Literal)
	if !ok {
		return false, errType
	}
	switch {
	case lit.Datatype == rdf.XSDBoolean:
		switch lit.Lexical {
		case "true", "1":
			return true, nil
		case "false", "0":
			return false, nil
		}
		return false, nil
	case lit.Datatype == rdf.XSDString:
		return lit.Lexical != "", nil
	case isNumeric(lit.Datatype):
		r, ok := numeric(lit)
		if !ok {
			return false, nil
		}
		return r.Sign() != 0, nil
	}
	return false, errType
}

var supportedCalls = map[string]bool{
	"||": true, "&&": true, "!": true, "=": true, "!=": true, "<": true, ">": true, "<=": true, ">=": true,
	"BOUND": true, "STR": true, "LANG": true, "DATATYPE": true, "ISIRI": true, "ISURI": true,
	"ISBLANK": true, "ISLITERAL": true, "ISNUMERIC": true, "SAMETERM": true,
	"CONTAINS": true, "STRSTARTS": true, "STRENDS": true, "REGEX": true,
}

// Supported reports an error for an expression that in-process evaluation does not
// handle yet, naming the operator.
func Supported(e algebra.Expr) error {
	switch e := e.(type) {
	case algebra.Var, algebra.Const:
		return nil
	case algebra.Call:
		if e.IRI != "" || !supportedCalls[e.Op] {
			name := e.Op
			if e.IRI != "" {
				name = "<" + e.IRI + ">"
			}
			return fmt.Errorf("not supported yet: the function or operator %s in a filter", name)
		}
		for _, a := range e.Args {
			if err := Supported(a); err != nil {
				return err
			}
		}
		return nil
	case algebra.Exists:
		return errors.New("not supported yet: EXISTS")
	}
	return fmt.Errorf("not supported yet: %T in a filter", e)
}

// Eval evaluates an expression over a solution (§17).
func Eval(e algebra.Expr, sol map[algebra.Var]rdf.Term) value {
	switch e := e.(type) {
	case algebra.Var:
		if t, ok := sol[e]; ok && t != nil {
			return value{term: t}
		}
		return value{err: errType}
	case algebra.Const:
		return value{term: e.Term}
	case algebra.Call:
		return call(e, sol)
	}
	return value{err: errType}
}

func boolValue(b bool) value {
	if b {
		return value{term: rdf.NewTyped("true", rdf.XSDBoolean)}
	}
	return value{term: rdf.NewTyped("false", rdf.XSDBoolean)}
}

func call(c algebra.Call, sol map[algebra.Var]rdf.Term) value {
	switch c.Op {
	case "||", "&&":
		// §17.2: error || true = true, error && false = false; otherwise errors win.
		l, lerr := ebv(Eval(c.Args[0], sol))
		r, rerr := ebv(Eval(c.Args[1], sol))
		if c.Op == "||" {
			if lerr == nil && l || rerr == nil && r {
				return boolValue(true)
			}
		} else if lerr == nil && !l || rerr == nil && !r {
			return boolValue(false)
		}
		if lerr != nil || rerr != nil {
			return value{err: errType}
		}
		return boolValue(l && r || c.Op == "||" && (l || r))
	case "!":
		b, err := ebv(Eval(c.Args[0], sol))
		if err != nil {
			return value{err: err}
		}
		return boolValue(!b)
	case "BOUND":
		v, ok := c.Args[0].(algebra.Var)
		return boolValue(ok && sol[v] != nil)
	}
	args := make([]rdf.Term, len(c.Args))
	for i, a := range c.Args {
		v := Eval(a, sol)
		if v.err != nil {
			return v
		}
		args[i] = v.term
	}
	switch c.Op {
	case "=", "!=", "<", ">", "<=", ">=":
		return compareOp(c.Op, args[0], args[1])
	case "SAMETERM":
		return boolValue(rdf.SameTerm(args[0], args[1]))
	case "ISIRI", "ISURI":
		return boolValue(args[0].Kind() == rdf.KindIRI)
	case "ISBLANK":
		return boolValue(args[0].Kind() == rdf.KindBlank)
	case "ISLITERAL":
		return boolValue(args[0].Kind() == rdf.KindLiteral)
	case "ISNUMERIC":
		lit, ok := args[0].(rdf.Literal)
		_, valid := numeric(lit)
		return boolValue(ok && isNumeric(lit.Datatype) && valid)
	case "STR":
		switch t := args[0].(type) {
		case rdf.IRI:
			return value{term: rdf.NewString(string(t))}
		case rdf.Literal:
			return value{term: rdf.NewString(t.Lexical)}
		}
		return value{err: errType}
	case "LANG":
		if lit, ok := args[0].(rdf.Literal); ok {
			return value{term: rdf.NewString(lit.Lang)}
		}
		return value{err: errType}
	case "DATATYPE":
		if lit, ok := args[0].(rdf.Literal); ok {
			return value{term: lit.Datatype}
		}
		return value{err: errType}
	case "CONTAINS", "STRSTARTS", "STRENDS":
		a, b, ok := compatibleStrings(args[0], args[1])
		if !ok {
			return value{err: errType}
		}
		switch c.Op {
		case "CONTAINS":
			return boolValue(strings.Contains(a, b))
		case "STRSTARTS":
			return boolValue(strings.HasPrefix(a, b))
		}
		return boolValue(strings.HasSuffix(a, b))
	case "REGEX":
		return regex(args)
	}
	return value{err: errType}
}

// stringLit returns the lexical form of a simple or language-tagged literal.
func stringLit(t rdf.Term) (rdf.Literal, bool) {
	lit, ok := t.(rdf.Literal)
	if !ok || lit.Datatype != rdf.XSDString && lit.Datatype != rdf.RDFLangString {
		return rdf.Literal{}, false
	}
	return lit, true
}

// compatibleStrings checks argument compatibility (§17.4.3.1.2): both simple, or the
// second simple, or both with the same language tag.
func compatibleStrings(a, b rdf.Term) (string, string, bool) {
	la, ok1 := stringLit(a)
	lb, ok2 := stringLit(b)
	if !ok1 || !ok2 || lb.Lang != "" && !strings.EqualFold(la.Lang, lb.Lang) {
		return "", "", false
	}
	return la.Lexical, lb.Lexical, true
}

func regex(args []rdf.Term) value {
	text, ok := stringLit(args[0])
	pattern, ok2 := args[1].(rdf.Literal)
	if !ok || !ok2 || pattern.Datatype != rdf.XSDString {
		return value{err: errType}
	}
	flags := ""
	if len(args) > 2 {
		f, ok := args[2].(rdf.Literal)
		if !ok || f.Datatype != rdf.XSDString {
			return value{err: errType}
		}
		for _, r := range f.Lexical {
			switch r {
			case 'i', 's', 'm':
				flags += string(r)
			case 'x':
				pattern.Lexical = stripRegexSpace(pattern.Lexical)
			case 'q':
				pattern.Lexical = regexp.QuoteMeta(pattern.Lexical)
			default:
				return value{err: errType}
			}
		}
	}
	expr := pattern.Lexical
	if flags != "" {
		expr = "(?" + flags + ")" + expr
	}
	re, err := regexp.Compile(expr)
	if err != nil {
		return value{err: errType}
	}
	return boolValue(re.MatchString(text.Lexical))
}

// stripRegexSpace removes whitespace outside character classes (the x flag of
// XPath regular expressions).
func stripRegexSpace(p string) string {
	var b strings.Builder
	inClass := false
	for _, r := range p {
		switch {
		case r == '[':
			inClass = true
		case r == ']':
			inClass = false
		case !inClass && (r == ' ' || r == '\t' || r == '\n' || r == '\r'):
			continue
		}
		b.WriteRune(r)
	}
	return b.String()
}

var numericTypes = map[rdf.IRI]bool{
	rdf.XSDInteger: true, rdf.XSDDecimal: true, rdf.XSDDouble: true, rdf.XSDFloat: true,
	rdf.XSDNS + "long": true, rdf.XSDNS + "int": true, rdf.XSDNS + "short": true, rdf.XSDNS + "byte": true,
	rdf.XSDNS + "nonNegativeInteger": true, rdf.XSDNS + "nonPositiveInteger": true,
	rdf.XSDNS + "positiveInteger": true, rdf.XSDNS + "negativeInteger": true,
	rdf.XSDNS + "unsignedLong": true, rdf.XSDNS + "unsignedInt": true,
	rdf.XSDNS + "unsignedShort": true, rdf.XSDNS + "unsignedByte": true,
}

func isNumeric(dt rdf.IRI) bool { return numericTypes[dt] }

// numeric parses a numeric literal's value exactly; doubles and floats are read
// as their exact binary value. INF and NaN do not parse.
func numeric(lit rdf.Literal) (*big.Rat, bool) {
	s := strings.TrimSpace(lit.Lexical)
	if lit.Datatype == rdf.XSDDouble || lit.Datatype == rdf.XSDFloat {
		f, _, err := big.ParseFloat(s, 10, 64, big.ToNearestEven)
		if err != nil || f.IsInf() {
			return nil, false
		}
		r, _ := f.Rat(nil)
		return r, true
	}
	r, ok := new(big.Rat).SetString(s)
	return r, ok
}

// compareOp implements the SPARQL operator mapping for comparisons (§17.3) over
// numerics, simple literals and xsd:string, booleans and xsd:dateTime; = and !=
// fall back to RDF term equality for other terms.
func compareOp(op string, a, b rdf.Term) value {
	cmp, err := compareValues(a, b)
	if err != nil {
		if op != "=" && op != "!=" {
			return value{err: errType}
		}
		if rdf.SameTerm(a, b) {
			return boolValue(op == "=")
		}
		la, aLit := a.(rdf.Literal)
		lb, bLit := b.(rdf.Literal)
		if aLit && bLit && !(knownType(la.Datatype) && knownType(lb.Datatype)) {
			return value{err: errType} // unknown datatypes: cannot tell values apart
		}
		return boolValue(op == "!=")
	}
	switch op {
	case "=":
		return boolValue(cmp == 0)
	case "!=":
		return boolValue(cmp != 0)
	case "<":
		return boolValue(cmp < 0)
	case ">":
		return boolValue(cmp > 0)
	case "<=":
		return boolValue(cmp <= 0)
	}
	return boolValue(cmp >= 0)
}

func knownType(dt rdf.IRI) bool {
	return isNumeric(dt) || dt == rdf.XSDString || dt == rdf.RDFLangString || dt == rdf.XSDBoolean || dt == rdf.XSDDateTime
}

func compareValues(a, b rdf.Term) (int, error) {
	la, ok1 := a.(rdf.Literal)
	lb, ok2 := b.(rdf.Literal)
	if !ok1 || !ok2 {
		return 0, errType
	}
	switch {
	case isNumeric(la.Datatype) && isNumeric(lb.Datatype):
		ra, ok1 := numeric(la)
		rb, ok2 := numeric(lb)
		if !ok1 || !ok2 {
			return 0, errType
		}
		return ra.Cmp(rb), nil
	case la.Datatype == rdf.XSDString && lb.Datatype == rdf.XSDString:
		return strings.Compare(la.Lexical, lb.Lexical), nil
	case la.Datatype == rdf.XSDBoolean && lb.Datatype == rdf.XSDBoolean:
		x, err1 := ebv(value{term: la})
		y, err2 := ebv(value{term: lb})
		if err1 != nil || err2 != nil {
			return 0, errType
		}
		return boolInt(x) - boolInt(y), nil
	case la.Datatype == rdf.XSDDateTime && lb.Datatype == rdf.XSDDateTime:
		ta, ok1 := parseDateTime(la.Lexical)
		tb, ok2 := parseDateTime(lb.Lexical)
		if !ok1 || !ok2 {
			return 0, errType
		}
		return ta.Compare(tb), nil
	}
	return 0, errType
}

func boolInt(b bool) int {
	if b {
		return 1
	}
	return 0
}

// parseDateTime reads an xsd:dateTime; one without a zone is taken as UTC (an
// implementation-chosen implicit zone, which XML Schema permits).
func parseDateTime(s string) (time.Time, bool) {
	for _, layout := range []string{time.RFC3339Nano, "2006-01-02T15:04:05.999999999"} {
		if t, err := time.Parse(layout, s); err == nil {
			return t, true
		}
	}
	return time.Time{}, false
}
