package differential

import (
	"encoding/hex"
	"fmt"
	"math"
	"math/big"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"

	"veneer/catalog/rdf"
)

// The materialiser keeps its own small versions of R2RML's value rules (SQL type
// families, natural datatypes, canonical lexical forms, IRI-safe encoding) instead
// of calling the catalog's, so that a mistake there shows up as a difference rather
// than being repeated on both sides.

// family is the kind of SQL type a column has, as far as R2RML's natural mapping
// (R2RML §10.2) cares.
type family int

const (
	famString family = iota
	// famUnknown is a result column without a type name (an expression in
	// SQLite): each value's own type decides (see valueFamily).
	famUnknown
	famInteger
	famDecimal
	famDouble
	famBoolean
	famBinary
	famDate
	famTimestamp
)

// familyOf classifies a result column by the type name its driver reports
// (database/sql's ColumnType.DatabaseTypeName: "INT4", "DECIMAL(9,6)",
// "DOUBLE PRECISION", "TINYINT", …). Names the table does not list are strings.
// BIT is a boolean, as SQL Server has it and the W3C R2RML test R2RMLTC0016d
// expects.
func familyOf(typeName string) family {
	t, _ := splitTypeName(typeName)
	switch t {
	case "":
		return famUnknown
	case "INTEGER", "INT", "INT2", "INT4", "INT8", "SMALLINT", "BIGINT", "TINYINT", "MEDIUMINT":
		return famInteger
	case "DECIMAL", "NUMERIC":
		return famDecimal
	case "DOUBLE", "DOUBLE PRECISION", "FLOAT", "FLOAT4", "FLOAT8", "REAL":
		return famDouble
	case "BOOLEAN", "BOOL", "BIT":
		return famBoolean
	case "BLOB", "BYTEA", "BINARY", "VARBINARY":
		return famBinary
	case "DATE":
		return famDate
	case "TIMESTAMP", "DATETIME":
		return famTimestamp
	}
	return famString
}

// splitTypeName splits "CHAR(15)" into "CHAR" and its first parameter, 15 (0
// when there is none).
func splitTypeName(typeName string) (string, int) {
	t := strings.ToUpper(strings.TrimSpace(typeName))
	n := 0
	if i := strings.IndexByte(t, '('); i >= 0 {
		args := strings.TrimSuffix(t[i+1:], ")")
		first, _, _ := strings.Cut(args, ",")
		n, _ = strconv.Atoi(strings.TrimSpace(first))
		t = strings.TrimSpace(t[:i])
	}
	return strings.TrimPrefix(t, "UNSIGNED "), n
}

// charLength is the length a CHAR(n) column pads its values to, or 0. SQL
// pads fixed-length strings with spaces (SQL:2008 §4.2.2); SQLite keeps values
// as written, so the materialiser pads them as the W3C R2RML test R2RMLTC0018a
// expects. Servers that pad report no length, or pad themselves.
func charLength(typeName string) int {
	t, n := splitTypeName(typeName)
	if t == "CHAR" || t == "CHARACTER" {
		return n
	}
	return 0
}

// valueFamily is the family of a value from a column without a type name.
func valueFamily(v any) family {
	switch v.(type) {
	case int64:
		return famInteger
	case float64:
		return famDouble
	case bool:
		return famBoolean
	case []byte:
		return famBinary
	case time.Time:
		return famTimestamp
	}
	return famString
}

// datatype is the natural RDF datatype of a family (R2RML §10.2).
func (f family) datatype() rdf.IRI {
	switch f {
	case famInteger:
		return rdf.XSDInteger
	case famDecimal:
		return rdf.XSDDecimal
	case famDouble:
		return rdf.XSDDouble
	case famBoolean:
		return rdf.XSDBoolean
	case famBinary:
		return rdf.XSDHexBin
	case famDate:
		return rdf.XSDDate
	case famTimestamp:
		return rdf.XSDDateTime
	}
	return rdf.XSDString
}

// lexical is the natural lexical form of a non-NULL SQL value of family f: the
// canonical form of the XSD value (R2RML §10.2). v is whatever the driver
// returned: int64, float64, bool, string, []byte or time.Time.
func lexical(v any, f family) (string, error) {
	if f == famUnknown {
		f = valueFamily(v)
	}
	text := func() string {
		switch x := v.(type) {
		case string:
			return x
		case []byte:
			return string(x)
		case int64:
			return strconv.FormatInt(x, 10)
		case float64:
			return strconv.FormatFloat(x, 'f', -1, 64)
		case bool:
			return strconv.FormatBool(x)
		}
		return fmt.Sprint(v)
	}
	switch f {
	case famString:
		if t, ok := v.(time.Time); ok {
			return t.Format(time.RFC3339Nano), nil
		}
		return text(), nil
	case famInteger:
		n, ok := new(big.Int).SetString(strings.TrimSpace(text()), 10)
		if !ok {
			return "", fmt.Errorf("%q is not an integer", text())
		}
		return n.String(), nil
	case famDecimal:
		return canonicalDecimal(text())
	case famDouble:
		if x, ok := v.(float64); ok {
			return canonicalDouble(x), nil
		}
		x, err := strconv.ParseFloat(strings.TrimSpace(text()), 64)
		if err != nil {
			return "", fmt.Errorf("%q is not a double: %w", text(), err)
		}
		return canonicalDouble(x), nil
	case famBoolean:
		switch strings.ToLower(text()) {
		case "1", "true", "t":
			return "true", nil
		case "0", "false", "f":
			return "false", nil
		}
		return "", fmt.Errorf("%q is not a boolean", text())
	case famBinary:
		var b []byte
		switch x := v.(type) {
		case []byte:
			b = x
		case string:
			b = []byte(x)
		default:
			return "", fmt.Errorf("a %T is not binary", v)
		}
		return strings.ToUpper(hex.EncodeToString(b)), nil
	case famDate, famTimestamp:
		t, ok := v.(time.Time)
		if !ok {
			var err error
			if t, err = parseSQLTime(text()); err != nil {
				return "", err
			}
		}
		if f == famDate {
			return t.Format("2006-01-02"), nil
		}
		// xsd:dateTime's canonical form has no fraction when the seconds are whole.
		return t.Format("2006-01-02T15:04:05.999999999"), nil
	}
	return "", fmt.Errorf("unknown type family %d", f)
}

