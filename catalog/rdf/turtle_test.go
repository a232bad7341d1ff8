package rdf

import (
	"errors"
	"strings"
	"testing"
)

const ex = "http://example.com/wind/"

func TestParseTurtleTerms(t *testing.T) {
	// Expected terms follow the RDF 1.1 Turtle grammar (§6.5) and the term
	// rules of §7; the inputs use the wind-farm demo vocabulary.
	tests := []struct {
		name string
		src  string
		want []Triple
	}{
		{"prefixed names and a", `@prefix w: <` + ex + `> . w:T1 a w:Turbine .`,
			[]Triple{{IRI(ex + "T1"), RDFType, IRI(ex + "Turbine")}}},
		{"SPARQL style directives", "PREFIX w: <http://example.com/>\nBASE <http://example.com/wind/>\n<T1> w:p <#x> .",
			[]Triple{{IRI(ex + "T1"), IRI("http://example.com/p"), IRI(ex + "#x")}}},
		{"local name escapes and percent", `@prefix w: <` + ex + `> . w:a\~b w:c%20d w:e.f .`,
			[]Triple{{IRI(ex + "a~b"), IRI(ex + "c%20d"), IRI(ex + "e.f")}}},
		{"numbers", `<` + ex + `s> <` + ex + `p> 1, -2.5, 3e2, .5 .`,
			[]Triple{
				{IRI(ex + "s"), IRI(ex + "p"), NewTyped("1", XSDInteger)},
				{IRI(ex + "s"), IRI(ex + "p"), NewTyped("-2.5", XSDDecimal)},
				{IRI(ex + "s"), IRI(ex + "p"), NewTyped("3e2", XSDDouble)},
				{IRI(ex + "s"), IRI(ex + "p"), NewTyped(".5", XSDDecimal)},
			}},
		{"integer before the final dot", `<` + ex + `s> <` + ex + `p> 7.`,
			[]Triple{{IRI(ex + "s"), IRI(ex + "p"), NewTyped("7", XSDInteger)}}},
		{"strings", `<` + ex + `s> <` + ex + `p> "a\tb", 'c', """d"e""", '''f
g'''@en-GB, "h"^^<` + ex + `t>, true .`,
			[]Triple{
				{IRI(ex + "s"), IRI(ex + "p"), NewString("a\tb")},
				{IRI(ex + "s"), IRI(ex + "p"), NewString("c")},
				{IRI(ex + "s"), IRI(ex + "p"), NewString(`d"e`)},
				{IRI(ex + "s"), IRI(ex + "p"), NewLangString("f\ng", "en-GB")},
				{IRI(ex + "s"), IRI(ex + "p"), NewTyped("h", IRI(ex+"t"))},
				{IRI(ex + "s"), IRI(ex + "p"), NewTyped("true", XSDBoolean)},
			}},
		{"unicode escapes", `<` + ex + `\u00e9> <` + ex + `p> "\U0001F300" .`,
			[]Triple{{IRI(ex + "é"), IRI(ex + "p"), NewString("\U0001F300")}}},
		{"property list and collection", `@prefix w: <` + ex + `> . [ w:p (1) ] .`,
			[]Triple{
				{BlankNode("b2"), RDFFirst, NewTyped("1", XSDInteger)},
				{BlankNode("b2"), RDFRest, RDFNil},
				{BlankNode("b1"), IRI(ex + "p"), BlankNode("b2")},
			}},
		{"made-up labels avoid the document's", `_:b1 <` + ex + `p> [] , _:b1 .`,
			[]Triple{{BlankNode("b1"), IRI(ex + "p"), BlankNode("b2")}, {BlankNode("b1"), IRI(ex + "p"), BlankNode("b1")}}},
		{"document label seen after a made-up one", `[] <` + ex + `p> _:b1 .`,
			[]Triple{{BlankNode("b1"), IRI(ex + "p"), BlankNode("b2")}}},
		{"relative IRIs", `@base <http://example.com/a/b/c> . <../d> <?q> <//h/p> .`,
			[]Triple{{IRI("http://example.com/a/d"), IRI("http://example.com/a/b/c?q"), IRI("http://h/p")}}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			doc, err := ParseTurtle("t.ttl", []byte(tt.src), "")
			if err != nil {
				t.Fatal(err)
			}
			got := doc.Triples()
			if len(got) != len(tt.want) {
				t.Fatalf("got %d triples %v, want %v", len(got), got, tt.want)
			}
			for i := range got {
				if !SameTerm(got[i].S, tt.want[i].S) || !SameTerm(got[i].P, tt.want[i].P) || !SameTerm(got[i].O, tt.want[i].O) {
					t.Errorf("triple %d: got %v, want %v", i, got[i], tt.want[i])
				}
			}
		})
	}
}

