package catalog

import (
	"strings"
	"testing"
)

func TestTemplateCheckIRI(t *testing.T) {
	text := func(s string) TemplatePart { return TemplatePart{Text: s} }
	col := func(c string) TemplatePart { return TemplatePart{Column: c} }
	// The characters an IRI may not contain are those RFC 3987 §2.2 leaves out
	// of its grammar (space, controls, <>"{}|\^`); an IRI has one fragment
	// (RFC 3986 §3.5) and '%' starts pct-encoded = "%" HEXDIG HEXDIG (§2.1).
	tests := []struct {
		name  string
		parts []TemplatePart
		want  string // part of the error; empty for a template that can give valid IRIs
	}{
		{"plain", []TemplatePart{text("https://data.example/site/"), col("code")}, ""},
		{"relative (the base IRI goes before it)", []TemplatePart{col("code"), text("/info")}, ""},
		{"escape in the text", []TemplatePart{text("https://data.example/a%20b/"), col("code")}, ""},
		{"one fragment", []TemplatePart{text("https://data.example/site#"), col("code")}, ""},
		{"'%' the value may complete", []TemplatePart{text("https://data.example/%"), col("hex")}, ""},
		{"space", []TemplatePart{text("https://data.example/wind farm/"), col("code")}, `has ' ', which no IRI may contain (write it percent-encoded: %20)`},
		{"angle bracket", []TemplatePart{text("<https://data.example/"), col("code"), text(">")}, `has '<'`},
		{"brace (written \\{ in rr:template)", []TemplatePart{text("https://data.example/{"), col("code")}, `has '{'`},
		{"two fragments", []TemplatePart{text("https://data.example/a#"), col("code"), text("#b")}, "second '#'"},
		{"bad escape", []TemplatePart{text("https://data.example/%zz/"), col("code")}, "not followed by two hexadecimal digits"},
		{"short escape", []TemplatePart{text("https://data.example/%a/"), col("code")}, "not followed by two hexadecimal digits"},
		{"'%' at the end", []TemplatePart{col("code"), text("%")}, "incomplete percent-encoding"},
	}
	for _, tt := range tests {
		err := Template{Parts: tt.parts}.CheckIRI()
		switch {
		case tt.want == "" && err != nil:
			t.Errorf("%s: %v, want no error", tt.name, err)
		case tt.want != "" && (err == nil || !strings.Contains(err.Error(), tt.want)):
			t.Errorf("%s: got %v, want an error with %q", tt.name, err, tt.want)
		}
	}
}

func TestErrorListSorted(t *testing.T) {
	at := func(file string, line, col int, msg string) *Error {
		return &Error{Pos: Pos{File: file, Line: line, Col: col}, Msg: msg}
	}
	list := ErrorList{
		at("b.ttl", 1, 1, "b1"),
		at("a.ttl", 9, 2, "a9"),
		at("c.ttl", 1, 1, "c1"),
		at("a.ttl", 3, 5, "a3"),
		at("a.ttl", 3, 5, "a3"), // a repeat
		{Pos: Pos{File: "a.ttl", Line: 3, Col: 5}, Msg: "a3", Warning: true},
		at("a.ttl", 3, 1, "a3 earlier"),
	}
	var got []string
	for _, e := range list.Sorted("a.ttl", "b.ttl") {
		got = append(got, e.Error())
	}
	want := []string{
		"a.ttl:3:1: a3 earlier", "a.ttl:3:5: a3", "a.ttl:3:5: warning: a3", "a.ttl:9:2: a9",
		"b.ttl:1:1: b1", "c.ttl:1:1: c1",
	}
	if strings.Join(got, "\n") != strings.Join(want, "\n") {
		t.Errorf("sorted:\n%s\nwant:\n%s", strings.Join(got, "\n"), strings.Join(want, "\n"))
	}
	if n := len(list.Errors()); n != 6 {
		t.Errorf("Errors() has %d problems, want the 6 that are not warnings", n)
	}
	if w := list.Warnings(); len(w) != 1 || !w[0].Warning {
		t.Errorf("Warnings() = %v, want the one warning", w)
	}
	if s := list[:2].Error(); s != "b.ttl:1:1: b1 (and 1 more errors)" {
		t.Errorf("Error() = %q", s)
	}
	if s := (&Error{Msg: "no place"}).Error(); s != "no place" {
		t.Errorf("an error without a position shows as %q", s)
	}
}