// parseSQLTime reads a date or timestamp in the text forms the drivers return
// (MySQL's without parseTime, SQLite's stored text).
func parseSQLTime(s string) (time.Time, error) {
	for _, layout := range []string{"2006-01-02 15:04:05.999999999", "2006-01-02T15:04:05.999999999", "2006-01-02"} {
		if t, err := time.Parse(layout, strings.TrimSpace(s)); err == nil {
			return t, nil
		}
	}
	return time.Time{}, fmt.Errorf("%q is not a date or timestamp", s)
}

// canonicalDecimal writes a decimal number in XSD 1.1's canonical form: no '+',
// no leading or trailing zeros, and no fraction at all for an integer value
// ("12.50" → "12.5", "80.0" → "80", "-0.0" → "0"). XML Schema 1.1 Part 2 §3.3.3.2.
func canonicalDecimal(s string) (string, error) {
	r, ok := new(big.Rat).SetString(strings.TrimSpace(s))
	if !ok {
		return "", fmt.Errorf("%q is not a decimal number", s)
	}
	if r.IsInt() {
		return r.Num().String(), nil
	}
	// A terminating decimal fraction has at most as many fraction digits as the
	// power of ten its denominator divides; the input's length bounds that here.
	out := r.FloatString(len(s))
	return strings.TrimSuffix(strings.TrimRight(out, "0"), "."), nil
}

// canonicalDouble writes a double in XSD's canonical form: a mantissa with one
// non-zero digit before the point and at least one digit after it, then 'E' and
// the exponent ("1.98E0", "1.5E2", "0.0E0"). XML Schema 1.1 Part 2 §3.3.5.2; it is
// also the form the W3C R2RML test suite expects ("3.0E1").
func canonicalDouble(x float64) string {
	switch {
	case math.IsNaN(x):
		return "NaN"
	case math.IsInf(x, 1):
		return "INF"
	case math.IsInf(x, -1):
		return "-INF"
	case x == 0:
		if math.Signbit(x) {
			return "-0.0E0"
		}
		return "0.0E0"
	}
	s := strconv.FormatFloat(x, 'E', -1, 64) // 1.98E+00, 3E+01
	mant, exp, _ := strings.Cut(s, "E")
	if !strings.Contains(mant, ".") {
		mant += ".0"
	}
	e, _ := strconv.Atoi(exp)
	return mant + "E" + strconv.Itoa(e)
}

// IRISafe percent-encodes every character of s outside RFC 3987's iunreserved
// production (ALPHA / DIGIT / "-" / "." / "_" / "~" / ucschar), as R2RML §7.3
// requires of the column values placed into an IRI template; each byte of an
// encoded character's UTF-8 form becomes %XX.
func IRISafe(s string) string {
	var b strings.Builder
	for _, r := range s {
		if iunreserved(r) {
			b.WriteRune(r)
			continue
		}
		var buf [utf8.UTFMax]byte
		for _, c := range buf[:utf8.EncodeRune(buf[:], r)] {
			fmt.Fprintf(&b, "%%%02X", c)
		}
	}
	return b.String()
}

// iunreserved is RFC 3987 §2.2's iunreserved: unreserved ASCII or ucschar.
func iunreserved(r rune) bool {
	switch {
	case 'a' <= r && r <= 'z', 'A' <= r && r <= 'Z', '0' <= r && r <= '9',
		r == '-', r == '.', r == '_', r == '~':
		return true
	}
	for _, span := range ucschar {
		if span[0] <= r && r <= span[1] {
			return true
		}
	}
	return false
}

// ucschar lists RFC 3987 §2.2's ucschar ranges.
var ucschar = [][2]rune{
	{0xA0, 0xD7FF}, {0xF900, 0xFDCF}, {0xFDF0, 0xFFEF},
	{0x10000, 0x1FFFD}, {0x20000, 0x2FFFD}, {0x30000, 0x3FFFD},
	{0x40000, 0x4FFFD}, {0x50000, 0x5FFFD}, {0x60000, 0x6FFFD},
	{0x70000, 0x7FFFD}, {0x80000, 0x8FFFD}, {0x90000, 0x9FFFD},
	{0xA0000, 0xAFFFD}, {0xB0000, 0xBFFFD}, {0xC0000, 0xCFFFD},
	{0xD0000, 0xDFFFD}, {0xE1000, 0xEFFFD},
}
