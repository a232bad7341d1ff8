package rdf

import (
	"bytes"
	"errors"
	"flag"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

var update = flag.Bool("update", false, "rewrite the golden files under testdata/")

func quadsOf(ts []Triple) []Quad {
	qs := make([]Quad, len(ts))
	for i, t := range ts {
		qs[i] = Quad{S: t.S, P: t.P, O: t.O}
	}
	return qs
}

// roundTrip writes triples as Turtle, reads them back and checks the graph.
func roundTrip(t *testing.T, name string, ts []Triple, prefixes []Prefix) {
	t.Helper()
	var b bytes.Buffer
	if err := WriteTurtle(&b, ts, prefixes); err != nil {
		t.Fatalf("%s: %v", name, err)
	}
	back, err := ParseTurtle(name, b.Bytes(), "")
	if err != nil {
		t.Fatalf("%s: reading the written Turtle: %v\n%s", name, err, b.String())
	}
	if !Isomorphic(quadsOf(ts), back.Quads()) {
		t.Errorf("%s: the written Turtle reads back as a different graph:\n%s", name, b.String())
	}
}

func TestTurtleRoundTripAwkwardTerms(t *testing.T) {
	// Local names that need escapes or cannot be prefixed names at all, numbers
	// that are not in Turtle's bare forms, and blank node labels that are not
	// valid Turtle labels. Expectations are our own design.
	w := "http://example.com/wind/"
	ts := []Triple{
		{IRI(w + "turbine/T-01"), IRI(w + "ratedPower"), NewTyped("3.6", XSDDecimal)},
		{IRI(w + "turbine/T-01"), IRI(w + "hub.height"), NewTyped("1.0E2", XSDDouble)},
		{IRI(w + "turbine/T-01"), IRI(w + ".hidden"), NewTyped("0x10", XSDInteger)},
		{IRI(w + "turbine/T-01"), IRI(w + "a/b"), NewTyped("yes", XSDBoolean)},
		{IRI(w + "-x"), IRI(w + "p%"), NewLangString("Wartung\n\"jährlich\"", "de")},
		{BlankNode("work order 7"), IRI(w + "p%41"), BlankNode("u_1")},
		{BlankNode("u_1"), IRI(w + "p"), BlankNode("b.")},
		{IRI(w), RDFType, IRI(w + "Site")},
	}
	roundTrip(t, "awkward", ts, []Prefix{{"w", IRI(w)}, {"", IRI(w + "turbine/")}, {"xsd", XSDNS}})
}

func TestWriteTurtleGolden(t *testing.T) {
	// The input is invented demo data; the golden output is reviewed by hand.
	in := filepath.Join("testdata", "windfarm.ttl")
	golden := filepath.Join("testdata", "windfarm.golden.ttl")
	src, err := os.ReadFile(in)
	if err != nil {
		t.Fatal(err)
	}
	doc, err := ParseTurtle(in, src, "http://example.com/wind/")
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if err := WriteTurtle(&b, doc.Triples(), doc.Prefixes); err != nil {
		t.Fatal(err)
	}
	if *update {
		if err := os.WriteFile(golden, b.Bytes(), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(golden)
	if err != nil {
		t.Fatal(err)
	}
	if b.String() != string(want) {
		t.Errorf("WriteTurtle output differs from %s (run go test -update and review the diff):\n%s", golden, b.String())
	}
	roundTrip(t, in, doc.Triples(), doc.Prefixes)
}

func TestWriteNQuads(t *testing.T) {
	qs := []Quad{
		{IRI("http://x/s"), IRI("http://x/p"), NewString("a\"b\n"), nil},
		{BlankNode("b1"), IRI("http://x/p"), NewLangString("x", "en"), IRI("http://x/g")},
		{BlankNode("has space"), IRI("http://x/p"), NewTyped("1", XSDInteger), BlankNode("g")},
	}
	var b bytes.Buffer
	if err := WriteNQuads(&b, qs); err != nil {
		t.Fatal(err)
	}
	// Expected text per the RDF 1.1 N-Quads grammar; the u_ label is our encoding.
	want := `<http://x/s> <http://x/p> "a\"b\n" .
_:b1 <http://x/p> "x"@en <http://x/g> .
_:u_686173207370616365 <http://x/p> "1"^^<http://www.w3.org/2001/XMLSchema#integer> _:g .
`
	if b.String() != want {
		t.Errorf("got\n%s\nwant\n%s", b.String(), want)
	}
	back, err := ParseNQuads("out.nq", b.Bytes())
	if err != nil {
		t.Fatal(err)
	}
	if !Isomorphic(qs, back.Quads()) {
		t.Errorf("N-Quads output reads back as a different dataset")
	}
}

func TestWriteRejectsBadTriples(t *testing.T) {
	tests := []struct {
		name string
		t    Triple
		msg  string
	}{
		{"literal subject", Triple{NewString("x"), IRI("http://x/p"), IRI("http://x/o")}, "as subject"},
		{"blank predicate", Triple{IRI("http://x/s"), BlankNode("p"), IRI("http://x/o")}, "as predicate"},
		{"missing object", Triple{IRI("http://x/s"), IRI("http://x/p"), nil}, "missing term"},
		{"space in IRI", Triple{IRI("http://x/s"), IRI("http://x/p"), IRI("http://x/a b")}, "not allowed in an IRI"},
		{"space in datatype", Triple{IRI("http://x/s"), IRI("http://x/p"), NewTyped("1", "http://x/my type")}, "not allowed in an IRI"},
	}
	for _, tt := range tests {
		var b bytes.Buffer
		for _, err := range []error{WriteNTriples(&b, []Triple{tt.t}), WriteTurtle(&b, []Triple{tt.t}, nil)} {
			if err == nil || !strings.Contains(err.Error(), tt.msg) {
				t.Errorf("%s: got %v, want an error containing %q", tt.name, err, tt.msg)
			}
		}
	}
}

func TestIsomorphic(t *testing.T) {
	p := IRI("http://x/p")
	q := func(s, o Term) Quad { return Quad{S: s, P: p, O: o} }
	a, b, c, d := BlankNode("a"), BlankNode("b"), BlankNode("c"), BlankNode("d")
	tests := []struct {
		name string
		x, y []Quad
		want bool
	}{
		{"renamed chain", []Quad{q(a, b), q(b, IRI("http://x/o"))}, []Quad{q(c, d), q(d, IRI("http://x/o"))}, true},
		{"chain direction differs", []Quad{q(a, b), q(b, IRI("http://x/o"))}, []Quad{q(c, d), q(c, IRI("http://x/o"))}, false},
		// Two 2-cycles versus one 4-cycle: colour refinement alone cannot tell
		// them apart (every node looks alike), so this exercises the search.
		{"two cycles vs one cycle",
			[]Quad{q(a, b), q(b, a), q(c, d), q(d, c)},
			[]Quad{q(a, b), q(b, c), q(c, d), q(d, a)}, false},
		{"cycle renamed", []Quad{q(a, b), q(b, c), q(c, a)}, []Quad{q(b, a), q(c, b), q(a, c)}, true},
		{"duplicates ignored", []Quad{q(a, NewString("x")), q(a, NewString("x"))}, []Quad{q(b, NewString("x"))}, true},
		{"language tag case", []Quad{q(IRI("http://x/s"), NewLangString("x", "en-GB"))}, []Quad{q(IRI("http://x/s"), NewLangString("x", "en-gb"))}, true},
		{"ground differs", []Quad{q(IRI("http://x/s"), NewString("x"))}, []Quad{q(IRI("http://x/s"), NewString("y"))}, false},
		{"graph names matter", []Quad{{S: a, P: p, O: b, G: IRI("http://x/g")}}, []Quad{q(a, b)}, false},
		{"blank graph names", []Quad{{S: a, P: p, O: b, G: c}}, []Quad{{S: d, P: p, O: a, G: b}}, true},
	}
	for _, tt := range tests {
		if got := Isomorphic(tt.x, tt.y); got != tt.want {
			t.Errorf("%s: got %v, want %v", tt.name, got, tt.want)
		}
		if got := Isomorphic(tt.y, tt.x); got != tt.want {
			t.Errorf("%s (swapped): got %v, want %v", tt.name, got, tt.want)
		}
	}
}

func TestResolveIRI(t *testing.T) {
	// RFC 3986 §5.4.1 (normal examples) and §5.4.2 (abnormal examples), written
	// down from memory: the RFC is not among the specifications in /work/shared/specs.
	base := "http://a/b/c/d;p?q"
	tests := map[string]string{
		"g:h": "g:h", "g": "http://a/b/c/g", "./g": "http://a/b/c/g", "g/": "http://a/b/c/g/",
		"/g": "http://a/g", "//g": "http://g", "?y": "http://a/b/c/d;p?y", "g?y": "http://a/b/c/g?y",
		"#s": "http://a/b/c/d;p?q#s", "g#s": "http://a/b/c/g#s", "g?y#s": "http://a/b/c/g?y#s",
		";x": "http://a/b/c/;x", "g;x": "http://a/b/c/g;x", "g;x?y#s": "http://a/b/c/g;x?y#s",
		"": "http://a/b/c/d;p?q", ".": "http://a/b/c/", "./": "http://a/b/c/", "..": "http://a/b/",
		"../": "http://a/b/", "../g": "http://a/b/g", "../..": "http://a/", "../../": "http://a/",
		"../../g": "http://a/g", "../../../g": "http://a/g", "../../../../g": "http://a/g",
		"/./g": "http://a/g", "/../g": "http://a/g", "g.": "http://a/b/c/g.", ".g": "http://a/b/c/.g",
		"g..": "http://a/b/c/g..", "..g": "http://a/b/c/..g", "./../g": "http://a/b/g",
		"./g/.": "http://a/b/c/g/", "g/./h": "http://a/b/c/g/h", "g/../h": "http://a/b/c/h",
		"g;x=1/./y": "http://a/b/c/g;x=1/y", "g;x=1/../y": "http://a/b/c/y", "g?y/./x": "http://a/b/c/g?y/./x",
		"g?y/../x": "http://a/b/c/g?y/../x", "g#s/./x": "http://a/b/c/g#s/./x", "g#s/../x": "http://a/b/c/g#s/../x",
		"http:g": "http:g",
	}
	for ref, want := range tests {
		got, err := ResolveIRI(base, ref)
		if err != nil || got != want {
			t.Errorf("resolve %q: got %q, %v; want %q", ref, got, err, want)
		}
	}
	if _, err := ResolveIRI("", "g"); !errors.Is(err, ErrNoBase) {
		t.Errorf("resolving a relative IRI without a base: got %v, want ErrNoBase", err)
	}
	// Our choices, with no source: a base must be absolute, and "1a:b" is not
	// a scheme (RFC 3986 §3.1: a scheme starts with a letter), so it is a path.
	if _, err := ResolveIRI("a/b", "g"); err == nil {
		t.Error("resolving against the relative base a/b: want an error")
	}
	if got, err := ResolveIRI(base, "1a:b"); err != nil || got != "http://a/b/c/1a:b" {
		t.Errorf("resolve %q: got %q, %v; want %q", "1a:b", got, err, "http://a/b/c/1a:b")
	}
}

func FuzzParseTurtle(f *testing.F) {
	f.Add([]byte("@prefix w: <http://x/> . w:a w:b [ w:c (1 2.5 \"x\"@en) ] ."))
	f.Add([]byte("<http://x/s> <http://x/p> '''a\nb''', _:b1, true ."))
	f.Fuzz(func(t *testing.T, src []byte) {
		doc, err := ParseTurtle("fuzz.ttl", src, "http://x/")
		if err != nil {
			return
		}
		var b bytes.Buffer
		if err := WriteTurtle(&b, doc.Triples(), doc.Prefixes); err != nil {
			t.Fatalf("writing a parsed graph: %v", err)
		}
		back, err := ParseTurtle("again.ttl", b.Bytes(), "")
		if err != nil {
			t.Fatalf("reading written Turtle: %v\n%s", err, b.String())
		}
		if !Isomorphic(doc.Quads(), back.Quads()) {
			t.Fatalf("round trip changed the graph:\n%s", b.String())
		}
	})
}

func FuzzParseNQuads(f *testing.F) {
	f.Add([]byte("<http://x/s> <http://x/p> \"o\\u00e9\"@en _:g .\n_:a <http://x/p> <http://x/o> .\n"))
	f.Fuzz(func(t *testing.T, src []byte) {
		doc, err := ParseNQuads("fuzz.nq", src)
		if err != nil {
			return
		}
		var b bytes.Buffer
		if err := WriteNQuads(&b, doc.Quads()); err != nil {
			t.Fatalf("writing parsed quads: %v", err)
		}
		back, err := ParseNQuads("again.nq", b.Bytes())
		if err != nil {
			t.Fatalf("reading written N-Quads: %v\n%s", err, b.String())
		}
		if !Isomorphic(doc.Quads(), back.Quads()) {
			t.Fatalf("round trip changed the dataset:\n%s", b.String())
		}
	})
}
