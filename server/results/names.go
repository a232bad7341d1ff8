package results

import (
	"fmt"
	"strings"
	"unicode/utf8"

	"veneer/catalog/rdf"
)

// isVarName reports whether s matches VARNAME of SPARQL 1.1 Query §19.8:
//
//	[166] VARNAME ::= ( PN_CHARS_U | [0-9] ) ( PN_CHARS_U | [0-9] | #x00B7 | [#x0300-#x036F] | [#x203F-#x2040] )*
func isVarName(s string) bool {
	if s == "" || !utf8.ValidString(s) {
		return false
	}
	for i, r := range s {
		switch {
		case rdf.IsPNCharsU(r) || isDigit(r):
		case i > 0 && (r == 0xB7 || 0x300 <= r && r <= 0x36F || 0x203F <= r && r <= 0x2040):
		default:
			return false
		}
	}
	return true
}

func isDigit(r rune) bool { return '0' <= r && r <= '9' }

func isASCIIAlnum(c byte) bool {
	return 'a' <= c && c <= 'z' || 'A' <= c && c <= 'Z' || '0' <= c && c <= '9'
}

// isLangTag reports whether s matches LANGTAG of N-Triples and Turtle
// (RDF 1.1 Turtle §6.5 [144s], without the '@'):
//
//	LANGTAG ::= '@' [a-zA-Z]+ ('-' [a-zA-Z0-9]+)*
func isLangTag(s string) bool {
	for i, sub := range strings.Split(s, "-") {
		if sub == "" {
			return false
		}
		for j := 0; j < len(sub); j++ {
			c := sub[j]
			if !isASCIIAlnum(c) || i == 0 && isDigit(rune(c)) {
				return false
			}
		}
	}
	return true
}

// appendBlankLabel appends "_:" and a label for the blank node that fits
// BLANK_NODE_LABEL of N-Triples and Turtle (RDF 1.1 Turtle §6.5 [141s]):
//
//	BLANK_NODE_LABEL ::= '_:' (PN_CHARS_U | [0-9]) ((PN_CHARS | '.')* PN_CHARS)?
//
// Blank node labels are local to a document (RDF 1.1 Concepts §3.4), so a
// writer may rename blank nodes as long as it does so consistently and never
// gives two nodes the same name. Labels made of ASCII letters and digits, and
// '-' after the first byte, are kept; any other byte becomes '_' and two hex
// digits, which keeps the renaming one-to-one, and the empty label becomes "_".
// label must be valid UTF-8.
func appendBlankLabel(dst []byte, label string) []byte {
	const hex = "0123456789abcdef"
	dst = append(dst, "_:"...)
	if label == "" {
		return append(dst, '_')
	}
	for i := 0; i < len(label); i++ {
		c := label[i]
		if isASCIIAlnum(c) || c == '-' && i > 0 {
			dst = append(dst, c)
		} else {
			dst = append(dst, '_', hex[c>>4], hex[c&0xf])
		}
	}
	return dst
}

// text is the text a writer escapes: a string, or the bytes of a view.
type text interface{ string | []byte }

// decodeRune is utf8.DecodeRuneInString or utf8.DecodeRune, for either kind
// of text.
func decodeRune[T text](s T) (rune, int) {
	switch s := any(s).(type) {
	case string:
		return utf8.DecodeRuneInString(s)
	case []byte:
		return utf8.DecodeRune(s)
	}
	panic("unreachable")
}

// checkUTF8 reports where s stops being UTF-8. Every format here is Unicode
// text, and a replacement character would change the term.
func checkUTF8[T text](s T) error {
	i := 0
	for i < len(s) && s[i] < utf8.RuneSelf {
		i++ // the ASCII most text is
	}
	for i < len(s) {
		r, size := decodeRune(s[i:])
		if r == utf8.RuneError && size == 1 {
			return fmt.Errorf("invalid UTF-8 at byte %d", i)
		}
		i += size
	}
	return nil
}
