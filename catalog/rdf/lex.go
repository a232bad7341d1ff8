package rdf

import (
	"fmt"
	"strings"
	"unicode/utf8"
)

// itemType identifies the kind of a lexical item of Turtle, N-Triples or N-Quads.
type itemType int

const (
	itemError      itemType = iota // a lexical error; val is the message
	itemEOF                        // end of input
	itemIRI                        // IRIREF: val is the IRI reference with UCHARs decoded
	itemPName                      // PNAME_NS or PNAME_LN: val is the prefix, local the decoded local part
	itemBlankLabel                 // BLANK_NODE_LABEL: val is the label
	itemLangTag                    // LANGTAG (and the @prefix, @base keywords): val without '@'
	itemString                     // a string literal: val is the decoded text, quote the delimiter
	itemInteger                    // INTEGER: val is the lexical form
	itemDecimal                    // DECIMAL
	itemDouble                     // DOUBLE
	itemWord                       // a bare word: a, true, false, PREFIX, BASE
	itemDot                        // .
	itemSemicolon                  // ;
	itemComma                      // ,
	itemLBracket                   // [
	itemRBracket                   // ]
	itemLParen                     // (
	itemRParen                     // )
	itemCaretCaret                 // ^^
)

// item is one lexical item. pos is the byte offset of its first character.
type item struct {
	typ   itemType
	pos   int
	val   string
	local string // itemPName: the local part
	quote string // itemString: `"`, `'`, `"""` or `'''`
}

// describe names the item for error messages: "expected X, found <describe>".
func (i item) describe() string {
	switch i.typ {
	case itemEOF:
		return "end of input"
	case itemIRI:
		return "IRI <" + i.val + ">"
	case itemPName:
		return "prefixed name " + i.val + ":" + i.local
	case itemBlankLabel:
		return "blank node _:" + i.val
	case itemLangTag:
		return "@" + i.val
	case itemString:
		return "string literal"
	case itemInteger, itemDecimal, itemDouble:
		return "number " + i.val
	case itemWord:
		return "'" + i.val + "'"
	case itemCaretCaret:
		return "'^^'"
	}
	return "'" + i.val + "'"
}

const eof = -1

// stateFn is one state of the lexer; it returns the next state.
type stateFn func(*lexer) stateFn

// lexer turns source text into items; the text must be valid UTF-8. It runs synchronously: nextItem runs state
// functions until one of them emits an item.
type lexer struct {
	src   []byte
	start int // start of the item being lexed
	pos   int // current position
	width int // width of the last rune read
	state stateFn
	item  item
	ready bool
	// sb collects the decoded value of strings, IRIs and local names.
	sb strings.Builder
}

func newLexer(src []byte) *lexer {
	return &lexer{src: src, state: lexSpace}
}

// nextItem returns the next item. After an error or the end of input it keeps
// returning that item.
func (l *lexer) nextItem() item {
	for !l.ready {
		l.state = l.state(l)
	}
	it := l.item
	if it.typ != itemEOF && it.typ != itemError {
		l.ready = false
	}
	return it
}

// restart makes the lexer continue at byte offset pos, dropping any error.
func (l *lexer) restart(pos int) {
	l.pos, l.start, l.ready, l.state = pos, pos, false, lexSpace
}

func (l *lexer) next() rune {
	if l.pos >= len(l.src) {
		l.width = 0
		return eof
	}
	r, w := utf8.DecodeRune(l.src[l.pos:])
	l.width = w
	l.pos += w
	return r
}

func (l *lexer) backup() { l.pos -= l.width }

func (l *lexer) peek() rune {
	r := l.next()
	l.backup()
	return r
}

// peekAt returns the byte at offset k from the current position, or 0 past the end.
func (l *lexer) peekAt(k int) byte {
	if l.pos+k < len(l.src) {
		return l.src[l.pos+k]
	}
	return 0
}

func (l *lexer) emit(t itemType, val string) stateFn {
	l.item = item{typ: t, pos: l.start, val: val}
	l.ready = true
	return lexSpace
}

