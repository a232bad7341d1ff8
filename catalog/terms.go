package catalog

import (
	"bytes"
	"encoding/hex"
	"fmt"
	"math"
	"math/big"
	"slices"
	"strconv"
	"strings"
	"time"

	"veneer/catalog/rdf"
	"veneer/catalog/source"
)

// iriSafe reports whether b may stand unencoded in an IRI built from a template: the
// iunreserved characters of RFC 3987 (R2RML §7.3). Bytes of multi-byte UTF-8
// sequences are kept too: ucschar is iunreserved.
func iriSafe(b byte) bool {
	return 'a' <= b && b <= 'z' || 'A' <= b && b <= 'Z' || '0' <= b && b <= '9' ||
		b == '-' || b == '.' || b == '_' || b == '~' || b >= 0x80
}

// IRISafe percent-encodes every character of s that is not iunreserved, as R2RML
// §7.3 requires for column values placed into IRI templates.
func IRISafe(s string) string {
	safe := 0
	for safe < len(s) && iriSafe(s[safe]) {
		safe++
	}
	if safe == len(s) {
		return s // nothing to encode, as with most keys
	}
	return string(AppendIRISafe(make([]byte, 0, len(s)+8), s))
}

// AppendIRISafe appends s to dst, IRI-safe encoded as IRISafe does.
func AppendIRISafe[T ~string | ~[]byte](dst []byte, s T) []byte {
	const hexDigits = "0123456789ABCDEF"
	start := 0
	for i := 0; i < len(s); i++ {
		c := s[i]
		if iriSafe(c) {
			continue
		}
		dst = append(dst, s[start:i]...)
		dst = append(dst, '%', hexDigits[c>>4], hexDigits[c&15])
		start = i + 1
	}
	return append(dst, s[start:]...)
}

// unIRISafe reverses IRISafe. It fails when s could not have come from IRISafe: a
// character IRISafe would have encoded, or a malformed escape.
func unIRISafe(s string) (string, bool) {
	var b strings.Builder
	for i := 0; i < len(s); i++ {
		c := s[i]
		if c == '%' {
			if i+2 >= len(s) {
				return "", false
			}
			v, err := strconv.ParseUint(s[i+1:i+3], 16, 8)
			if err != nil || iriSafe(byte(v)) {
				return "", false
			}
			b.WriteByte(byte(v))
			i += 2
			continue
		}
		if !iriSafe(c) {
			return "", false
		}
		b.WriteByte(c)
	}
	return b.String(), true
}

// AppendExpand appends the template filled in to dst: value appends the text
// of column k of Columns(). With iri set, the values are IRI-safe encoded
// (R2RML §7.3); scratch is room for a value before it is encoded, returned
// grown.
func (t Template) AppendExpand(dst, scratch []byte, iri bool, value func(dst []byte, k int) []byte) ([]byte, []byte) {
	var room [8]string
	cols := room[:0] // Columns(), as they come
	for _, p := range t.Parts {
		if p.Column == "" {
			dst = append(dst, p.Text...)
			continue
		}
		k := slices.Index(cols, p.Column)
		if k < 0 {
			k, cols = len(cols), append(cols, p.Column)
		}
		if iri {
			scratch = value(scratch[:0], k)
			dst = AppendIRISafe(dst, scratch)
		} else {
			dst = value(dst, k)
		}
	}
	return dst, scratch
}

// CheckIRI reports why no IRI the template expands to can be valid, or nil. An
// IRI-valued template gives a valid IRI either as it is or with the base IRI
// put before it (R2RML §11), so only its literal text can make every IRI
// invalid: a character no IRI may contain (RFC 3987 §2.2), a '%' not followed
// by two hexadecimal digits, or a second '#'. Column values cannot repair these:
// IRI-safe encoding (§7.3) leaves no such character in them, though the hex
// digits a value starts with may complete a '%' just before its column.
func (t Template) CheckIRI() error {
	hashes := 0
	for i, p := range t.Parts {
		if p.Column != "" {
			continue
		}
		beforeColumn := i+1 < len(t.Parts)
		for j, r := range p.Text {
			switch {
			case !iriChar(r):
				return fmt.Errorf("the template's text has %q, which no IRI may contain (write it percent-encoded: %s)", r, IRISafe(string(r)))
			case r == '#':
				if hashes++; hashes > 1 {
					return fmt.Errorf("the template's text has a second '#': an IRI has at most one fragment")
				}
			case r == '%':
				rest := p.Text[j+1:]
				for k := 0; k < 2; k++ {
					switch {
					case k < len(rest) && !isHexDigit(rest[k]):
						return fmt.Errorf("the template's text has a '%%' not followed by two hexadecimal digits (write a '%%' itself as %%25)")
					case k >= len(rest) && !beforeColumn:
						return fmt.Errorf("the template ends in an incomplete percent-encoding (write a '%%' itself as %%25)")
					}
				}
			}
		}
	}
	return nil
}

