package hostile

import (
	"fmt"
	"strings"
	"unicode/utf8"

	"veneer/conformance/differential"
)

// Literal writes v as a SPARQL string literal in double quotes
// (STRING_LITERAL2, SPARQL 1.1 Query §19.8). The double quote, the backslash,
// LF and CR, which the production excludes, become ECHARs. Without escaped
// every other character is written as it is; with escaped, every character
// outside printable ASCII becomes a UCHAR (\uXXXX or \UXXXXXXXX, §19.2).
//
// A byte that is not part of valid UTF-8 is written as that raw byte, so the
// query text is not UTF-8 either: there is no escape for a byte. The one
// exception is the three-byte form of a UTF-16 surrogate (ED A0 80 to ED BF BF,
// as WTF-8 writes it), which escaped writes as \uD800 to \uDFFF: that is how
// SPARQL's syntax can spell the code point, which no RDF literal may hold.
func Literal(v string, escaped bool) string {
	var b strings.Builder
	b.WriteByte('"')
	for len(v) > 0 {
		r, n := utf8.DecodeRuneInString(v)
		switch {
		case r == '"' || r == '\\':
			b.WriteByte('\\')
			b.WriteRune(r)
		case r == '\n':
			b.WriteString(`\n`)
		case r == '\r':
			b.WriteString(`\r`)
		case r == utf8.RuneError && n == 1:
			if s, ok := surrogate(v); ok && escaped {
				fmt.Fprintf(&b, `\u%04X`, s)
				n = 3
			} else {
				b.WriteByte(v[0])
			}
		case escaped && (r < 0x20 || r >= 0x7f):
			if r > 0xffff {
				fmt.Fprintf(&b, `\U%08X`, r)
			} else {
				fmt.Fprintf(&b, `\u%04X`, r)
			}
		default:
			b.WriteString(v[:n])
		}
		v = v[n:]
	}
	b.WriteByte('"')
	return b.String()
}

// surrogate decodes the WTF-8 form of a UTF-16 surrogate at the start of s.
func surrogate(s string) (rune, bool) {
	if len(s) < 3 || s[0] != 0xED || s[1] < 0xA0 || s[1] > 0xBF || s[2] < 0x80 || s[2] > 0xBF {
		return 0, false
	}
	return 0xD000 | rune(s[1]&0x3F)<<6 | rune(s[2]&0x3F), true
}

// IRIPart writes v as an IRI template writes a column value (R2RML §7.3): every
// character outside iunreserved percent-encoded, by differential.IRISafe, and
// every byte that is not part of valid UTF-8 as %XX too.
func IRIPart(v string) string {
	var b strings.Builder
	for len(v) > 0 {
		r, n := utf8.DecodeRuneInString(v)
		if r == utf8.RuneError && n == 1 {
			fmt.Fprintf(&b, "%%%02X", v[0])
		} else {
			b.WriteString(differential.IRISafe(v[:n]))
		}
		v = v[n:]
	}
	return b.String()
}

// regexMeta are the characters with a meaning in an XPath regular expression
// (XPath and XQuery Functions and Operators 3.1, §5.6.1, SingleCharEsc), all
// of which a backslash makes literal.
const regexMeta = `\|.-^?*+{}()[]$`

// RegexQuote returns a regular expression that matches v as it is: each
// metacharacter escaped with a backslash.
func RegexQuote(v string) string {
	var b strings.Builder
	for i := 0; i < len(v); i++ {
		if strings.IndexByte(regexMeta, v[i]) >= 0 {
			b.WriteByte('\\')
		}
		b.WriteByte(v[i])
	}
	return b.String()
}
