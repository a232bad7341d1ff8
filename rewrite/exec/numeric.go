package exec

import (
	"math"
	"math/big"
	"strconv"
	"strings"
	"veneer/catalog"

	"veneer/catalog/rdf"
)

// numKind is a numeric type of XPath's promotion order (XPath 2.0 §B.1): an
// operation on two numbers happens in the later of their two kinds.
type numKind uint8

const (
	kindInteger numKind = iota
	kindDecimal
	kindFloat
	kindDouble
)

// number is the value of a numeric literal. Integers and decimals with at most
// 18 significant digits live in small as small / 10^scale, with exact nil (the
// common case, read and compared without big numbers); other integers and
// decimals live in exact; floats and doubles live in f (a float's value is
// always a float32 value).
type number struct {
	kind  numKind
	small int64
	scale int8
	exact *big.Rat
	f     float64
}

// pow10 holds the powers of ten an int64 can hold.
var pow10 = func() (p [19]int64) {
	p[0] = 1
	for i := 1; i < len(p); i++ {
		p[i] = p[i-1] * 10
	}
	return p
}()

// integerTypes maps each integer datatype to its value range (nil bound: none),
// xsd:integer and the types XML Schema derives from it (SPARQL 1.1 Query §17.1).
var integerTypes = map[rdf.IRI][2]*big.Int{
	rdf.XSDInteger:                   {nil, nil},
	rdf.XSDNS + "nonPositiveInteger": {nil, big.NewInt(0)},
	rdf.XSDNS + "negativeInteger":    {nil, big.NewInt(-1)},
	rdf.XSDNS + "long":               {big.NewInt(math.MinInt64), big.NewInt(math.MaxInt64)},
	rdf.XSDNS + "int":                {big.NewInt(math.MinInt32), big.NewInt(math.MaxInt32)},
	rdf.XSDNS + "short":              {big.NewInt(math.MinInt16), big.NewInt(math.MaxInt16)},
	rdf.XSDNS + "byte":               {big.NewInt(math.MinInt8), big.NewInt(math.MaxInt8)},
	rdf.XSDNS + "nonNegativeInteger": {big.NewInt(0), nil},
	rdf.XSDNS + "unsignedLong":       {big.NewInt(0), new(big.Int).SetUint64(math.MaxUint64)},
	rdf.XSDNS + "unsignedInt":        {big.NewInt(0), big.NewInt(math.MaxUint32)},
	rdf.XSDNS + "unsignedShort":      {big.NewInt(0), big.NewInt(math.MaxUint16)},
	rdf.XSDNS + "unsignedByte":       {big.NewInt(0), big.NewInt(math.MaxUint8)},
	rdf.XSDNS + "positiveInteger":    {big.NewInt(1), nil},
}

// isNumericType reports whether dt is one of the numeric datatypes of §17.1.
func isNumericType(dt rdf.IRI) bool {
	switch dt {
	case rdf.XSDInteger, rdf.XSDDecimal, rdf.XSDDouble, rdf.XSDFloat:
		return true
	}
	_, ok := integerTypes[dt]
	return ok
}

// numberOf reads a numeric literal; false when the term is not a literal of a
// numeric datatype or its lexical form is not valid for that datatype.
func numberOf(t rdf.Term) (number, bool) {
	lit, ok := t.(rdf.Literal)
	if !ok {
		return number{}, false
	}
	// No white space: an RDF literal's lexical form must be in the datatype's
	// lexical space as it is (RDF 1.1 Concepts §3.3), and XSD's lexical spaces
	// of numbers hold none (XSD 1.1 Part 2 §3.3.3, §3.3.5, §3.3.13). Casts from
	// strings, which do collapse white space, trim before they get here.
	s := lit.Lexical
	switch lit.Datatype {
	case rdf.XSDDecimal:
		if !catalog.DecimalLexical(s) {
			return number{}, false
		}
		if n, ok := smallDecimal(s); ok {
			return n, true
		}
		r, ok := new(big.Rat).SetString(s)
		return number{kind: kindDecimal, exact: r}, ok
	case rdf.XSDDouble, rdf.XSDFloat:
		f, ok := catalog.DoubleLexical(s)
		if !ok {
			return number{}, false
		}
		if lit.Datatype == rdf.XSDFloat {
			return number{kind: kindFloat, f: float64(float32(f))}, true
		}
		return number{kind: kindDouble, f: f}, true
	}
	bounds, ok := integerTypes[lit.Datatype]
	if !ok {
		return number{}, false
	}
	return parseInteger(s, bounds)
}

