package catalog

import (
	"testing"
	"time"

	"veneer/catalog/source"
)

func TestIRISafe(t *testing.T) {
	// The examples of R2RML §7.3 (the table of IRI-safe versions of strings), as
	// remembered from the specification.
	cases := map[string]string{
		"42":                   "42",
		"Hello World!":         "Hello%20World%21",
		"2011-08-23T22:17:00Z": "2011-08-23T22%3A17%3A00Z",
		"~A_17.1-2":            "~A_17.1-2",
		"葉篤正":                  "葉篤正",
	}
	for in, want := range cases {
		if got := IRISafe(in); got != want {
			t.Errorf("IRISafe(%q) = %q, want %q", in, got, want)
		}
		back, ok := unIRISafe(want)
		if !ok || back != in {
			t.Errorf("unIRISafe(%q) = %q, %v; want %q", want, back, ok, in)
		}
	}
	// Strings IRISafe cannot produce decode to nothing: a reserved character left
	// bare, an encoded unreserved one, a broken escape.
	for _, s := range []string{"a/b", "%41", "%4", "%zz"} {
		if v, ok := unIRISafe(s); ok {
			t.Errorf("unIRISafe(%q) = %q, want no match", s, v)
		}
	}
}

func TestTemplateMatch(t *testing.T) {
	tmpl := Template{Parts: []TemplatePart{
		{Text: "https://data.example/part/"}, {Column: "num"}, {Text: "/rev/"}, {Column: "rev"},
	}}
	cases := []struct {
		iri  string
		want map[string]string
	}{
		{"https://data.example/part/AB%2F7/rev/3", map[string]string{"num": "AB/7", "rev": "3"}},
		{"https://data.example/part/X/rev/", map[string]string{"num": "X", "rev": ""}},
		{"https://data.example/other/X/rev/1", nil},
		{"https://data.example/part/A B/rev/1", nil}, // a space is never left bare
	}
	for _, c := range cases {
		got, ok := tmpl.Match(c.iri, true)
		if c.want == nil {
			if ok {
				t.Errorf("Match(%q) = %v, want no match", c.iri, got)
			}
			continue
		}
		if !ok || len(got) != len(c.want) || got["num"] != c.want["num"] || got["rev"] != c.want["rev"] {
			t.Errorf("Match(%q) = %v, %v; want %v", c.iri, got, ok, c.want)
			continue
		}
		back, _ := tmpl.AppendExpand(nil, nil, true, func(dst []byte, k int) []byte { return append(dst, got[tmpl.Columns()[k]]...) })
		if string(back) != c.iri {
			t.Errorf("Expand(Match(%q)) = %q", c.iri, back)
		}
	}
}

func TestLexical(t *testing.T) {
	date := time.Date(2009, 10, 10, 12, 12, 22, 0, time.UTC)
	cases := []struct {
		v    any
		kind source.TypeKind
		want string
		src  string
	}{
		// RDB2RDF test cases, D016 and D005 expected graphs.
		{30.0, source.TypeFloat, "3.0E1", "RDB2RDF D005 mapped*.nq"},
		{80.25, source.TypeFloat, "8.025E1", "RDB2RDF D016 mappedb.nq"},
		{1.65, source.TypeFloat, "1.65E0", "RDB2RDF D016 mappedb.nq"},
		{date, source.TypeTimestamp, "2009-10-10T12:12:22", "RDB2RDF D016 mappedb.nq"},
		{"2009-10-10 12:12:22", source.TypeTimestamp, "2009-10-10T12:12:22", "RDB2RDF D016, as SQLite stores it"},
		{false, source.TypeBoolean, "false", "RDB2RDF D016 mappedb.nq"},
		{int64(1), source.TypeBoolean, "true", "MySQL BOOLEAN is TINYINT(1); common practice, no source"},
		{[]byte{0x89, 0x50, 0x4e}, source.TypeBinary, "89504E", "RDB2RDF D016 directGraph.ttl (upper-case hex)"},
		// XML Schema 1.1 Part 2 canonical mappings (§3.3.3.2 decimal, §3.3.5.2 double), from memory.
		{"12.50", source.TypeDecimal, "12.5", "XSD 1.1 decimal canonical form"},
		{"-0.0", source.TypeDecimal, "0", "XSD 1.1 decimal canonical form"},
		{"0012", source.TypeDecimal, "12", "XSD 1.1 decimal canonical form"},
		{int64(-7), source.TypeInteger, "-7", "XSD integer canonical form"},
		{0.0, source.TypeFloat, "0.0E0", "XSD 1.1 double canonical form"},
		{date, source.TypeDate, "2009-10-10", "XSD date canonical form"},
	}
	for _, c := range cases {
		if got := Lexical(c.v, c.kind); got != c.want {
			t.Errorf("Lexical(%#v, %v) = %q, want %q (%s)", c.v, c.kind, got, c.want, c.src)
		}
		if got := AppendLexical([]byte("x"), c.v, c.kind); string(got) != "x"+c.want {
			t.Errorf("AppendLexical(x, %#v, %v) = %q, want x%q (%s)", c.v, c.kind, got, c.want, c.src)
		}
	}
}