// errorf emits an error item at offset pos and stops the lexer.
func (l *lexer) errorf(pos int, format string, args ...any) stateFn {
	l.item = item{typ: itemError, pos: pos, val: fmt.Sprintf(format, args...)}
	l.ready = true
	return nil
}

// lexSpace skips white space and comments, then dispatches on the next character.
func lexSpace(l *lexer) stateFn {
	for {
		r := l.next()
		switch {
		case r == ' ' || r == '\t' || r == '\n' || r == '\r':
			continue
		case r == '#':
			for r != '\n' && r != '\r' && r != eof {
				r = l.next()
			}
			continue
		}
		l.backup()
		break
	}
	l.start = l.pos
	r := l.next()
	switch {
	case r == eof:
		l.item = item{typ: itemEOF, pos: l.pos}
		l.ready = true
		return lexSpace
	case r == '<':
		return lexIRI
	case r == '"' || r == '\'':
		return lexString
	case r == '_':
		return lexBlankLabel
	case r == '@':
		return lexLangTag
	case r == '+' || r == '-' || isDigit(r):
		l.backup()
		return lexNumber
	case r == '.':
		if isDigit(rune(l.peekAt(0))) {
			l.backup()
			return lexNumber
		}
		return l.emit(itemDot, ".")
	case r == ';':
		return l.emit(itemSemicolon, ";")
	case r == ',':
		return l.emit(itemComma, ",")
	case r == '[':
		return l.emit(itemLBracket, "[")
	case r == ']':
		return l.emit(itemRBracket, "]")
	case r == '(':
		return l.emit(itemLParen, "(")
	case r == ')':
		return l.emit(itemRParen, ")")
	case r == '^':
		if l.next() != '^' {
			return l.errorf(l.start, "expected '^^' before a datatype IRI")
		}
		return l.emit(itemCaretCaret, "^^")
	case r == ':' || IsPNCharsBase(r):
		l.backup()
		return lexName
	}
	return l.errorf(l.start, "unexpected character %q", r)
}

// lexIRI scans the rest of an IRIREF after '<':
//
//	IRIREF ::= '<' ([^#x00-#x20<>"{}|^`\] | UCHAR)* '>'
func lexIRI(l *lexer) stateFn {
	l.sb.Reset()
	for {
		at := l.pos
		r := l.next()
		switch {
		case r == '>':
			return l.emit(itemIRI, l.sb.String())
		case r == eof:
			return l.errorf(l.start, "unterminated IRI: expected '>'")
		case r == '\\':
			u, msg := l.uchar()
			if msg != "" {
				return l.errorf(at, "%s", msg)
			}
			if !IsIRIChar(u) {
				return l.errorf(at, "escape for character %q, which is not allowed in an IRI", u)
			}
			l.sb.WriteRune(u)
		case !IsIRIChar(r):
			return l.errorf(at, "character %q is not allowed in an IRI", r)
		default:
			l.sb.WriteRune(r)
		}
	}
}

// IsIRIChar reports whether r may appear in an IRIREF, directly or escaped. The
// grammar's UCHAR allows any escape, but the W3C Turtle suite rejects escapes of
// characters that may not appear in an IRI (turtle-syntax-bad-uri-escape-01..03).
func IsIRIChar(r rune) bool { return r > 0x20 && !strings.ContainsRune("<>\"{}|^`\\", r) }

// uchar reads the rest of a UCHAR after the backslash; it returns a message
// instead of a rune when the escape is malformed.
//
//	UCHAR ::= '\u' HEX HEX HEX HEX | '\U' HEX HEX HEX HEX HEX HEX HEX HEX
func (l *lexer) uchar() (rune, string) {
	var n int
	switch l.next() {
	case 'u':
		n = 4
	case 'U':
		n = 8
	default:
		l.backup()
		return 0, `expected \u or \U escape`
	}
	var v rune
	for range n {
		d := hexValue(l.next())
		if d < 0 {
			l.backup()
			return 0, fmt.Sprintf("expected %d hex digits in escape", n)
		}
		v = v<<4 | rune(d)
	}
	if !utf8.ValidRune(v) {
		return 0, fmt.Sprintf("escape U+%04X is not a Unicode scalar value", v)
	}
	return v, ""
}