// parseInteger reads an xsd:integer lexical form within the bounds of a derived type.
func parseInteger(s string, bounds [2]*big.Int) (number, bool) {
	if !catalog.IntegerLexical(s) {
		return number{}, false
	}
	if n, err := strconv.ParseInt(s, 10, 64); err == nil {
		if bounds[0] == nil && bounds[1] == nil ||
			(bounds[0] == nil || bounds[0].IsInt64() && n >= bounds[0].Int64()) &&
				(bounds[1] == nil || !bounds[1].IsInt64() || n <= bounds[1].Int64()) {
			return number{kind: kindInteger, small: n}, true
		}
		return number{}, false
	}
	i, ok := new(big.Int).SetString(s, 10)
	if !ok || bounds[0] != nil && i.Cmp(bounds[0]) < 0 || bounds[1] != nil && i.Cmp(bounds[1]) > 0 {
		return number{}, false
	}
	return number{kind: kindInteger, exact: new(big.Rat).SetInt(i)}, true
}

// smallDecimal reads a valid decimal lexical form with at most 18 digits.
func smallDecimal(s string) (number, bool) {
	neg := false
	switch {
	case strings.HasPrefix(s, "-"):
		neg, s = true, s[1:]
	case strings.HasPrefix(s, "+"):
		s = s[1:]
	}
	whole, frac, _ := strings.Cut(s, ".")
	frac = strings.TrimRight(frac, "0")
	whole = strings.TrimLeft(whole, "0")
	if len(whole)+len(frac) > 18 {
		return number{}, false
	}
	var m int64
	for _, part := range [2]string{whole, frac} {
		for i := 0; i < len(part); i++ {
			m = m*10 + int64(part[i]-'0')
		}
	}
	if neg {
		m = -m
	}
	return number{kind: kindDecimal, small: m, scale: int8(len(frac))}, true
}

func allDigits(s string) bool {
	for i := 0; i < len(s); i++ {
		if s[i] < '0' || s[i] > '9' {
			return false
		}
	}
	return true
}

// rat returns the exact value of an integer or decimal.
func (n number) rat() *big.Rat {
	if n.exact != nil {
		return n.exact
	}
	return big.NewRat(n.small, pow10[n.scale])
}

// float returns the value as a float64 (exact for floats and doubles, the
// nearest double otherwise).
func (n number) float() float64 {
	switch {
	case n.kind >= kindFloat:
		return n.f
	case n.exact == nil && n.small < 1<<53 && n.small > -1<<53:
		// Both operands are exact doubles, so one division rounds correctly.
		return float64(n.small) / float64(pow10[n.scale])
	}
	f, _ := n.rat().Float64()
	return f
}

// to converts n to kind k, which is not earlier than n's kind.
func (n number) to(k numKind) number {
	switch {
	case n.kind == k:
		return n
	case k == kindDecimal:
		n.kind = kindDecimal // an integer's representation is a decimal's
		return n
	case k == kindFloat:
		return number{kind: kindFloat, f: float64(float32(n.float()))}
	}
	return number{kind: kindDouble, f: n.float()}
}

func exactNumber(k numKind, r *big.Rat) number {
	if k == kindInteger && r.IsInt() && r.Num().IsInt64() {
		return number{kind: kindInteger, small: r.Num().Int64()}
	}
	return number{kind: k, exact: r}
}

func floatNumber(k numKind, f float64) number {
	if k == kindFloat {
		f = float64(float32(f))
	}
	return number{kind: k, f: f}
}

// divisionDigits is the number of fractional digits an xsd:decimal quotient is
// rounded to when it has no finite decimal expansion; XPath leaves the precision
// to the implementation (F&O §6.2.4 requires at least 18 digits overall).
const divisionDigits = 20

// arith applies one of + - * / to two numbers after promotion (XPath 2.0 §B.2;
// SPARQL 1.1 Query §17.3: integer / integer is a decimal). Division by zero is an
// error for integers and decimals, IEEE infinity or NaN for floats and doubles.
func arith(op byte, a, b number) (number, bool) {
	k := max(a.kind, b.kind)
	if op == '/' && k == kindInteger {
		k = kindDecimal
	}
	if k >= kindFloat {
		x, y := a.to(k).f, b.to(k).f
		switch op {
		case '+':
			return floatNumber(k, x+y), true
		case '-':
			return floatNumber(k, x-y), true
		case '*':
			return floatNumber(k, x*y), true
		}
		return floatNumber(k, x/y), true
	}
	if k == kindInteger && a.exact == nil && b.exact == nil {
		if r, ok := smallArith(op, a.small, b.small); ok {
			return number{kind: kindInteger, small: r}, true
		}
	}
	x, y := a.rat(), b.rat()
	r := new(big.Rat)
	switch op {
	case '+':
		r.Add(x, y)
	case '-':
		r.Sub(x, y)
	case '*':
		r.Mul(x, y)
	default:
		if y.Sign() == 0 {
			return number{}, false
		}
		r = roundRat(r.Quo(x, y), divisionDigits)
	}
	return exactNumber(k, r), true
}

