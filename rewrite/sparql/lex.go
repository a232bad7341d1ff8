package sparql

import (
	"fmt"
	"strings"
	"unicode/utf8"

	"veneer/catalog/rdf"
)

// tokenType identifies the terminals of the grammar (§19.8, productions whose
// names are in capitals) that the lexer hands to the parser.
type tokenType int

const (
	tokEOF     tokenType = iota
	tokError             // val is the message
	tokIRI               // IRIREF; val is the IRI without brackets, escapes decoded
	tokPNameNS           // PNAME_NS; val is the prefix
	tokPNameLN           // PNAME_LN; val is the prefix, local the local part unescaped
	tokBlank             // BLANK_NODE_LABEL; val is the label
	tokVar               // VAR1 or VAR2; val is the name
	tokLangTag           // LANGTAG; val is the tag without '@'
	tokInteger           // INTEGER, INTEGER_POSITIVE, INTEGER_NEGATIVE; val as written
	tokDecimal           // DECIMAL and its signed forms
	tokDouble            // DOUBLE and its signed forms
	tokString            // the four string forms; val is the decoded content
	tokWord              // a keyword, 'a', 'true' or 'false'; val as written
	tokPunct             // punctuation and operators; val is the symbol
)

// token is one terminal with the byte offsets of its first byte and of the byte
// after it.
type token struct {
	typ   tokenType
	pos   Pos
	end   Pos
	val   string
	local string
}

// describe names the token for an error message.
func (t token) describe() string {
	switch t.typ {
	case tokEOF:
		return "end of query"
	case tokError:
		return t.val
	case tokIRI:
		return "IRI <" + t.val + ">"
	case tokPNameNS:
		return "prefixed name " + t.val + ":"
	case tokPNameLN:
		return "prefixed name " + t.val + ":" + t.local
	case tokBlank:
		return "blank node _:" + t.val
	case tokVar:
		return "variable ?" + t.val
	case tokLangTag:
		return "language tag @" + t.val
	case tokInteger, tokDecimal, tokDouble:
		return "number " + t.val
	case tokString:
		s := t.val
		if utf8.RuneCountInString(s) > 20 {
			s = string([]rune(s)[:20]) + "..."
		}
		return fmt.Sprintf("string %q", s)
	default: // words and punctuation
		return "'" + t.val + "'"
	}
}

// stateFn is one state of the lexer; it returns the next state.
type stateFn func(*lexer) stateFn

// lexer turns query text into tokens. It runs synchronously: next runs state
// functions until one emits a token.
type lexer struct {
	src     string
	pos     int // current offset
	start   int // start of the token being scanned
	state   stateFn
	pending []token
}

func newLexer(src string) *lexer {
	return &lexer{src: src, state: lexAny}
}

// next returns the next token; after the end of input or an error it keeps
// returning that token.
func (l *lexer) next() token {
	for len(l.pending) == 0 {
		if l.state == nil {
			return l.last()
		}
		l.state = l.state(l)
	}
	t := l.pending[0]
	l.pending = l.pending[:copy(l.pending, l.pending[1:])] // keeps the buffer's capacity
	if t.typ == tokEOF || t.typ == tokError {
		l.state = nil
		l.pending = append(l.pending[:0], t)
	}
	return t
}

func (l *lexer) last() token {
	if len(l.pending) > 0 {
		return l.pending[0]
	}
	return token{typ: tokEOF, pos: Pos(len(l.src)), end: Pos(len(l.src))}
}

func (l *lexer) emit(typ tokenType, val, local string) {
	l.pending = append(l.pending, token{typ: typ, pos: Pos(l.start), end: Pos(l.pos), val: val, local: local})
	l.start = l.pos
}

// errorf emits an error token at offset at and stops the lexer.
func (l *lexer) errorf(at int, format string, args ...any) stateFn {
	l.pending = append(l.pending, token{typ: tokError, pos: Pos(at), end: Pos(at), val: fmt.Sprintf(format, args...)})
	return nil
}

// peek decodes the code point at offset at, applying the codepoint escapes \uXXXX
// and \UXXXXXXXX of §19.2. It reports the width in bytes and whether the code
// point came from an escape. At the end of input it returns -1.
func (l *lexer) peek(at int) (r rune, width int, escaped bool) {
	if at >= len(l.src) {
		return -1, 0, false
	}
	if l.src[at] == '\\' && at+1 < len(l.src) && (l.src[at+1] == 'u' || l.src[at+1] == 'U') {
		n := 4
		if l.src[at+1] == 'U' {
			n = 8
		}
		if v, ok := parseHex(l.src, at+2, n); ok {
			return v, 2 + n, true
		}
	}
	r, width = utf8.DecodeRuneInString(l.src[at:])
	return r, width, false
}