// lexString scans a string literal; the opening quote has been read.
//
//	STRING_LITERAL_QUOTE             ::= '"' ([^#x22#x5C#xA#xD] | ECHAR | UCHAR)* '"'
//	STRING_LITERAL_SINGLE_QUOTE      ::= "'" ([^#x27#x5C#xA#xD] | ECHAR | UCHAR)* "'"
//	STRING_LITERAL_LONG_SINGLE_QUOTE ::= "'''" (("'" | "''")? ([^'\] | ECHAR | UCHAR))* "'''"
//	STRING_LITERAL_LONG_QUOTE        ::= '"""' (('"' | '""')? ([^"\] | ECHAR | UCHAR))* '"""'
//	ECHAR                            ::= '\' [tbnrf"'\]
func lexString(l *lexer) stateFn {
	q := l.src[l.start]
	long := l.peekAt(0) == q && l.peekAt(1) == q
	quote := string(q)
	if long {
		l.pos += 2
		quote = strings.Repeat(quote, 3)
	}
	l.sb.Reset()
	for {
		at := l.pos
		r := l.next()
		switch {
		case r == eof:
			return l.errorf(l.start, "unterminated string: expected closing %s", quote)
		case r == rune(q) && !long:
			return l.emitString(quote)
		case r == rune(q) && l.peekAt(0) == q && l.peekAt(1) == q:
			l.pos += 2
			return l.emitString(quote)
		case (r == '\n' || r == '\r') && !long:
			return l.errorf(at, `line break in a string: write \n, or use a long string (%s)`, strings.Repeat(quote, 3))
		case r == '\\':
			if u, ok := EscapedChar(l.peek()); ok {
				l.next()
				l.sb.WriteByte(u)
				continue
			}
			u, msg := l.uchar()
			if msg != "" {
				return l.errorf(at, `invalid escape: expected one of \t \b \n \r \f \" \' \\ \uXXXX \UXXXXXXXX`)
			}
			l.sb.WriteRune(u)
		default:
			l.sb.WriteRune(r)
		}
	}
}

func (l *lexer) emitString(quote string) stateFn {
	l.emit(itemString, l.sb.String())
	l.item.quote = quote
	return lexSpace
}

// EscapedChar implements ECHAR of Turtle and SPARQL (RDF 1.1 Turtle §6.5
// [159s], SPARQL 1.1 Query §19.8 [160]): the character that r stands for
// after a backslash in a string, and whether r may follow one there.
//
//	ECHAR ::= '\' [tbnrf"'\]
func EscapedChar(r rune) (byte, bool) {
	switch r {
	case 't':
		return '\t', true
	case 'b':
		return '\b', true
	case 'n':
		return '\n', true
	case 'r':
		return '\r', true
	case 'f':
		return '\f', true
	case '"', '\'', '\\':
		return byte(r), true
	}
	return 0, false
}

// lexBlankLabel scans a blank node label; the '_' has been read.
//
//	BLANK_NODE_LABEL ::= '_:' (PN_CHARS_U | [0-9]) ((PN_CHARS | '.')* PN_CHARS)?
func lexBlankLabel(l *lexer) stateFn {
	if l.next() != ':' {
		return l.errorf(l.start, "expected ':' after '_' in a blank node label")
	}
	if r := l.next(); !IsPNCharsU(r) && !isDigit(r) {
		return l.errorf(l.start, "expected a letter, digit or '_' after '_:'")
	}
	end := l.pos
	for {
		r := l.next()
		if r == '.' {
			continue
		}
		if !IsPNChars(r) {
			break
		}
		end = l.pos
	}
	l.pos = end
	return l.emit(itemBlankLabel, string(l.src[l.start+2:end]))
}