// smallArith is integer + - * without overflow; false when it would overflow.
func smallArith(op byte, x, y int64) (int64, bool) {
	switch op {
	case '+':
		r := x + y
		return r, (r > x) == (y > 0)
	case '-':
		r := x - y
		return r, (r < x) == (y > 0)
	}
	if x == 0 || y == 0 {
		return 0, true
	}
	r := x * y
	return r, r/y == x && !(x == -1 && y == math.MinInt64) && !(y == -1 && x == math.MinInt64)
}

// roundRat rounds r to the given number of fractional digits, half away from
// zero, when its decimal expansion is longer.
func roundRat(r *big.Rat, digits int) *big.Rat {
	if finiteDecimal(r) {
		return r
	}
	scale := new(big.Int).Exp(big.NewInt(10), big.NewInt(int64(digits)), nil)
	n := new(big.Int).Mul(r.Num(), scale)
	q, m := new(big.Int).QuoRem(n, r.Denom(), new(big.Int))
	if new(big.Int).Mul(m.Abs(m), big.NewInt(2)).Cmp(r.Denom()) >= 0 {
		if r.Sign() < 0 {
			q.Sub(q, big.NewInt(1))
		} else {
			q.Add(q, big.NewInt(1))
		}
	}
	return new(big.Rat).SetFrac(q, scale)
}

// finiteDecimal reports whether r has a finite decimal expansion: its
// denominator has no prime factors but 2 and 5.
func finiteDecimal(r *big.Rat) bool {
	d := new(big.Int).Set(r.Denom())
	for _, p := range []int64{2, 5} {
		d.Quo(d, new(big.Int).Exp(big.NewInt(p), big.NewInt(int64(factorCount(d, p))), nil))
	}
	return d.IsInt64() && d.Int64() == 1
}

// factorCount is the multiplicity of the prime p in d.
func factorCount(d *big.Int, p int64) int {
	n := 0
	bp := big.NewInt(p)
	q, m := new(big.Int).Set(d), new(big.Int)
	for q.Sign() != 0 {
		q.QuoRem(q, bp, m)
		if m.Sign() != 0 {
			break
		}
		n++
	}
	return n
}

// negate is op:numeric-unary-minus.
func negate(n number) number {
	switch {
	case n.kind >= kindFloat:
		return number{kind: n.kind, f: -n.f}
	case n.exact == nil && n.small != math.MinInt64:
		n.small = -n.small
		return n
	}
	return exactNumber(n.kind, new(big.Rat).Neg(n.rat()))
}

// compareNumbers compares two numbers after promotion; ok is false when either
// is NaN, which is unordered and unequal to everything.
func compareNumbers(a, b number) (cmp int, ok bool) {
	k := max(a.kind, b.kind)
	if k >= kindFloat {
		x, y := a.to(k).f, b.to(k).f
		switch {
		case math.IsNaN(x) || math.IsNaN(y):
			return 0, false
		case x < y:
			return -1, true
		case x > y:
			return 1, true
		}
		return 0, true
	}
	if x, y, ok := alignSmall(a, b); ok {
		switch {
		case x < y:
			return -1, true
		case x > y:
			return 1, true
		}
		return 0, true
	}
	return a.rat().Cmp(b.rat()), true
}

// alignSmall brings two small integers or decimals to one scale; false when
// either is not small or the scaling would overflow.
func alignSmall(a, b number) (int64, int64, bool) {
	if a.exact != nil || b.exact != nil {
		return 0, 0, false
	}
	if a.scale < b.scale {
		y, x, ok := alignSmall(b, a)
		return x, y, ok
	}
	d := pow10[a.scale-b.scale]
	y := b.small * d
	if b.small != 0 && y/d != b.small {
		return 0, 0, false
	}
	return a.small, y, true
}

// isZero reports whether n is zero or NaN: the numbers whose EBV is false.
func (n number) isZeroOrNaN() bool {
	if n.kind >= kindFloat {
		return n.f == 0 || math.IsNaN(n.f)
	}
	if n.exact != nil {
		return n.exact.Sign() == 0
	}
	return n.small == 0
}