// parseHex reads n hexadecimal digits at offset at.
func parseHex(s string, at, n int) (rune, bool) {
	if at+n > len(s) {
		return 0, false
	}
	var v rune
	for i := at; i < at+n; i++ {
		d := hexValue(s[i])
		if d < 0 {
			return 0, false
		}
		v = v<<4 | rune(d)
	}
	return v, true
}

func hexValue(c byte) int {
	switch {
	case '0' <= c && c <= '9':
		return int(c - '0')
	case 'a' <= c && c <= 'f':
		return int(c-'a') + 10
	case 'A' <= c && c <= 'F':
		return int(c-'A') + 10
	}
	return -1
}

// checkRune reports a problem with a decoded code point: invalid UTF-8, or an
// escape that names a surrogate or a value beyond U+10FFFF.
func (l *lexer) checkRune(at int, r rune, width int, escaped bool) (string, bool) {
	switch {
	case escaped && (r > utf8.MaxRune || (0xD800 <= r && r <= 0xDFFF)):
		return fmt.Sprintf("the escape %s does not name a Unicode character", l.src[at:at+width]), false
	case !escaped && r == utf8.RuneError && width == 1:
		return fmt.Sprintf("invalid UTF-8 byte 0x%02X", l.src[at]), false
	}
	return "", true
}

// lexAny skips white space and comments and dispatches on the next character.
func lexAny(l *lexer) stateFn {
	for {
		l.start = l.pos
		if l.pos >= len(l.src) {
			l.emit(tokEOF, "", "")
			return nil
		}
		c := l.src[l.pos]
		switch {
		case c == ' ' || c == '\t' || c == '\r' || c == '\n':
			l.pos++
			continue
		case c == '#':
			for l.pos < len(l.src) && l.src[l.pos] != '\n' && l.src[l.pos] != '\r' {
				l.pos++
			}
			continue
		}
		break
	}
	r, w, esc := l.peek(l.pos)
	if msg, ok := l.checkRune(l.pos, r, w, esc); !ok {
		return l.errorf(l.pos, "%s", msg)
	}
	switch {
	case r == '<':
		return lexIRIOrLess
	case r == '"' || r == '\'':
		return lexString
	case r == '?' || r == '$':
		return lexVar
	case r == '@':
		return lexLangTag
	case r == '_':
		return lexBlankLabel
	case r == ':' || rdf.IsPNCharsBase(r):
		return lexName
	case '0' <= r && r <= '9':
		return lexNumber
	case r == '.' && l.digitAt(l.pos+1):
		return lexNumber
	case (r == '+' || r == '-') && (l.digitAt(l.pos+1) || (l.byteAt(l.pos+1) == '.' && l.digitAt(l.pos+2))):
		return lexNumber
	}
	return lexPunct
}

func (l *lexer) byteAt(at int) byte {
	if at < len(l.src) {
		return l.src[at]
	}
	return 0
}

func (l *lexer) digitAt(at int) bool {
	c := l.byteAt(at)
	return '0' <= c && c <= '9'
}

// punctuation lists the operator and delimiter symbols, longest first so that
// the longest match wins.
var punctuation = []string{
	"^^", "||", "&&", "!=", "<=", ">=",
	"{", "}", "(", ")", "[", "]", ";", ",", ".", "+", "-", "*", "/", "^", "|", "!", "=", "<", ">", "?",
}

func lexPunct(l *lexer) stateFn {
	for _, p := range punctuation {
		if strings.HasPrefix(l.src[l.pos:], p) {
			l.pos += len(p)
			l.emit(tokPunct, p, "")
			return lexAny
		}
	}
	r, w, esc := l.peek(l.pos)
	if esc {
		return l.errorf(l.pos, "the escape %s stands for %q, which is not allowed here", l.src[l.pos:l.pos+w], r)
	}
	return l.errorf(l.pos, "unexpected character %q", r)
}

