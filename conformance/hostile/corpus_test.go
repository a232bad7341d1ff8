package hostile

import (
	"strings"
	"testing"
)

func TestReadValues(t *testing.T) {
	vals, err := ReadValues("v.txt", []byte("# comment\n\n\"a\\x00b\"\n  \"'\" * 3\n"))
	if err != nil || len(vals) != 2 || vals[0] != (Value{"a\x00b", 3}) || vals[1] != (Value{"'''", 4}) {
		t.Fatalf("got %+v, %v", vals, err)
	}
	for _, bad := range []string{"'single'", "\"x\" * 0", "\"x\" 3", "\"open"} {
		_, err := ReadValues("v.txt", []byte("\"ok\"\n"+bad+"\n"))
		if err == nil || !strings.HasPrefix(err.Error(), "v.txt:2: ") {
			t.Errorf("%s: error %v, want one naming v.txt:2", bad, err)
		}
	}
}

// TestLiteral checks the escapes against SPARQL 1.1 Query §19.7 (ECHAR) and
// §19.2 (UCHAR), by hand.
func TestLiteral(t *testing.T) {
	cases := []struct {
		in      string
		escaped bool
		want    string
	}{
		{"a\"b\\c\nd\re\tf", false, `"a\"b\\c\nd\re` + "\t" + `f"`},
		{"é\x00😀", true, `"\u00E9\u0000\U0001F600"`},
		{"\xed\xa0\x80", true, `"\uD800"`},
		{"\xed\xa0\x80", false, "\"\xed\xa0\x80\""},
		{"\xff", true, "\"\xff\""},
	}
	for _, c := range cases {
		if got := Literal(c.in, c.escaped); got != c.want {
			t.Errorf("Literal(%q, %t) = %q, want %q", c.in, c.escaped, got, c.want)
		}
	}
	if got := IRIPart("a b/\xffé"); got != "a%20b%2F%FFé" {
		t.Errorf("IRIPart = %q", got)
	}
	if got := RegexQuote(`a.b*c\d`); got != `a\.b\*c\\d` {
		t.Errorf("RegexQuote = %q", got)
	}
}