// lexLangTag scans a language tag (or @prefix, @base); the '@' has been read.
//
//	LANGTAG ::= '@' [a-zA-Z]+ ('-' [a-zA-Z0-9]+)*
func lexLangTag(l *lexer) stateFn {
	if !isAlpha(l.peek()) {
		return l.errorf(l.start, "expected a language tag or keyword after '@'")
	}
	for isAlpha(l.peek()) {
		l.next()
	}
	for l.peek() == '-' {
		l.next()
		if !isAlnum(l.peek()) {
			return l.errorf(l.pos, "expected letters or digits after '-' in a language tag")
		}
		for isAlnum(l.peek()) {
			l.next()
		}
	}
	return l.emit(itemLangTag, string(l.src[l.start+1:l.pos]))
}

// lexNumber scans a numeric literal.
//
//	INTEGER  ::= [+-]? [0-9]+
//	DECIMAL  ::= [+-]? [0-9]* '.' [0-9]+
//	DOUBLE   ::= [+-]? ([0-9]+ '.' [0-9]* EXPONENT | '.' [0-9]+ EXPONENT | [0-9]+ EXPONENT)
//	EXPONENT ::= [eE] [+-]? [0-9]+
func lexNumber(l *lexer) stateFn {
	if r := l.peek(); r == '+' || r == '-' {
		l.next()
	}
	intDigits := l.digits()
	typ := itemInteger
	if l.peek() == '.' {
		switch next := l.peekAt(1); {
		case isDigit(rune(next)):
			l.next()
			l.digits()
			typ = itemDecimal
		case intDigits > 0 && (next == 'e' || next == 'E') && l.exponentAt(2):
			l.next()
		}
	}
	if typ == itemInteger && intDigits == 0 {
		return l.errorf(l.start, "expected digits in a number")
	}
	if r := l.peek(); r == 'e' || r == 'E' {
		if !l.exponentAt(1) {
			return l.errorf(l.start, "expected digits in the exponent of a number")
		}
		l.next()
		if r := l.peek(); r == '+' || r == '-' {
			l.next()
		}
		l.digits()
		typ = itemDouble
	}
	return l.emit(typ, string(l.src[l.start:l.pos]))
}

// digits consumes [0-9]* and returns how many it read.
func (l *lexer) digits() int {
	n := 0
	for isDigit(l.peek()) {
		l.next()
		n++
	}
	return n
}

// exponentAt reports whether "[+-]? [0-9]+" starts k bytes ahead.
func (l *lexer) exponentAt(k int) bool {
	if c := l.peekAt(k); c == '+' || c == '-' {
		k++
	}
	return isDigit(rune(l.peekAt(k)))
}

// lexName scans a prefixed name or a bare keyword.
//
//	PNAME_NS   ::= PN_PREFIX? ':'
//	PNAME_LN   ::= PNAME_NS PN_LOCAL
//	PN_PREFIX  ::= PN_CHARS_BASE ((PN_CHARS | '.')* PN_CHARS)?
func lexName(l *lexer) stateFn {
	end := l.pos
	if IsPNCharsBase(l.peek()) {
		l.next()
		end = l.pos
		for {
			r := l.next()
			if r == '.' {
				continue
			}
			if !IsPNChars(r) {
				break
			}
			end = l.pos
		}
		l.pos = end
	}
	prefix := string(l.src[l.start:end])
	if l.peek() != ':' {
		switch prefix {
		case "a", "true", "false":
			return l.emit(itemWord, prefix)
		}
		if strings.EqualFold(prefix, "prefix") || strings.EqualFold(prefix, "base") {
			return l.emit(itemWord, prefix)
		}
		return l.errorf(l.start, "unknown word %q: expected a prefixed name (prefix:name), 'a', 'true' or 'false'", prefix)
	}
	l.next()
	local, msg := l.localName()
	if msg != "" {
		return l.errorf(l.pos, "%s", msg)
	}
	l.emit(itemPName, prefix)
	l.item.local = local
	return lexSpace
}