// lexIRIOrLess scans an IRIREF, or the operators '<' and '<=' when the text
// cannot be an IRI (§19.3: ?a<?b&&?c>?d is an IRI between two variables).
//
//	[139] IRIREF ::= '<' ([^<>"{}|^`\]-[#x00-#x20])* '>'
func lexIRIOrLess(l *lexer) stateFn {
	at := l.pos + 1
	// Most IRIs are ASCII without escapes: their text is their value.
	for i := at; i < len(l.src); i++ {
		c := l.src[i]
		if c == '>' {
			l.pos = i + 1
			l.emit(tokIRI, l.src[at:i], "")
			return lexAny
		}
		if c >= utf8.RuneSelf || c == '\\' || !rdf.IsIRIChar(rune(c)) {
			break
		}
	}
	var b strings.Builder
	for {
		r, w, esc := l.peek(at)
		if r == '>' && !esc {
			l.pos = at + 1
			l.emit(tokIRI, b.String(), "")
			return lexAny
		}
		if r < 0 || (!esc && !rdf.IsIRIChar(r)) {
			break
		}
		if msg, ok := l.checkRune(at, r, w, esc); !ok {
			return l.errorf(at, "%s", msg)
		}
		if esc && !rdf.IsIRIChar(r) {
			return l.errorf(at, "the escape %s stands for a character that is not allowed in an IRI", l.src[at:at+w])
		}
		b.WriteRune(r)
		at += w
	}
	return lexPunct
}

// lexString scans one of the four string forms and decodes its escapes (§19.7).
//
//	[156] STRING_LITERAL1 ::= "'" ( ([^#x27#x5C#xA#xD]) | ECHAR )* "'"
//	[157] STRING_LITERAL2 ::= '"' ( ([^#x22#x5C#xA#xD]) | ECHAR )* '"'
//	[158] STRING_LITERAL_LONG1 ::= "'''" ( ( "'" | "''" )? ( [^'\] | ECHAR ) )* "'''"
//	[159] STRING_LITERAL_LONG2 ::= '"""' ( ( '"' | '""' )? ( [^"\] | ECHAR ) )* '"""'
//	[160] ECHAR ::= '\' [tbnrf\"']
func lexString(l *lexer) stateFn {
	q := l.src[l.pos]
	delim := string(q)
	long := strings.HasPrefix(l.src[l.pos:], strings.Repeat(delim, 3))
	if long {
		delim = strings.Repeat(delim, 3)
	}
	at := l.pos + len(delim)
	if !long {
		// Most strings are ASCII without escapes: their text is their value.
		for i := at; i < len(l.src); i++ {
			c := l.src[i]
			if c == q {
				l.pos = i + 1
				l.emit(tokString, l.src[at:i], "")
				return lexAny
			}
			if c >= utf8.RuneSelf || c == '\\' || c == '\n' || c == '\r' {
				break
			}
		}
	}
	var b strings.Builder
	for {
		if strings.HasPrefix(l.src[at:], delim) {
			l.pos = at + len(delim)
			l.emit(tokString, b.String(), "")
			return lexAny
		}
		r, w, esc := l.peek(at)
		switch {
		case r < 0:
			return l.errorf(l.start, "string is not closed before the end of the query")
		case esc:
			if msg, ok := l.checkRune(at, r, w, esc); !ok {
				return l.errorf(at, "%s", msg)
			}
		case r == '\\':
			c := l.byteAt(at + 1)
			v, ok := rdf.EscapedChar(rune(c))
			if !ok {
				return l.errorf(at, "invalid escape sequence in string: \\%c", c)
			}
			b.WriteByte(v)
			at += 2
			continue
		case !long && (r == '\n' || r == '\r'):
			return l.errorf(at, "line break in a string; use \\n or a long string (\"\"\"...\"\"\")")
		default:
			if msg, ok := l.checkRune(at, r, w, esc); !ok {
				return l.errorf(at, "%s", msg)
			}
		}
		b.WriteRune(r)
		at += w
	}
}

// lexVar scans a variable, or the path modifier '?' when no name follows.
//
//	[143] VAR1 ::= '?' VARNAME
//	[144] VAR2 ::= '$' VARNAME
//	[166] VARNAME ::= ( PN_CHARS_U | [0-9] ) ( PN_CHARS_U | [0-9] | #x00B7 | [#x0300-#x036F] | [#x203F-#x2040] )*
func lexVar(l *lexer) stateFn {
	at := l.pos + 1
	var b strings.Builder
	for {
		r, w, esc := l.peek(at)
		ok := rdf.IsPNCharsU(r) || ('0' <= r && r <= '9')
		if b.Len() > 0 {
			ok = ok || r == 0xB7 || (0x300 <= r && r <= 0x36F) || r == 0x203F || r == 0x2040
		}
		if !ok {
			break
		}
		if msg, good := l.checkRune(at, r, w, esc); !good {
			return l.errorf(at, "%s", msg)
		}
		b.WriteRune(r)
		at += w
	}
	if b.Len() == 0 {
		if l.src[l.pos] == '$' {
			return l.errorf(l.pos, "expected a variable name after '$'")
		}
		return lexPunct
	}
	l.pos = at
	l.emit(tokVar, b.String(), "")
	return lexAny
}

