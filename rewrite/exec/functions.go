package exec

import (
	"crypto/md5"
	"crypto/rand"
	"crypto/sha1"
	"crypto/sha256"
	"crypto/sha512"
	"encoding/hex"
	"golang.org/x/text/cases"
	"golang.org/x/text/language"
	"hash"
	"net/url"
	"regexp"
	"strings"
	"unicode/utf8"

	"veneer/catalog/rdf"
)

// builtin is a function whose arguments are all evaluated first (§17.2.1); min
// and max bound the argument count (max -1: any).
type builtin struct {
	min, max int
	fn       func(r *run, args []rdf.Term) (rdf.Term, error)
}

// builtins are the strict functions of §17.4, by their upper-case names. The
// functional forms (BOUND, IF, COALESCE, EXISTS, ||, &&, IN) and BNODE, whose
// result depends on the solution, are compiled in expr.go.
var builtins map[string]builtin

func init() {
	builtins = map[string]builtin{
		// §17.4.1, §17.4.2: terms.
		"SAMETERM":  {2, 2, func(_ *run, a []rdf.Term) (rdf.Term, error) { return boolTerm(rdf.SameTerm(a[0], a[1])), nil }},
		"ISIRI":     {1, 1, kindTest(rdf.KindIRI)},
		"ISBLANK":   {1, 1, kindTest(rdf.KindBlank)},
		"ISLITERAL": {1, 1, kindTest(rdf.KindLiteral)},
		"ISNUMERIC": {1, 1, func(_ *run, a []rdf.Term) (rdf.Term, error) {
			_, ok := numberOf(a[0])
			return boolTerm(ok), nil
		}},
		"STR":      {1, 1, strFn},
		"LANG":     {1, 1, langFn},
		"DATATYPE": {1, 1, datatypeFn},
		"IRI":      {1, 1, iriFn},
		"STRDT":    {2, 2, strdtFn},
		"STRLANG":  {2, 2, strlangFn},
		"UUID":     {0, 0, func(*run, []rdf.Term) (rdf.Term, error) { return rdf.IRI("urn:uuid:" + newUUID()), nil }},
		"STRUUID":  {0, 0, func(*run, []rdf.Term) (rdf.Term, error) { return rdf.NewString(newUUID()), nil }},

		// §17.4.3: strings.
		"STRLEN": {1, 1, func(_ *run, a []rdf.Term) (rdf.Term, error) {
			s, ok := stringLiteral(a[0])
			if !ok {
				return nil, errExpr
			}
			return number{kind: kindInteger, small: int64(utf8.RuneCountInString(s.Lexical))}.literal(), nil
		}},
		"SUBSTR":         {2, 3, substrFn},
		"UCASE":          {1, 1, caseFn(upperCase)},
		"LCASE":          {1, 1, caseFn(lowerCase)},
		"STRSTARTS":      {2, 2, stringTest(strings.HasPrefix)},
		"STRENDS":        {2, 2, stringTest(strings.HasSuffix)},
		"CONTAINS":       {2, 2, stringTest(strings.Contains)},
		"STRBEFORE":      {2, 2, substringFn(true)},
		"STRAFTER":       {2, 2, substringFn(false)},
		"ENCODE_FOR_URI": {1, 1, encodeForURI},
		"CONCAT":         {0, -1, concatFn},
		"LANGMATCHES":    {2, 2, langMatchesFn},
		"REGEX":          {2, 3, regexFn},
		"REPLACE":        {3, 4, replaceFn},

		// §17.4.4: numerics.
		"ABS":   {1, 1, roundFn(roundAbs)},
		"ROUND": {1, 1, roundFn(roundNearest)},
		"CEIL":  {1, 1, roundFn(roundCeil)},
		"FLOOR": {1, 1, roundFn(roundFloor)},
		"RAND": {0, 0, func(r *run, _ []rdf.Term) (rdf.Term, error) {
			return number{kind: kindDouble, f: r.random()}.literal(), nil
		}},

		// §17.4.5: dates and times.
		"NOW":      {0, 0, func(r *run, _ []rdf.Term) (rdf.Term, error) { return r.now(), nil }},
		"YEAR":     {1, 1, dateTimeField("YEAR")},
		"MONTH":    {1, 1, dateTimeField("MONTH")},
		"DAY":      {1, 1, dateTimeField("DAY")},
		"HOURS":    {1, 1, dateTimeField("HOURS")},
		"MINUTES":  {1, 1, dateTimeField("MINUTES")},
		"SECONDS":  {1, 1, dateTimeField("SECONDS")},
		"TIMEZONE": {1, 1, dateTimeField("TIMEZONE")},
		"TZ":       {1, 1, dateTimeField("TZ")},

		// §17.4.6: hashes.
		"MD5":    {1, 1, hashFn(md5.New)},
		"SHA1":   {1, 1, hashFn(sha1.New)},
		"SHA256": {1, 1, hashFn(sha256.New)},
		"SHA384": {1, 1, hashFn(sha512.New384)},
		"SHA512": {1, 1, hashFn(sha512.New)},
	}
}

