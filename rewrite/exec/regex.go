package exec

import (
	"errors"
	"fmt"
	"regexp"
	"strings"
	"unicode/utf8"
)

// XPath regular expressions (XQuery 1.0 and XPath 2.0 Functions and Operators
// §7.6.1, with the q flag of its 3.0 edition) are run with Go's RE2 engine,
// after a translation of the constructs whose meaning differs: '.' excludes
// carriage return as well as newline, \d and \w are Unicode classes, \s is only
// space, tab, newline and carriage return.
//
// RE2 lacks some XPath constructs; a pattern using one is an error (so REGEX and
// REPLACE raise a SPARQL expression error for it): back-references (\1 ...),
// character class subtraction ([a-z-[aeiou]]), the XML name classes \i \I \c
// \C, Unicode block escapes (\p{IsBasicLatin}), and counted repetitions above
// 1000.

// regexpFlags are the flags of REGEX and REPLACE.
type regexpFlags struct {
	dotAll, multiLine, caseless, extended, literal bool
}

func parseRegexpFlags(s string) (regexpFlags, error) {
	var f regexpFlags
	for _, c := range s {
		switch c {
		case 's':
			f.dotAll = true
		case 'm':
			f.multiLine = true
		case 'i':
			f.caseless = true
		case 'x':
			f.extended = true
		case 'q':
			f.literal = true
		default:
			return f, fmt.Errorf("unknown regular expression flag %q", c)
		}
	}
	return f, nil
}

// compileRegexp compiles an XPath pattern with its flags.
func compileRegexp(pattern, flags string) (*regexp.Regexp, regexpFlags, error) {
	f, err := parseRegexpFlags(flags)
	if err != nil {
		return nil, f, err
	}
	var expr string
	if f.literal {
		expr = regexp.QuoteMeta(pattern)
	} else {
		if f.extended {
			pattern = stripRegexpSpace(pattern)
		}
		if expr, err = translateRegexp(pattern, f.dotAll); err != nil {
			return nil, f, err
		}
	}
	prefix := ""
	if f.dotAll {
		prefix += "s"
	}
	if f.multiLine {
		prefix += "m"
	}
	if f.caseless {
		prefix += "i"
	}
	if prefix != "" {
		expr = "(?" + prefix + ")" + expr
	}
	re, err := regexp.Compile(expr)
	return re, f, err
}

// stripRegexpSpace removes whitespace outside character classes (the x flag).
func stripRegexpSpace(p string) string {
	var b strings.Builder
	inClass := false
	for i := 0; i < len(p); i++ {
		c := p[i]
		switch {
		case c == '\\' && i+1 < len(p):
			b.WriteByte(c)
			i++
			c = p[i]
		case c == '[':
			inClass = true
		case c == ']':
			inClass = false
		case !inClass && (c == ' ' || c == '\t' || c == '\n' || c == '\r'):
			continue
		}
		b.WriteByte(c)
	}
	return b.String()
}

var errUnsupportedRegexp = errors.New("regular expression construct not supported")

// Translations of the XPath multi-character escapes: outside a class, and
// inside one (where a negated class cannot nest).
var (
	escapeOutside = map[byte]string{
		'd': `\p{Nd}`, 'D': `\P{Nd}`,
		'w': `[\p{L}\p{M}\p{N}\p{S}]`, 'W': `[\p{P}\p{Z}\p{C}]`,
		's': `[ \t\n\r]`, 'S': `[^ \t\n\r]`,
	}
	escapeInside = map[byte]string{
		'd': `\p{Nd}`, 'D': `\P{Nd}`,
		'w': `\p{L}\p{M}\p{N}\p{S}`, 'W': `\p{P}\p{Z}\p{C}`,
		's': ` \t\n\r`, 'S': `\x00-\x08\x0B\x0C\x0E-\x1F\x21-\x{10FFFF}`,
	}
)