// lexLangTag scans a language tag.
//
//	[145] LANGTAG ::= '@' [a-zA-Z]+ ('-' [a-zA-Z0-9]+)*
func lexLangTag(l *lexer) stateFn {
	at := l.pos + 1
	n := l.span(at, isASCIILetter)
	if n == 0 {
		return l.errorf(l.pos, "expected a language tag after '@'")
	}
	at += n
	for l.byteAt(at) == '-' {
		m := l.span(at+1, func(c byte) bool { return isASCIILetter(c) || ('0' <= c && c <= '9') })
		if m == 0 {
			break
		}
		at += 1 + m
	}
	l.pos = at
	l.emit(tokLangTag, l.src[l.start+1:at], "")
	return lexAny
}

// span counts the bytes from offset at that satisfy ok.
func (l *lexer) span(at int, ok func(byte) bool) int {
	n := 0
	for at+n < len(l.src) && ok(l.src[at+n]) {
		n++
	}
	return n
}

func isASCIILetter(c byte) bool { return ('a' <= c && c <= 'z') || ('A' <= c && c <= 'Z') }

// lexBlankLabel scans a blank node label.
//
//	[142] BLANK_NODE_LABEL ::= '_:' ( PN_CHARS_U | [0-9] ) ((PN_CHARS|'.')* PN_CHARS)?
func lexBlankLabel(l *lexer) stateFn {
	if l.byteAt(l.pos+1) != ':' {
		return l.errorf(l.pos, "expected ':' after '_' to form a blank node label")
	}
	at := l.pos + 2
	r, w, esc := l.peek(at)
	if !rdf.IsPNCharsU(r) && !('0' <= r && r <= '9') {
		return l.errorf(at, "expected a blank node label after '_:'")
	}
	if msg, ok := l.checkRune(at, r, w, esc); !ok {
		return l.errorf(at, "%s", msg)
	}
	label, end, errAt, msg := l.scanNameRest(at+w, string(r), false)
	if msg != "" {
		return l.errorf(errAt, "%s", msg)
	}
	l.pos = end
	l.emit(tokBlank, label, "")
	return lexAny
}

// scanNameRest continues a name from offset at with the characters
// (PN_CHARS|'.')* PN_CHARS (and, when local is set, ':' and PLX too), giving
// back what it read without a trailing run of '.', and the offset after it.
func (l *lexer) scanNameRest(at int, head string, local bool) (name string, end int, errAt int, msg string) {
	var b strings.Builder
	b.WriteString(head)
	good, goodEnd := head, at
	for {
		r, w, esc := l.peek(at)
		switch {
		case r == '.':
			b.WriteRune(r)
			at += w
			continue
		case rdf.IsPNChars(r) || (local && r == ':'):
			if m, ok := l.checkRune(at, r, w, esc); !ok {
				return "", 0, at, m
			}
			b.WriteRune(r)
			at += w
		case local && r == '%' && !esc:
			if hexValue(l.byteAt(at+1)) < 0 || hexValue(l.byteAt(at+2)) < 0 {
				return "", 0, at, "expected two hexadecimal digits after '%' in a local name"
			}
			b.WriteString(l.src[at : at+3])
			at += 3
		case local && r == '\\' && !esc:
			c := l.byteAt(at + 1)
			if !strings.ContainsRune(localEscapes, rune(c)) || c == 0 {
				return "", 0, at, fmt.Sprintf("invalid escape in a local name: \\%c", c)
			}
			b.WriteByte(c)
			at += 2
		default:
			return good, goodEnd, 0, ""
		}
		good, goodEnd = b.String(), at
	}
}

// localEscapes are the characters PN_LOCAL_ESC may escape.
//
//	[173] PN_LOCAL_ESC ::= '\' ( '_' | '~' | '.' | '-' | '!' | '$' | '&' | "'" | '(' | ')' | '*' | '+' | ',' | ';' | '=' | '/' | '?' | '#' | '@' | '%' )
const localEscapes = "_~.-!$&'()*+,;=/?#@%"