func kindTest(k rdf.Kind) func(*run, []rdf.Term) (rdf.Term, error) {
	return func(_ *run, a []rdf.Term) (rdf.Term, error) { return boolTerm(a[0].Kind() == k), nil }
}

// stringLiteral accepts a string literal (§17.4.3.1.1): simple, xsd:string
// (the same in RDF 1.1) or language-tagged.
func stringLiteral(t rdf.Term) (rdf.Literal, bool) {
	l, ok := t.(rdf.Literal)
	return l, ok && (l.Datatype == rdf.XSDString || l.Datatype == rdf.RDFLangString)
}

// simpleLiteral accepts a simple literal (xsd:string) and returns its text.
func simpleLiteral(t rdf.Term) (string, bool) {
	l, ok := t.(rdf.Literal)
	return l.Lexical, ok && l.Datatype == rdf.XSDString
}

// sameKind returns a string literal of the same kind as l (§17.4.3.1.3).
func sameKind(l rdf.Literal, s string) rdf.Literal {
	l.Lexical = s
	return l
}

// compatible checks argument compatibility (§17.4.3.1.2).
func compatible(a, b rdf.Term) (rdf.Literal, rdf.Literal, bool) {
	x, ok1 := stringLiteral(a)
	y, ok2 := stringLiteral(b)
	if !ok1 || !ok2 || y.Datatype == rdf.RDFLangString && !strings.EqualFold(x.Lang, y.Lang) {
		return x, y, false
	}
	return x, y, true
}

func strFn(_ *run, a []rdf.Term) (rdf.Term, error) {
	switch t := a[0].(type) {
	case rdf.IRI:
		return rdf.NewString(string(t)), nil
	case rdf.Literal:
		return rdf.NewString(t.Lexical), nil
	}
	return nil, errExpr
}

func langFn(_ *run, a []rdf.Term) (rdf.Term, error) {
	if l, ok := a[0].(rdf.Literal); ok {
		return rdf.NewString(l.Lang), nil
	}
	return nil, errExpr
}

func datatypeFn(_ *run, a []rdf.Term) (rdf.Term, error) {
	if l, ok := a[0].(rdf.Literal); ok {
		return l.Datatype, nil
	}
	return nil, errExpr
}

// iriFn is IRI / URI (§17.4.2.8): an absolute IRI string is taken as it is; a
// relative one is resolved against the run's base IRI (RFC 3986 §5.2).
func iriFn(r *run, a []rdf.Term) (rdf.Term, error) {
	switch t := a[0].(type) {
	case rdf.IRI:
		return t, nil
	case rdf.Literal:
		if t.Datatype != rdf.XSDString {
			return nil, errExpr
		}
		if hasScheme(t.Lexical) {
			return rdf.IRI(t.Lexical), nil
		}
		ref, err := url.Parse(t.Lexical)
		base := r.baseURL()
		if err != nil || base == nil {
			return nil, errExpr
		}
		return rdf.IRI(base.ResolveReference(ref).String()), nil
	}
	return nil, errExpr
}