func isHexDigit(c byte) bool {
	return '0' <= c && c <= '9' || 'a' <= c && c <= 'f' || 'A' <= c && c <= 'F'
}

// Match decodes s, a string the template may have produced, back into the values
// of its columns. It reports false when the template cannot produce s. With iri set
// the values are percent-decoded, and a value IRISafe would not have produced is no
// match. When adjacent column references leave the split ambiguous, Match takes the
// shortest value for the earlier column; callers that need every split use the
// template's shape instead (see SameShape).
func (t Template) Match(s string, iri bool) (map[string]string, bool) {
	values := map[string]string{}
	rest := s
	for i, p := range t.Parts {
		if p.Column == "" {
			if !strings.HasPrefix(rest, p.Text) {
				return nil, false
			}
			rest = rest[len(p.Text):]
			continue
		}
		var raw string
		if i+1 == len(t.Parts) {
			raw, rest = rest, ""
		} else {
			next := t.Parts[i+1]
			if next.Column != "" {
				return nil, false
			}
			j := strings.Index(rest, next.Text)
			if j < 0 {
				return nil, false
			}
			raw, rest = rest[:j], rest[j:]
		}
		v := raw
		if iri {
			var ok bool
			if v, ok = unIRISafe(raw); !ok {
				return nil, false
			}
		}
		if old, seen := values[p.Column]; seen && old != v {
			return nil, false
		}
		values[p.Column] = v
	}
	if rest != "" {
		return nil, false
	}
	return values, true
}

// SameShape reports whether two templates have the same literal text in the same
// places, so that they produce equal strings exactly when their column values are
// equal position by position (given values that cannot contain the text between
// columns, which IRI-safe encoding guarantees for reserved characters).
func SameShape(a, b Template) bool {
	if len(a.Parts) != len(b.Parts) {
		return false
	}
	for i := range a.Parts {
		pa, pb := a.Parts[i], b.Parts[i]
		if (pa.Column == "") != (pb.Column == "") || pa.Text != pb.Text {
			return false
		}
	}
	return true
}

// NaturalDatatype is the natural RDF datatype of an SQL type family (R2RML §10.2);
// empty for families that map to plain strings.
func NaturalDatatype(kind source.TypeKind) rdf.IRI {
	switch kind {
	case source.TypeInteger:
		return rdf.XSDInteger
	case source.TypeDecimal:
		return rdf.XSDDecimal
	case source.TypeFloat, source.TypeReal:
		return rdf.XSDDouble
	case source.TypeBoolean:
		return rdf.XSDBoolean
	case source.TypeBinary:
		return rdf.XSDHexBin
	case source.TypeDate:
		return rdf.XSDDate
	case source.TypeTime:
		return rdf.XSDTime
	case source.TypeTimestamp, source.TypeTimestampTZ:
		return rdf.XSDDateTime
	}
	return ""
}

