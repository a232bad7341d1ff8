package sparql

import (
	"fmt"
	"strings"
	"testing"
)

// tokens lexes src and prints each token as type:value, stopping after EOF or
// the first error.
func tokens(src string) string {
	l := newLexer(src)
	var out []string
	names := map[tokenType]string{
		tokEOF: "eof", tokError: "error", tokIRI: "iri", tokPNameNS: "ns", tokPNameLN: "ln",
		tokBlank: "blank", tokVar: "var", tokLangTag: "lang", tokInteger: "int", tokDecimal: "dec",
		tokDouble: "dbl", tokString: "str", tokWord: "word", tokPunct: "p",
	}
	for {
		t := l.next()
		s := names[t.typ] + ":" + t.val
		if t.typ == tokPNameLN {
			s += "|" + t.local
		}
		out = append(out, s)
		if t.typ == tokEOF || t.typ == tokError {
			return strings.Join(out, " ")
		}
	}
}

// TestLexer checks tokenisation. Cases marked §19.x come from that section of
// SPARQL 1.1 Query; the others follow the terminal productions of §19.8.
func TestLexer(t *testing.T) {
	tests := []struct{ src, want string }{
		// §19.3: an IRI between two variables, not a comparison.
		{"?a<?b&&?c>?d", "var:a iri:?b&&?c var:d eof:"},
		{"?a < ?b", "var:a p:< var:b eof:"},
		{"?a<=?b", "var:a p:<= var:b eof:"},
		// §19.2 examples of codepoint escapes.
		{`<ab\u00E9xy>`, "iri:abéxy eof:"},
		{`\u03B1:a`, "ln:α|a eof:"},
		{`a\u003Ab`, "ln:a|b eof:"},
		// §19.7 string escapes.
		{`"abc\n" 'xy\tz' """a"b""c""" '''it's'''`, "str:abc\n str:xy\tz str:a\"b\"\"c str:it's eof:"},
		// §19.8 [116] notes: a sign directly before a number is part of it.
		{"?x-1 ?x - 1 +.5 -2e3 1. 1.e2", "var:x int:-1 var:x p:- int:1 dec:+.5 dbl:-2e3 int:1 p:. dbl:1.e2 eof:"},
		{"$v ?v1 ?_x ?", "var:v var:v1 var:_x p:? eof:"},
		{"_:b1 _:a.b _:x. []", "blank:b1 blank:a.b blank:x p:. p:[ p:] eof:"},
		{"ex: ex:a.b ex:a. :x", "ns:ex ln:ex|a.b ln:ex|a p:. ln:|x eof:"},
		{`ex:a\-b ex:%41 ex:a:b ex:1`, "ln:ex|a-b ln:ex|%41 ln:ex|a:b ln:ex|1 eof:"},
		{`"x"@en-GB "y"^^xsd:int`, "str:x lang:en-GB str:y p:^^ ln:xsd|int eof:"},
		{"SELECT a true # comment\nFILTER", "word:SELECT word:a word:true word:FILTER eof:"},
		{"|| && != ^ | ! / * +", "p:|| p:&& p:!= p:^ p:| p:! p:/ p:* p:+ eof:"},
		// Errors.
		{`"abc`, "error:string is not closed before the end of the query"},
		{"\"a\nb\"", `error:line break in a string; use \n or a long string ("""...""")`},
		{`"\q"`, `error:invalid escape sequence in string: \q`},
		{`'\uD800'`, `error:the escape \uD800 does not name a Unicode character`},
		{"?x \xff", "var:x error:invalid UTF-8 byte 0xFF"},
		{`ex:a\q`, `error:invalid escape in a local name: \q`},
		{"@", "error:expected a language tag after '@'"},
		{"~", "error:unexpected character '~'"},
	}
	for _, tc := range tests {
		if got := tokens(tc.src); got != tc.want {
			t.Errorf("lex %q\n got %s\nwant %s", tc.src, got, tc.want)
		}
	}
}

// TestLexerPositions checks that tokens carry the byte offsets of their text.
func TestLexerPositions(t *testing.T) {
	src := "SELECT ?é\n  <a>"
	l := newLexer(src)
	var got []string
	for tok := l.next(); tok.typ != tokEOF; tok = l.next() {
		got = append(got, fmt.Sprintf("%d-%d", tok.pos, tok.end))
	}
	if want := "0-6 7-10 13-16"; strings.Join(got, " ") != want {
		t.Errorf("positions %v, want %s", got, want)
	}
}