// hasScheme reports whether s starts with an IRI scheme and its colon
// (RFC 3986 §3.1: ALPHA *( ALPHA / DIGIT / "+" / "-" / "." ) ":").
func hasScheme(s string) bool {
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case 'a' <= c && c <= 'z' || 'A' <= c && c <= 'Z':
		case i > 0 && ('0' <= c && c <= '9' || c == '+' || c == '-' || c == '.'):
		case i > 0 && c == ':':
			return true
		default:
			return false
		}
	}
	return false
}

func strdtFn(_ *run, a []rdf.Term) (rdf.Term, error) {
	s, ok := simpleLiteral(a[0])
	dt, isIRI := a[1].(rdf.IRI)
	if !ok || !isIRI {
		return nil, errExpr
	}
	return rdf.NewTyped(s, dt), nil
}

func strlangFn(_ *run, a []rdf.Term) (rdf.Term, error) {
	s, ok1 := simpleLiteral(a[0])
	tag, ok2 := simpleLiteral(a[1])
	if !ok1 || !ok2 || !validLanguageTag(tag) {
		return nil, errExpr
	}
	return rdf.NewLangString(s, tag), nil
}

// validLanguageTag checks the BCP 47 shape Turtle's LANGTAG requires:
// [a-zA-Z]+ ('-' [a-zA-Z0-9]+)*.
func validLanguageTag(tag string) bool {
	for i, part := range strings.Split(tag, "-") {
		if part == "" {
			return false
		}
		for _, c := range part {
			letter := 'a' <= c && c <= 'z' || 'A' <= c && c <= 'Z'
			if !letter && (i == 0 || c < '0' || c > '9') {
				return false
			}
		}
	}
	return true
}

// newUUID returns a random (version 4) UUID in its text form (RFC 4122).
func newUUID() string {
	var b [16]byte
	_, _ = rand.Read(b[:]) // crypto/rand.Read never fails (Go 1.24 and later)
	b[6] = b[6]&0x0f | 0x40
	b[8] = b[8]&0x3f | 0x80
	h := hex.EncodeToString(b[:])
	return h[0:8] + "-" + h[8:12] + "-" + h[12:16] + "-" + h[16:20] + "-" + h[20:]
}

// substrFn is SUBSTR (§17.4.3.3, XPath fn:substring): the characters at
// positions p with round(start) <= p < round(start) + round(length), counting
// code points from 1.
func substrFn(_ *run, a []rdf.Term) (rdf.Term, error) {
	s, ok := stringLiteral(a[0])
	start, ok2 := numberOf(a[1])
	if !ok || !ok2 {
		return nil, errExpr
	}
	from := roundNumber(roundNearest, start.to(kindDouble)).f
	to := float64(utf8.RuneCountInString(s.Lexical)) + 1
	if len(a) == 3 {
		length, ok := numberOf(a[2])
		if !ok {
			return nil, errExpr
		}
		to = from + roundNumber(roundNearest, length.to(kindDouble)).f
	}
	var b strings.Builder
	pos := 1.0
	for _, c := range s.Lexical {
		if pos >= from && pos < to {
			b.WriteRune(c)
		}
		pos++
	}
	return sameKind(s, b.String()), nil
}

// upperCase and lowerCase are fn:upper-case and fn:lower-case (XPath F&O
// §5.4.7–8): Unicode's full case mappings, so "ß" becomes "SS", which
// strings.ToUpper's one-to-one mapping does not do. A Caser keeps state, so
// each call takes its own.
func upperCase(s string) string { return cases.Upper(language.Und).String(s) }

func lowerCase(s string) string { return cases.Lower(language.Und).String(s) }