// translateRegexp rewrites an XPath pattern into RE2 syntax.
func translateRegexp(p string, dotAll bool) (string, error) {
	var b strings.Builder
	inClass := false
	for i := 0; i < len(p); i++ {
		c := p[i]
		switch {
		case c == '\\':
			if i+1 >= len(p) {
				return "", fmt.Errorf("the pattern ends with a lone backslash")
			}
			i++
			e := p[i]
			switch {
			case e >= '1' && e <= '9':
				return "", fmt.Errorf("%w: back-reference \\%c", errUnsupportedRegexp, e)
			case e == 'i' || e == 'I' || e == 'c' || e == 'C':
				return "", fmt.Errorf("%w: \\%c", errUnsupportedRegexp, e)
			case e == 'p' || e == 'P':
				end := strings.IndexByte(p[i:], '}')
				if !strings.HasPrefix(p[i+1:], "{") || end < 0 {
					return "", fmt.Errorf("malformed \\%c escape", e)
				}
				name := p[i+2 : i+end]
				if strings.HasPrefix(name, "Is") {
					return "", fmt.Errorf("%w: Unicode block \\%c{%s}", errUnsupportedRegexp, e, name)
				}
				b.WriteString(p[i-1 : i+end+1])
				i += end
			case escapeOutside[e] != "":
				if inClass {
					b.WriteString(escapeInside[e])
				} else {
					b.WriteString(escapeOutside[e])
				}
			case strings.IndexByte(`nrt\|.-^?*+{}()[]$`, e) >= 0:
				b.WriteByte('\\')
				b.WriteByte(e)
			default:
				return "", fmt.Errorf("invalid escape \\%c", e)
			}
			continue
		case inClass && c == '-' && i+1 < len(p) && p[i+1] == '[':
			return "", fmt.Errorf("%w: character class subtraction", errUnsupportedRegexp)
		case c == '[' && !inClass:
			inClass = true
			b.WriteByte(c)
			if strings.HasPrefix(p[i+1:], "^") {
				b.WriteByte('^')
				i++
			}
			continue
		case c == ']' && inClass:
			inClass = false
		case c == '.' && !inClass && !dotAll:
			b.WriteString(`[^\n\r]`)
			continue
		}
		if c >= utf8.RuneSelf {
			_, size := utf8.DecodeRuneInString(p[i:])
			b.WriteString(p[i : i+size])
			i += size - 1
			continue
		}
		b.WriteByte(c)
	}
	return b.String(), nil
}

// replacement is a parsed REPLACE replacement string: literal text and group
// references, in order.
type replacement struct {
	parts []replacementPart
}

type replacementPart struct {
	text  string
	group int // -1 for text
}

// parseReplacement reads an XPath replacement string (F&O §7.6.3): $N refers to
// a group, taking as many digits as still name a group of re; \$ and \\ are a
// literal dollar and backslash; any other $ or \ is an error. With literal (the
// q flag) the string is taken as it is.
func parseReplacement(s string, re *regexp.Regexp, literal bool) (replacement, error) {
	var r replacement
	if literal {
		r.parts = []replacementPart{{text: s, group: -1}}
		return r, nil
	}
	var text strings.Builder
	flush := func() {
		if text.Len() > 0 {
			r.parts = append(r.parts, replacementPart{text: text.String(), group: -1})
			text.Reset()
		}
	}
	groups := re.NumSubexp()
	for i := 0; i < len(s); i++ {
		switch c := s[i]; c {
		case '\\':
			if i+1 >= len(s) || s[i+1] != '\\' && s[i+1] != '$' {
				return r, fmt.Errorf("invalid backslash in the replacement")
			}
			text.WriteByte(s[i+1])
			i++
		case '$':
			j := i + 1
			if j >= len(s) || !isDigit(s[j]) {
				return r, fmt.Errorf("a $ in the replacement is not followed by a group number")
			}
			n := int(s[j] - '0')
			j++
			for j < len(s) && isDigit(s[j]) && n*10+int(s[j]-'0') <= groups {
				n = n*10 + int(s[j]-'0')
				j++
			}
			flush()
			if n <= groups {
				r.parts = append(r.parts, replacementPart{group: n})
			}
			i = j - 1
		default:
			text.WriteByte(c)
		}
	}
	flush()
	return r, nil
}

func isDigit(c byte) bool { return c >= '0' && c <= '9' }

// replaceAll is fn:replace: every non-overlapping match of re in s is replaced.
func (r replacement) replaceAll(re *regexp.Regexp, s string) string {
	var b strings.Builder
	last := 0
	for _, m := range re.FindAllStringSubmatchIndex(s, -1) {
		b.WriteString(s[last:m[0]])
		for _, p := range r.parts {
			switch {
			case p.group < 0:
				b.WriteString(p.text)
			case m[2*p.group] >= 0:
				b.WriteString(s[m[2*p.group]:m[2*p.group+1]])
			}
		}
		last = m[1]
	}
	b.WriteString(s[last:])
	return b.String()
}