// localName scans an optional PN_LOCAL and returns it with escapes decoded
// (percent escapes are kept as written, as the Turtle specification requires).
//
//	PN_LOCAL     ::= (PN_CHARS_U | ':' | [0-9] | PLX) ((PN_CHARS | '.' | ':' | PLX)* (PN_CHARS | ':' | PLX))?
//	PLX          ::= PERCENT | PN_LOCAL_ESC
//	PERCENT      ::= '%' HEX HEX
//	PN_LOCAL_ESC ::= '\' ('_' | '~' | '.' | '-' | '!' | '$' | '&' | "'" | '(' | ')' | '*' | '+' | ',' | ';' | '=' | '/' | '?' | '#' | '@' | '%')
func (l *lexer) localName() (string, string) {
	l.sb.Reset()
	end, endLen := l.pos, 0
	first := true
	for {
		r := l.next()
		switch {
		case r == '%':
			if hexValue(rune(l.peekAt(0))) < 0 || hexValue(rune(l.peekAt(1))) < 0 {
				return "", "expected two hex digits after '%' in a prefixed name"
			}
			l.sb.WriteByte('%')
			l.sb.Write(l.src[l.pos : l.pos+2])
			l.pos += 2
		case r == '\\':
			c := l.next()
			if c == eof || !strings.ContainsRune("_~.-!$&'()*+,;=/?#@%", c) {
				return "", `invalid escape in a prefixed name: expected '\' followed by one of _~.-!$&'()*+,;=/?#@%`
			}
			l.sb.WriteRune(c)
		case r == '.' && !first:
			l.sb.WriteByte('.')
			continue
		case r == ':' || IsPNCharsU(r) || isDigit(r) || (!first && IsPNChars(r)):
			l.sb.WriteRune(r)
		default:
			l.pos = end
			return l.sb.String()[:endLen], ""
		}
		first = false
		end, endLen = l.pos, l.sb.Len()
	}
}

func isDigit(r rune) bool { return '0' <= r && r <= '9' }

func isAlpha(r rune) bool { return 'a' <= r && r <= 'z' || 'A' <= r && r <= 'Z' }

func isAlnum(r rune) bool { return isAlpha(r) || isDigit(r) }

func hexValue(r rune) int {
	switch {
	case '0' <= r && r <= '9':
		return int(r - '0')
	case 'a' <= r && r <= 'f':
		return int(r-'a') + 10
	case 'A' <= r && r <= 'F':
		return int(r-'A') + 10
	}
	return -1
}

// IsPNCharsBase implements PN_CHARS_BASE of the Turtle grammar (RDF 1.1 Turtle
// §6.5; SPARQL 1.1 Query §19.8 defines the same class).
func IsPNCharsBase(r rune) bool {
	switch {
	case isAlpha(r),
		0xC0 <= r && r <= 0xD6, 0xD8 <= r && r <= 0xF6, 0xF8 <= r && r <= 0x2FF,
		0x370 <= r && r <= 0x37D, 0x37F <= r && r <= 0x1FFF, 0x200C <= r && r <= 0x200D,
		0x2070 <= r && r <= 0x218F, 0x2C00 <= r && r <= 0x2FEF, 0x3001 <= r && r <= 0xD7FF,
		0xF900 <= r && r <= 0xFDCF, 0xFDF0 <= r && r <= 0xFFFD, 0x10000 <= r && r <= 0xEFFFF:
		return true
	}
	return false
}

// IsPNCharsU implements PN_CHARS_U ::= PN_CHARS_BASE | '_'.
func IsPNCharsU(r rune) bool { return r == '_' || IsPNCharsBase(r) }

// IsPNChars implements PN_CHARS ::= PN_CHARS_U | '-' | [0-9] | #x00B7 | [#x0300-#x036F] | [#x203F-#x2040].
func IsPNChars(r rune) bool {
	return IsPNCharsU(r) || r == '-' || isDigit(r) || r == 0xB7 ||
		0x300 <= r && r <= 0x36F || 0x203F <= r && r <= 0x2040
}