func TestAppendTextLexical(t *testing.T) {
	cases := []struct {
		text string
		kind source.TypeKind
		want string
		src  string
	}{
		{"2009-10-10 12:12:22", source.TypeTimestamp, "2009-10-10T12:12:22", "RDB2RDF D016 mappedb.nq, as PostgreSQL prints the value"},
		// XML Schema 1.1 Part 2 §3.3.7.2 dateTime canonical form: no trailing
		// zeros in the fraction, no point without digits (from memory).
		{"2009-10-10 12:12:22.500000", source.TypeTimestamp, "2009-10-10T12:12:22.5", "XSD 1.1 dateTime canonical form"},
		{"2009-10-10 12:12:22.000", source.TypeTimestamp, "2009-10-10T12:12:22", "XSD 1.1 dateTime canonical form"},
		{"2009-10-10 12:12:22.123456789", source.TypeTimestamp, "2009-10-10T12:12:22.123456789", "XSD 1.1 dateTime canonical form"},
		{"-7", source.TypeInteger, "-7", "XSD integer canonical form"},
		{"Nacelle \"A\"", source.TypeString, "Nacelle \"A\"", "R2RML §10.2: strings map to themselves"},
		// XML Schema 1.1 Part 2 §3.3.3.2 decimalCanonicalMap: no leading or
		// trailing zeros, no point for an integer value, no sign for zero
		// (from memory).
		{"95.50", source.TypeDecimal, "95.5", "XSD 1.1 decimal canonical form"},
		{"120", source.TypeDecimal, "120", "XSD 1.1 decimal canonical form"},
		{"-0.50", source.TypeDecimal, "-0.5", "XSD 1.1 decimal canonical form"},
		{"0.000", source.TypeDecimal, "0", "XSD 1.1 decimal canonical form"},
		{"-0", source.TypeDecimal, "0", "XSD 1.1 decimal canonical form"},
		{"007.10", source.TypeDecimal, "7.1", "XSD 1.1 decimal canonical form"},
		{".5", source.TypeDecimal, "0.5", "XSD 1.1 decimal canonical form"},
		{"+3.0", source.TypeDecimal, "3", "XSD 1.1 decimal canonical form"},
	}
	for _, c := range cases {
		got, ok := AppendTextLexical([]byte("x"), []byte(c.text), c.kind)
		if !ok || string(got) != "x"+c.want {
			t.Errorf("AppendTextLexical(x, %q, %v) = %q, %v; want x%q (%s)", c.text, c.kind, got, ok, c.want, c.src)
		}
		// The same as the value's own lexical form, once decoded.
		var v any = c.text
		if c.kind == source.TypeTimestamp {
			v, _ = time.Parse("2006-01-02 15:04:05.999999999", c.text)
		}
		if lex := Lexical(v, c.kind); lex != c.want {
			t.Errorf("Lexical(%#v) = %q, but the text gives %q", v, lex, c.want)
		}
	}
	for _, kind := range []source.TypeKind{source.TypeBoolean, source.TypeFloat, source.TypeTimestampTZ} {
		if got, ok := AppendTextLexical(nil, []byte("1"), kind); ok {
			t.Errorf("AppendTextLexical for %v = %q, want no plain form", kind, got)
		}
	}
}

