package catalog

import (
	"math"
	"strconv"
	"strings"
)

// The lexical spaces of the XSD numeric datatypes (XSD 1.1 Part 2 §3.3.3
// decimal, §3.3.5 double, §3.3.13 integer): what a literal's lexical form must
// be, with no white space, for the literal to be well-typed (RDF 1.1 Concepts
// §3.3).

// IntegerLexical checks the xsd:integer lexical space: an optional sign and digits.
func IntegerLexical(s string) bool {
	if len(s) > 0 && (s[0] == '+' || s[0] == '-') {
		s = s[1:]
	}
	return len(s) > 0 && digitsOnly(s)
}

// DecimalLexical checks the xsd:decimal lexical space: an optional sign, digits
// with at most one '.', and at least one digit.
func DecimalLexical(s string) bool {
	if len(s) > 0 && (s[0] == '+' || s[0] == '-') {
		s = s[1:]
	}
	whole, frac, _ := strings.Cut(s, ".")
	return len(whole)+len(frac) > 0 && digitsOnly(whole) && digitsOnly(frac)
}

// DoubleLexical reads the xsd:double / xsd:float lexical space: a decimal
// mantissa with an optional exponent, or INF, +INF, -INF, NaN. Go's ParseFloat
// alone would also take hex, underscores and "Infinity". Out of range, a
// mantissa rounds to ±Inf or 0, as XSD's lexical mapping does.
func DoubleLexical(s string) (float64, bool) {
	switch s {
	case "INF", "+INF":
		return math.Inf(1), true
	case "-INF":
		return math.Inf(-1), true
	case "NaN":
		return math.NaN(), true
	}
	mant, exp, hasExp := s, "", false
	if i := strings.IndexAny(s, "eE"); i >= 0 {
		mant, exp, hasExp = s[:i], s[i+1:], true
	}
	if !DecimalLexical(mant) || hasExp && !IntegerLexical(exp) {
		return 0, false
	}
	f, err := strconv.ParseFloat(s, 64)
	if err != nil && !isRangeError(err) {
		return 0, false
	}
	return f, true
}

func isRangeError(err error) bool {
	ne, ok := err.(*strconv.NumError)
	return ok && ne.Err == strconv.ErrRange
}

func digitsOnly[T ~string | ~[]byte](s T) bool {
	for i := 0; i < len(s); i++ {
		if s[i] < '0' || s[i] > '9' {
			return false
		}
	}
	return true
}