// Lexical returns the canonical lexical form of an SQL value for the type family
// of the column it came from, following R2RML §10.2 and the XML Schema canonical
// representations. v must not be nil. The value may arrive as any of the Go types
// drivers use: a column read through a UNION or an expression can lose its declared
// type on the way (SQLite types values, not columns), so the family decides, not
// the Go type.
func Lexical(v any, kind source.TypeKind) string {
	switch kind {
	case source.TypeInteger:
		switch x := v.(type) {
		case int64:
			return strconv.FormatInt(x, 10)
		case float64:
			if x == math.Trunc(x) && math.Abs(x) < 1<<53 {
				return strconv.FormatInt(int64(x), 10)
			}
		}
		return canonicalDecimal(plain(v))
	case source.TypeDecimal:
		if f, ok := v.(float64); ok {
			return canonicalDecimal(strconv.FormatFloat(f, 'f', -1, 64))
		}
		return canonicalDecimal(plain(v))
	case source.TypeFloat, source.TypeReal:
		bits := 64
		if kind == source.TypeReal {
			// A float32 widened on its way (a union column, a driver) is
			// written with the digits the float32 itself needs: 70.22, not
			// 70.22000122070312.
			bits = 32
		}
		switch x := v.(type) {
		case float64:
			return CanonicalDouble(x, bits)
		case int64:
			return CanonicalDouble(float64(x), bits)
		}
		if f, err := strconv.ParseFloat(plain(v), 64); err == nil {
			return CanonicalDouble(f, bits)
		}
	case source.TypeBoolean:
		switch x := v.(type) {
		case bool:
			return strconv.FormatBool(x)
		case int64:
			return strconv.FormatBool(x != 0)
		}
		switch s := strings.ToLower(plain(v)); s {
		case "1", "true", "t", "\x01":
			return "true"
		case "0", "false", "f", "\x00":
			// "\x00" and "\x01": MySQL's BIT(1), read through a union or a
			// derived table, arrives as one raw byte.
			return "false"
		}
	case source.TypeBinary:
		switch x := v.(type) {
		case []byte:
			return strings.ToUpper(hex.EncodeToString(x))
		case string:
			return strings.ToUpper(hex.EncodeToString([]byte(x)))
		}
	case source.TypeDate, source.TypeTimestamp, source.TypeTimestampTZ:
		if t, ok := v.(time.Time); ok {
			return timeLexical(t, kind)
		}
		text := plain(v)
		if lex, ok := plainTimestamp(text, kind); ok {
			return lex
		}
		if t, ok := parseSQLTime(text); ok {
			return timeLexical(t, kind)
		}
	}
	return plain(v)
}

// plain is the text of a value with no type family to honour.
func plain(v any) string {
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
	case time.Time:
		return x.Format(time.RFC3339Nano)
	}
	return fmt.Sprint(v)
}

// plainTimestamp is the fast path for the text SQLite keeps most timestamps
// in, "YYYY-MM-DD HH:MM:SS" (or with a T): already canonical but for the T, so
// it needs no parsing. Other forms report false.
func plainTimestamp(s string, kind source.TypeKind) (string, bool) {
	if kind != source.TypeTimestamp || len(s) != 19 || (s[10] != ' ' && s[10] != 'T') {
		return "", false
	}
	for i := 0; i < len(s); i++ {
		switch i {
		case 4, 7:
			if s[i] != '-' {
				return "", false
			}
		case 13, 16:
			if s[i] != ':' {
				return "", false
			}
		case 10:
		default:
			if s[i] < '0' || s[i] > '9' {
				return "", false
			}
		}
	}
	return s[:10] + "T" + s[11:], true
}

// parseSQLTime reads the text forms databases use for dates and timestamps.
func parseSQLTime(s string) (time.Time, bool) {
	for _, layout := range []string{"2006-01-02", "2006-01-02 15:04:05.999999999", "2006-01-02T15:04:05.999999999",
		"2006-01-02 15:04:05.999999999Z07:00", time.RFC3339Nano} {
		if t, err := time.Parse(layout, s); err == nil {
			return t, true
		}
	}
	return time.Time{}, false
}

// canonicalDecimal rewrites decimal digits into the XSD canonical form: no leading
// '+', no superfluous leading or trailing zeros, and no fraction when the value is
// an integer ("12.50" → "12.5", "3.00" → "3", "-0.0" → "0").
func canonicalDecimal(s string) string {
	r, ok := new(big.Rat).SetString(s)
	if !ok {
		return s
	}
	if r.IsInt() {
		return r.Num().String()
	}
	out := r.FloatString(len(s))
	out = strings.TrimRight(out, "0")
	return strings.TrimSuffix(out, ".")
}