func TestParseLexicalRoundTrip(t *testing.T) {
	cases := []struct {
		lexical string
		kind    source.TypeKind
		ok      bool
	}{
		{"42", source.TypeInteger, true},
		{"042", source.TypeInteger, false}, // not canonical: no column value yields it
		{"+42", source.TypeInteger, false},
		{"4.2", source.TypeInteger, false},
		{"true", source.TypeBoolean, true},
		{"1", source.TypeBoolean, false},
		{"2021-03-04", source.TypeDate, true},
		{"2021-3-4", source.TypeDate, false},
		{"anything", source.TypeString, true},
	}
	for _, c := range cases {
		v, ok := ParseLexical(c.lexical, c.kind)
		if ok != c.ok {
			t.Errorf("ParseLexical(%q, %v) ok = %v, want %v", c.lexical, c.kind, ok, c.ok)
			continue
		}
		if ok && Lexical(v, c.kind) != c.lexical {
			t.Errorf("Lexical(ParseLexical(%q)) = %q", c.lexical, Lexical(v, c.kind))
		}
	}
}

func TestParseName(t *testing.T) {
	cases := []struct {
		in   string
		want []Ident
		err  bool
	}{
		{in: "turbine", want: []Ident{{Name: "turbine"}}},
		{in: `maint."Work Order"`, want: []Ident{{Name: "maint"}, {Name: "Work Order", Quoted: true}}},
		{in: `"Say ""hi"""`, want: []Ident{{Name: `Say "hi"`, Quoted: true}}},
		{in: "drop table x", err: true},
		{in: `"open`, err: true},
		{in: "a..b", err: true},
		{in: "1abc", err: true},
	}
	for _, c := range cases {
		got, err := ParseName(c.in)
		if (err != nil) != c.err {
			t.Errorf("ParseName(%q) error = %v, want error %v", c.in, err, c.err)
			continue
		}
		if c.err {
			continue
		}
		if len(got) != len(c.want) {
			t.Errorf("ParseName(%q) = %v, want %v", c.in, got, c.want)
			continue
		}
		for i := range got {
			if got[i] != c.want[i] {
				t.Errorf("ParseName(%q) = %v, want %v", c.in, got, c.want)
			}
		}
	}
}

func TestIdentMatches(t *testing.T) {
	// RDB2RDF test R2RMLTC0002f: a regular identifier ID matches the delimited column
	// "ID", while a regular Name does not match "Name" (regular identifiers fold).
	if !(Ident{Name: "ID"}).Matches("ID") {
		t.Error("regular ID should match column ID")
	}
	if (Ident{Name: "Name"}).Matches("Name") {
		t.Error("regular Name should not match column Name")
	}
	if !(Ident{Name: "site_id"}).Matches("site_id") {
		t.Error("regular site_id should match column site_id")
	}
	if !(Ident{Name: "Name", Quoted: true}).Matches("Name") {
		t.Error(`delimited "Name" should match column Name`)
	}
}

// TestAppendTextDecimalAgainstRat checks the digit-only canonical decimal
// against canonicalDecimal, which goes through math/big.Rat from Go's
// standard library, over every decimal text of up to two digits each side of
// the point with signs and zeros, and refuses what is not a decimal.
func TestAppendTextDecimalAgainstRat(t *testing.T) {
	parts := []string{"", "0", "00", "5", "05", "50", "12", "90"}
	for _, sign := range []string{"", "-", "+"} {
		for _, whole := range parts {
			for _, frac := range parts {
				for _, point := range []string{"", "."} {
					text := sign + whole + point + frac
					if point == "" && frac != "" || whole+frac == "" {
						continue
					}
					got, ok := appendTextDecimal(nil, []byte(text))
					if want := canonicalDecimal(text); !ok || string(got) != want {
						t.Errorf("appendTextDecimal(%q) = %q, %v; canonicalDecimal gives %q", text, got, ok, want)
					}
				}
			}
		}
	}
	for _, bad := range []string{"", "-", ".", "1.2.3", "1e5", "NaN", "Infinity", " 1", "1,5"} {
		if got, ok := appendTextDecimal(nil, []byte(bad)); ok {
			t.Errorf("appendTextDecimal(%q) = %q, want a refusal", bad, got)
		}
	}
}