func TestParseTurtleErrors(t *testing.T) {
	// Each input breaks a rule of the RDF 1.1 Turtle grammar (§6.5); the
	// positions and wording are our own design.
	tests := []struct {
		src       string
		line, col int
		msg       string
	}{
		{"<http://x/s> <http://x/p> .", 1, 27, "expected an object"},
		{"<http://x/s> <http://x/p> <http://x/o>", 1, 39, "expected '.' at the end of the statement, found end of input"},
		{"@prefix w: <http://x/> .\nw:s w:p w:o ;\n  x:q 1 .", 3, 3, `undefined prefix "x:"`},
		{"<http://x/s> <http://x/p> \"abc\n\" .", 1, 31, "line break in a string"},
		{"<http://x/s> <http://x/p> \"abc .", 1, 27, "unterminated string"},
		{"<http://x/s> <http://x/p> \"\\q\" .", 1, 28, "invalid escape"},
		{"<http://x/s> <http://x/p> 1e .", 1, 27, "expected digits in the exponent"},
		{"<http://x/a b> <http://x/p> 1 .", 1, 12, `character ' ' is not allowed in an IRI`},
		{"<s> <http://x/p> 1 .", 1, 1, "relative IRI"},
		{"\"lit\" <http://x/p> 1 .", 1, 1, "expected a subject"},
		{"<http://x/s> _:b 1 .", 1, 14, "expected a predicate"},
		{"<http://x/s> <http://x/p> [ <http://x/q> 1 .", 1, 44, "expected ']' to close"},
		{"<http://x/s> <http://x/p> ( 1 .", 1, 31, "expected an object"},
		{"@prefix w <http://x/> .", 1, 9, "unknown word \"w\""},
		{"@base <http://x/>", 1, 18, "expected '.' after the @base directive"},
		{"<http://x/s> <http://x/p> \"x\"@en-1a- .", 1, 37, "expected letters or digits after '-'"},
		{"<http://x/é> <http://x/p> ? .", 1, 27, "unexpected character '?'"},
		{"w:s\xff", 1, 4, "invalid UTF-8"},
	}
	for _, tt := range tests {
		t.Run(tt.src, func(t *testing.T) {
			_, err := ParseTurtle("bad.ttl", []byte(tt.src), "")
			var se *SyntaxError
			if !errors.As(err, &se) {
				t.Fatalf("got %v, want a *SyntaxError", err)
			}
			if se.Pos.Line != tt.line || se.Pos.Col != tt.col || !strings.Contains(se.Msg, tt.msg) {
				t.Errorf("got %d:%d %q, want %d:%d containing %q", se.Pos.Line, se.Pos.Col, se.Msg, tt.line, tt.col, tt.msg)
			}
			if !strings.HasPrefix(err.Error(), "bad.ttl: line ") {
				t.Errorf("error %q does not start with the name and line", err)
			}
		})
	}
}

func TestSyntaxErrorShowsSourceLine(t *testing.T) {
	_, err := ParseTurtle("m.ttl", []byte("@prefix w: <http://x/> .\n\tw:s w:p ;\n"), "")
	// Format is our own design: message, then the source line and a caret.
	want := "m.ttl: line 2, column 10: expected an object (IRI, prefixed name, blank node, collection, [ ... ] or literal), found ';'\n\t w:s w:p ;\n\t         ^"
	if err == nil || err.Error() != want {
		t.Errorf("got\n%v\nwant\n%s", err, want)
	}
}

func TestStatementPositions(t *testing.T) {
	src := "@prefix w: <http://x/> .\n" +
		"w:T1 a w:Turbine ;\n" +
		"   w:site [ w:name \"Kelda\" ] .\n"
	doc, err := ParseTurtle("p.ttl", []byte(src), "")
	if err != nil {
		t.Fatal(err)
	}
	// Positions are where each term starts (our design), columns counted from 1.
	want := [][3]Pos{
		{{Line: 2, Col: 1}, {Line: 2, Col: 6}, {Line: 2, Col: 8}},
		{{Line: 3, Col: 11}, {Line: 3, Col: 13}, {Line: 3, Col: 20}},
		{{Line: 2, Col: 1}, {Line: 3, Col: 4}, {Line: 3, Col: 11}},
	}
	if len(doc.Statements) != len(want) {
		t.Fatalf("got %d statements, want %d", len(doc.Statements), len(want))
	}
	for i, st := range doc.Statements {
		got := [3]Pos{st.SubjectPos, st.PredicatePos, st.ObjectPos}
		for j := range got {
			if got[j].Line != want[i][j].Line || got[j].Col != want[i][j].Col {
				t.Errorf("statement %d (%v) term %d at %v, want %v", i, st.Triple(), j, got[j], want[i][j])
			}
		}
	}
}

func TestParseNQuadsErrors(t *testing.T) {
	// Rules from the RDF 1.1 N-Triples and N-Quads grammars; every bad line is reported.
	src := "<http://x/s> <http://x/p> <http://x/o> <http://x/g> .\n" +
		"<http://x/s> <http://x/p> 'single' .\n" +
		"<http://x/s> <http://x/p> <rel> .\n" +
		"<http://x/s> <http://x/p> \"ok\" . <http://x/s> <http://x/p> \"two\" .\n" +
		"_:b <http://x/p> \"ok\"@en _:g .\n"
	_, err := ParseNQuads("q.nq", []byte(src))
	var list ErrorList
	if !errors.As(err, &list) {
		t.Fatalf("got %v, want an ErrorList", err)
	}
	want := []struct {
		line int
		msg  string
	}{
		{2, "expected a string in double quotes"},
		{3, "relative IRI <rel>"},
		{4, "one statement per line"},
	}
	if len(list) != len(want) {
		t.Fatalf("got %d errors:\n%v", len(list), err)
	}
	for i, w := range want {
		if list[i].Pos.Line != w.line || !strings.Contains(list[i].Msg, w.msg) {
			t.Errorf("error %d: got line %d %q, want line %d containing %q", i, list[i].Pos.Line, list[i].Msg, w.line, w.msg)
		}
	}
}