func caseFn(f func(string) string) func(*run, []rdf.Term) (rdf.Term, error) {
	return func(_ *run, a []rdf.Term) (rdf.Term, error) {
		s, ok := stringLiteral(a[0])
		if !ok {
			return nil, errExpr
		}
		return sameKind(s, f(s.Lexical)), nil
	}
}

func stringTest(f func(s, sub string) bool) func(*run, []rdf.Term) (rdf.Term, error) {
	return func(_ *run, a []rdf.Term) (rdf.Term, error) {
		x, y, ok := compatible(a[0], a[1])
		if !ok {
			return nil, errExpr
		}
		return boolTerm(f(x.Lexical, y.Lexical)), nil
	}
}

// substringFn is STRBEFORE (before) and STRAFTER (§17.4.3.9, §17.4.3.10): no
// match gives an empty simple literal; a match, a literal of arg1's kind.
func substringFn(before bool) func(*run, []rdf.Term) (rdf.Term, error) {
	return func(_ *run, a []rdf.Term) (rdf.Term, error) {
		x, y, ok := compatible(a[0], a[1])
		if !ok {
			return nil, errExpr
		}
		i := strings.Index(x.Lexical, y.Lexical)
		switch {
		case i < 0:
			return rdf.NewString(""), nil
		case before:
			return sameKind(x, x.Lexical[:i]), nil
		}
		return sameKind(x, x.Lexical[i+len(y.Lexical):]), nil
	}
}

// encodeForURI is ENCODE_FOR_URI (§17.4.3.11, XPath fn:encode-for-uri): every
// byte of the UTF-8 form but the unreserved characters of RFC 3986 is escaped.
func encodeForURI(_ *run, a []rdf.Term) (rdf.Term, error) {
	s, ok := stringLiteral(a[0])
	if !ok {
		return nil, errExpr
	}
	const hexDigits = "0123456789ABCDEF"
	var b strings.Builder
	for i := 0; i < len(s.Lexical); i++ {
		c := s.Lexical[i]
		if 'a' <= c && c <= 'z' || 'A' <= c && c <= 'Z' || '0' <= c && c <= '9' ||
			c == '-' || c == '_' || c == '.' || c == '~' {
			b.WriteByte(c)
			continue
		}
		b.WriteByte('%')
		b.WriteByte(hexDigits[c>>4])
		b.WriteByte(hexDigits[c&15])
	}
	return rdf.NewString(b.String()), nil
}

// concatFn is CONCAT (§17.4.3.12): the result keeps a language tag all
// arguments share, and is a simple literal otherwise.
func concatFn(_ *run, a []rdf.Term) (rdf.Term, error) {
	var b strings.Builder
	lang := ""
	for i, t := range a {
		s, ok := stringLiteral(t)
		if !ok {
			return nil, errExpr
		}
		switch {
		case i == 0:
			lang = s.Lang
		case !strings.EqualFold(lang, s.Lang):
			lang = ""
		}
		b.WriteString(s.Lexical)
	}
	if lang != "" {
		return rdf.NewLangString(b.String(), lang), nil
	}
	return rdf.NewString(b.String()), nil
}

// langMatchesFn is langMatches (§17.4.3.13): RFC 4647 basic filtering.
func langMatchesFn(_ *run, a []rdf.Term) (rdf.Term, error) {
	tag, ok1 := simpleLiteral(a[0])
	rng, ok2 := simpleLiteral(a[1])
	if !ok1 || !ok2 {
		return nil, errExpr
	}
	if rng == "*" {
		return boolTerm(tag != ""), nil
	}
	match := strings.EqualFold(tag, rng) ||
		len(tag) > len(rng) && tag[len(rng)] == '-' && strings.EqualFold(tag[:len(rng)], rng)
	return boolTerm(match && rng != ""), nil
}