// rounding functions of §17.4.4 (fn:abs, fn:round, fn:ceiling, fn:floor).
const (
	roundAbs = iota
	roundNearest
	roundCeil
	roundFloor
)

// roundNumber applies ABS, ROUND, CEIL or FLOOR, keeping the numeric type.
func roundNumber(fn int, n number) number {
	if n.kind >= kindFloat {
		f := n.f
		switch fn {
		case roundAbs:
			f = math.Abs(f)
		case roundNearest:
			// fn:round: halves go towards positive infinity; -0.5 rounds to -0.
			if !math.IsInf(f, 0) && !math.IsNaN(f) && f != math.Trunc(f) {
				r := math.Floor(f + 0.5)
				if r == 0 && f < 0 {
					r = math.Copysign(0, -1)
				}
				f = r
			}
		case roundCeil:
			f = math.Ceil(f)
		case roundFloor:
			f = math.Floor(f)
		}
		return floatNumber(n.kind, f)
	}
	if fn == roundAbs {
		if n.rat().Sign() < 0 {
			return negate(n)
		}
		return n
	}
	if n.kind == kindInteger {
		return n
	}
	r := n.rat()
	if r.IsInt() {
		return n
	}
	floor := new(big.Int).Div(r.Num(), r.Denom()) // Euclidean: rounds towards -inf for positive denominators
	switch fn {
	case roundCeil:
		floor.Add(floor, big.NewInt(1))
	case roundNearest:
		half := new(big.Rat).Add(r, big.NewRat(1, 2))
		floor = new(big.Int).Div(half.Num(), half.Denom())
	}
	return number{kind: kindDecimal, exact: new(big.Rat).SetInt(floor)}
}

// numberTypes are the datatypes of results of each kind.
var numberTypes = [...]rdf.IRI{
	kindInteger: rdf.XSDInteger,
	kindDecimal: rdf.XSDDecimal,
	kindFloat:   rdf.XSDFloat,
	kindDouble:  rdf.XSDDouble,
}

// literal returns n as a literal in the canonical lexical form of its type.
func (n number) literal() rdf.Literal {
	return rdf.NewTyped(n.lexical(), numberTypes[n.kind])
}

// lexical is the canonical lexical form: integers as digits, decimals as XML
// Schema 1.1 Part 2 §3.3.3.2 writes them (no trailing zeros, and no point for
// integral values: "3", "-0.5"; the W3C SPARQL tests ceil01, floor01, round01
// expect this form, and catalog writes column values the same way), floats and
// doubles as a mantissa with one digit before the point and an exponent
// ("1.5E2", "0.0E0", "INF", "NaN").
func (n number) lexical() string {
	switch n.kind {
	case kindInteger:
		if n.exact == nil {
			return strconv.FormatInt(n.small, 10)
		}
		return n.exact.Num().String()
	case kindDecimal:
		return decimalString(n.rat())
	case kindFloat:
		return floatLexical(n.f, 32)
	}
	return floatLexical(n.f, 64)
}

// decimalString writes a finite decimal exactly, without superfluous zeros
// and without a point for integral values.
func decimalString(r *big.Rat) string {
	if r.IsInt() {
		return r.Num().String()
	}
	// A finite decimal's denominator is 2^a 5^b; it needs max(a, b) digits.
	digits := max(factorCount(r.Denom(), 2), factorCount(r.Denom(), 5))
	s := strings.TrimRight(r.FloatString(digits), "0")
	return strings.TrimSuffix(s, ".")
}

// floatLexical writes the canonical xsd:double (bits 64) or xsd:float (bits
// 32) form: the shortest mantissa that reads back as the same value.
func floatLexical(f float64, bits int) string { return catalog.CanonicalDouble(f, bits) }

// stringOfNumber is the XPath cast of a number to xsd:string (F&O §17.1.2):
// integers and decimals without a trailing ".0"; floats and doubles in plain
// decimal notation when 1e-6 <= |v| < 1e6, in the canonical form otherwise.
func stringOfNumber(n number) string {
	switch n.kind {
	case kindInteger:
		return n.lexical()
	case kindDecimal:
		return decimalString(n.rat())
	}
	bits := 64
	if n.kind == kindFloat {
		bits = 32
	}
	a := math.Abs(n.f)
	if a >= 1e-6 && a < 1e6 {
		return strconv.FormatFloat(n.f, 'f', -1, bits)
	}
	if n.f == 0 {
		if math.Signbit(n.f) {
			return "-0"
		}
		return "0"
	}
	return floatLexical(n.f, bits)
}