// lexName scans a prefixed name or a keyword. The character classes
// PN_CHARS_BASE, PN_CHARS_U and PN_CHARS (rules [164] to [167]) are those of
// Turtle, which catalog/rdf implements (rdf.IsPNCharsBase and the others).
//
//	[140] PNAME_NS ::= PN_PREFIX? ':'
//	[141] PNAME_LN ::= PNAME_NS PN_LOCAL
//	[168] PN_PREFIX ::= PN_CHARS_BASE ((PN_CHARS|'.')* PN_CHARS)?
//	[169] PN_LOCAL ::= (PN_CHARS_U | ':' | [0-9] | PLX ) ((PN_CHARS | '.' | ':' | PLX)* (PN_CHARS | ':' | PLX) )?
func lexName(l *lexer) stateFn {
	prefix, at := "", l.pos
	if r, w, _ := l.peek(at); r != ':' {
		var errAt int
		var msg string
		prefix, at, errAt, msg = l.scanNameRest(at+w, string(r), false)
		if msg != "" {
			return l.errorf(errAt, "%s", msg)
		}
		if r, _, _ := l.peek(at); r != ':' {
			return lexWord
		}
	}
	_, colon, _ := l.peek(at)
	at += colon
	r, w, esc := l.peek(at)
	startsLocal := rdf.IsPNCharsU(r) || r == ':' || ('0' <= r && r <= '9') ||
		(!esc && (r == '%' || r == '\\'))
	if !startsLocal {
		l.pos = at
		l.emit(tokPNameNS, prefix, "")
		return lexAny
	}
	var b strings.Builder
	switch {
	case r == '%' && !esc:
		if hexValue(l.byteAt(at+1)) < 0 || hexValue(l.byteAt(at+2)) < 0 {
			return l.errorf(at, "expected two hexadecimal digits after '%%' in a local name")
		}
		b.WriteString(l.src[at : at+3])
		at += 3
	case r == '\\' && !esc:
		c := l.byteAt(at + 1)
		if !strings.ContainsRune(localEscapes, rune(c)) || c == 0 {
			return l.errorf(at, "invalid escape in a local name: \\%c", c)
		}
		b.WriteByte(c)
		at += 2
	default:
		if msg, ok := l.checkRune(at, r, w, esc); !ok {
			return l.errorf(at, "%s", msg)
		}
		b.WriteRune(r)
		at += w
	}
	local, end, errAt, msg := l.scanNameRest(at, b.String(), true)
	if msg != "" {
		return l.errorf(errAt, "%s", msg)
	}
	l.pos = end
	l.emit(tokPNameLN, prefix, local)
	return lexAny
}

// lexWord scans a keyword: a run of ASCII letters, digits and '_' that starts
// with a letter.
func lexWord(l *lexer) stateFn {
	n := l.span(l.pos, func(c byte) bool { return isASCIILetter(c) || ('0' <= c && c <= '9') || c == '_' })
	if n == 0 {
		r, _, _ := l.peek(l.pos)
		return l.errorf(l.pos, "unexpected character %q", r)
	}
	l.pos += n
	l.emit(tokWord, l.src[l.start:l.pos], "")
	return lexAny
}

// lexNumber scans a numeric literal, signed when a sign is directly in front.
//
//	[146] INTEGER ::= [0-9]+
//	[147] DECIMAL ::= [0-9]* '.' [0-9]+
//	[148] DOUBLE ::= [0-9]+ '.' [0-9]* EXPONENT | '.' ([0-9])+ EXPONENT | ([0-9])+ EXPONENT
//	[155] EXPONENT ::= [eE] [+-]? [0-9]+
func lexNumber(l *lexer) stateFn {
	at := l.pos
	if c := l.src[at]; c == '+' || c == '-' {
		at++
	}
	isDigit := func(c byte) bool { return '0' <= c && c <= '9' }
	intDigits := l.span(at, isDigit)
	at += intDigits
	typ := tokInteger
	if l.byteAt(at) == '.' {
		frac := l.span(at+1, isDigit)
		switch {
		case frac > 0:
			at += 1 + frac
			typ = tokDecimal
		case l.exponentAt(at+1) > 0:
			at++
		}
	}
	if n := l.exponentAt(at); n > 0 {
		at += n
		typ = tokDouble
	}
	l.pos = at
	l.emit(typ, l.src[l.start:at], "")
	return lexAny
}

// exponentAt returns the length of an EXPONENT at offset at, or 0.
func (l *lexer) exponentAt(at int) int {
	if c := l.byteAt(at); c != 'e' && c != 'E' {
		return 0
	}
	n := 1
	if c := l.byteAt(at + n); c == '+' || c == '-' {
		n++
	}
	d := l.span(at+n, func(c byte) bool { return '0' <= c && c <= '9' })
	if d == 0 {
		return 0
	}
	return n + d
}