// regexArgs checks REGEX's and REPLACE's pattern and flags (simple literals)
// and compiles them.
func regexArgs(r *run, pattern rdf.Term, flags rdf.Term) (*compiledRegexp, error) {
	p, ok := simpleLiteral(pattern)
	if !ok {
		return nil, errExpr
	}
	f := ""
	if flags != nil {
		if f, ok = simpleLiteral(flags); !ok {
			return nil, errExpr
		}
	}
	return r.regexp(p, f)
}

// regexFn is REGEX (§17.4.3.14, XPath fn:matches).
func regexFn(r *run, a []rdf.Term) (rdf.Term, error) {
	text, ok := stringLiteral(a[0])
	if !ok {
		return nil, errExpr
	}
	var flags rdf.Term
	if len(a) == 3 {
		flags = a[2]
	}
	re, err := regexArgs(r, a[1], flags)
	if err != nil {
		return nil, err
	}
	// Go's matcher takes time in proportion to the pattern's length times the
	// text's, minutes for long ones; a pattern without flags or metacharacters
	// (F&O §5.6.1) matches where it is a substring.
	if p, _ := simpleLiteral(a[1]); flags == nil && !strings.ContainsAny(p, `\|.-^?*+{}()[]$`) {
		return boolTerm(strings.Contains(text.Lexical, p)), nil
	}
	return boolTerm(re.re.MatchString(text.Lexical)), nil
}

// replaceFn is REPLACE (§17.4.3.15, XPath fn:replace); a pattern that matches
// the empty string is an error, as in XPath (FORX0003).
func replaceFn(r *run, a []rdf.Term) (rdf.Term, error) {
	text, ok := stringLiteral(a[0])
	repl, ok2 := simpleLiteral(a[2])
	if !ok || !ok2 {
		return nil, errExpr
	}
	var flags rdf.Term
	if len(a) == 4 {
		flags = a[3]
	}
	re, err := regexArgs(r, a[1], flags)
	if err != nil {
		return nil, err
	}
	if re.re.MatchString("") {
		return nil, errExpr
	}
	rp, perr := parseReplacement(repl, re.re, re.flags.literal)
	if perr != nil {
		return nil, errExpr
	}
	return sameKind(text, rp.replaceAll(re.re, text.Lexical)), nil
}

func roundFn(fn int) func(*run, []rdf.Term) (rdf.Term, error) {
	return func(_ *run, a []rdf.Term) (rdf.Term, error) {
		n, ok := numberOf(a[0])
		if !ok {
			return nil, errExpr
		}
		return roundNumber(fn, n).literal(), nil
	}
}

// hashFn is MD5, SHA1, SHA256, SHA384 and SHA512 (§17.4.6): the lower-case hex
// digest of the UTF-8 form of a simple literal or xsd:string.
func hashFn(h func() hash.Hash) func(*run, []rdf.Term) (rdf.Term, error) {
	return func(_ *run, a []rdf.Term) (rdf.Term, error) {
		s, ok := simpleLiteral(a[0])
		if !ok {
			return nil, errExpr
		}
		d := h()
		d.Write([]byte(s))
		return rdf.NewString(hex.EncodeToString(d.Sum(nil))), nil
	}
}

// bnode compiles BNODE (§17.4.2.9): without argument a fresh blank node per
// call; with a simple literal, the same blank node for the same string while
// one solution is being evaluated, and a fresh one for the next solution.
func (c *compiler) bnode(args []evalFn) evalFn {
	r := c.r
	if len(args) == 0 {
		return func([]rdf.Term) (rdf.Term, error) { return r.freshBlank(), nil }
	}
	a := args[0]
	return func(sol []rdf.Term) (rdf.Term, error) {
		t, err := a(sol)
		if err != nil {
			return nil, err
		}
		s, ok := simpleLiteral(t)
		if !ok {
			return nil, errExpr
		}
		return r.scopedBlank(s), nil
	}
}

// compiledRegexp is a compiled pattern with the flags it was compiled with.
type compiledRegexp struct {
	re    *regexp.Regexp
	flags regexpFlags
}