// appendTextDecimal appends the form canonicalDecimal gives the decimal
// text "[+-]digits[.digits]", working on the digits alone; it reports false
// for any other text.
func appendTextDecimal(dst, text []byte) ([]byte, bool) {
	neg := false
	if len(text) > 0 && (text[0] == '-' || text[0] == '+') {
		neg, text = text[0] == '-', text[1:]
	}
	whole, frac := text, text[len(text):]
	if i := bytes.IndexByte(text, '.'); i >= 0 {
		whole, frac = text[:i], text[i+1:]
	}
	if len(whole)+len(frac) == 0 || !digitsOnly(whole) || !digitsOnly(frac) {
		return dst, false
	}
	whole = bytes.TrimLeft(whole, "0")
	frac = bytes.TrimRight(frac, "0")
	if len(whole) == 0 && len(frac) == 0 {
		return append(dst, '0'), true // zero has no sign
	}
	if neg {
		dst = append(dst, '-')
	}
	if len(whole) == 0 {
		dst = append(dst, '0')
	}
	dst = append(dst, whole...)
	if len(frac) > 0 {
		dst = append(dst, '.')
		dst = append(dst, frac...)
	}
	return dst, true
}

// CanonicalDouble writes f in the XSD canonical form for xsd:double: a mantissa
// with one digit before the point and at least one after, and an exponent
// ("1.5E2", "0.0E0", "INF", "NaN").
//
// bits is 32 for a value that is a float32's: the shortest digits that read
// back as that float32 are written.
func CanonicalDouble(f float64, bits int) string {
	switch {
	case math.IsNaN(f):
		return "NaN"
	case math.IsInf(f, 1):
		return "INF"
	case math.IsInf(f, -1):
		return "-INF"
	case f == 0:
		if math.Signbit(f) {
			return "-0.0E0"
		}
		return "0.0E0"
	}
	if bits == 32 {
		f = float64(float32(f))
	}
	s := strconv.FormatFloat(f, 'E', -1, bits) // e.g. 1.5E+02, 1E+00
	mant, exp, _ := strings.Cut(s, "E")
	if !strings.Contains(mant, ".") {
		mant += ".0"
	}
	e, _ := strconv.Atoi(exp)
	return mant + "E" + strconv.Itoa(e)
}

func timeLexical(t time.Time, kind source.TypeKind) string { return t.Format(timeLayout(kind)) }

// timeLayout is the layout of the canonical lexical form of a date or
// timestamp of the given kind.
func timeLayout(kind source.TypeKind) string {
	switch kind {
	case source.TypeDate:
		return "2006-01-02"
	case source.TypeTimestampTZ:
		return "2006-01-02T15:04:05.999999999Z07:00"
	}
	return "2006-01-02T15:04:05.999999999"
}

// AppendLexical appends Lexical(v, kind) to dst; the values of large answers
// (integers, strings, timestamps) are written without a string of their own.
func AppendLexical(dst []byte, v any, kind source.TypeKind) []byte {
	switch x := v.(type) {
	case int64:
		if kind == source.TypeInteger {
			return strconv.AppendInt(dst, x, 10)
		}
	case string:
		if kind == source.TypeString {
			return append(dst, x...)
		}
	case time.Time:
		switch kind {
		case source.TypeDate, source.TypeTimestamp, source.TypeTimestampTZ:
			return x.AppendFormat(dst, timeLayout(kind))
		}
	}
	return append(dst, Lexical(v, kind)...)
}

// AppendTextLexical appends the canonical lexical form of a value that a
// source handed out as text in the plain form of its kind (source.TextRows):
// strings and integers are their own lexical form, and a timestamp
// "YYYY-MM-DD HH:MM:SS[.fraction]" takes a T and loses the trailing zeros of
// its fraction, as Lexical writes it; a decimal "[-]digits[.digits]" loses
// its leading and trailing zeros, and the point when no digit follows it, as
// canonicalDecimal writes it. For other kinds it reports false.
func AppendTextLexical(dst, text []byte, kind source.TypeKind) ([]byte, bool) {
	switch kind {
	case source.TypeString, source.TypeInteger:
		return append(dst, text...), true
	case source.TypeDecimal:
		return appendTextDecimal(dst, text)
	case source.TypeTimestamp:
		const clock = len("2006-01-02 15:04:05")
		if len(text) < clock {
			return dst, false
		}
		dst = append(dst, text[:10]...)
		dst = append(dst, 'T')
		dst = append(dst, text[11:clock]...)
		frac := text[clock:]
		for len(frac) > 0 && frac[len(frac)-1] == '0' {
			frac = frac[:len(frac)-1]
		}
		if len(frac) > 1 { // more than the point
			dst = append(dst, frac...)
		}
		return dst, true
	}
	return dst, false
}

// NaturalLiteral returns the natural RDF literal of a normalised SQL value (R2RML
// §10.2). v must not be nil.
func NaturalLiteral(v any, kind source.TypeKind) rdf.Literal {
	dt := NaturalDatatype(kind)
	if dt == "" {
		dt = rdf.XSDString
	}
	return rdf.NewTyped(Lexical(v, kind), dt)
}

// ParseLexical is the inverse of Lexical: it returns the normalised SQL value whose
// canonical lexical form for kind is exactly lexical, and false when there is none
// (a non-canonical or ill-formed lexical form cannot come from the column).
func ParseLexical(lexical string, kind source.TypeKind) (any, bool) {
	var v any
	switch kind {
	case source.TypeInteger:
		n, err := strconv.ParseInt(lexical, 10, 64)
		if err != nil {
			return nil, false
		}
		v = n
	case source.TypeFloat, source.TypeReal:
		f, err := strconv.ParseFloat(lexical, 64)
		if err != nil {
			return nil, false
		}
		v = f
	case source.TypeBoolean:
		b, err := strconv.ParseBool(lexical)
		if err != nil {
			return nil, false
		}
		v = b
	case source.TypeBinary:
		b, err := hex.DecodeString(lexical)
		if err != nil {
			return nil, false
		}
		v = b
	case source.TypeDecimal:
		// canonicalDecimal leaves text that is not a number as it is, which
		// the round trip below would take for canonical.
		if _, ok := new(big.Rat).SetString(lexical); !ok {
			return nil, false
		}
		v = lexical
	case source.TypeDate, source.TypeTimestamp, source.TypeTimestampTZ:
		layout := map[source.TypeKind]string{
			source.TypeDate:        "2006-01-02",
			source.TypeTimestamp:   "2006-01-02T15:04:05.999999999",
			source.TypeTimestampTZ: time.RFC3339Nano,
		}[kind]
		t, err := time.Parse(layout, lexical)
		if err != nil {
			return nil, false
		}
		v = t
	default:
		v = lexical
	}
	if Lexical(v, kind) != lexical {
		return nil, false
	}
	return v, true
}

// MakeIRI turns the string an IRI-valued term map produced into its IRI (R2RML
// §11): an absolute IRI stays as it is, anything else is appended to the map's
// base IRI; a result that is not a valid IRI is a data error.
func (m TermMap) MakeIRI(s string) (rdf.IRI, error) {
	iri := s
	if !rdf.IsAbsoluteIRI(s) {
		iri = m.Base + s
	}
	if !rdf.IsAbsoluteIRI(iri) || !validIRIChars(iri) {
		return "", fmt.Errorf("data error: %q is not a valid IRI (R2RML §11)", iri)
	}
	return rdf.IRI(iri), nil
}

// Unbase returns the strings a term map may have produced for iri: the IRI
// itself, and without the map's base when iri starts with it.
func (m TermMap) Unbase(iri string) []string {
	out := []string{iri}
	if m.Base != "" && strings.HasPrefix(iri, m.Base) {
		if rest := iri[len(m.Base):]; !rdf.IsAbsoluteIRI(rest) {
			out = append(out, rest)
		}
	}
	return out
}

// validIRIChars reports whether s holds only characters an IRI may contain.
func validIRIChars(s string) bool {
	for _, r := range s {
		if !iriChar(r) {
			return false
		}
	}
	return true
}

// iriChar reports whether r may stand in an IRI (RFC 3987: no spaces,
// controls, or <>"{}|\^`).
func iriChar(r rune) bool { return r != 0x7f && rdf.IsIRIChar(r) }
