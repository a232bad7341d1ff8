package results

import (
	"bytes"
	"io"
	"strings"
	"testing"

	"veneer/catalog/rdf"
)

var graphFormats = []struct {
	name string
	new  func(io.Writer) GraphWriter
}{
	{"Turtle", func(w io.Writer) GraphWriter { return NewTurtle(w, nil) }},
	{"N-Triples", NewNTriples},
	{"JSON-LD", NewJSONLD},
}

// site is a small graph of the wind-farm scenario. Its triples come in the
// order a CONSTRUCT may give them: a subject's triples together, but with
// one predicate coming back after another (ex:name) and a subject coming
// back after another one (ex:T-07).
func site() []rdf.Triple {
	ex := func(s string) rdf.IRI { return rdf.IRI(wind + s) }
	return []rdf.Triple{
		{S: ex("T-07"), P: rdf.RDFType, O: ex("Turbine")},
		{S: ex("T-07"), P: ex("name"), O: rdf.NewLangString("Nordkamm 7", "de")},
		{S: ex("T-07"), P: ex("name"), O: rdf.NewString("North Ridge 7")},
		{S: ex("T-07"), P: ex("ratedMW"), O: rdf.NewTyped("2.5", rdf.XSDDecimal)},
		{S: ex("T-07"), P: ex("name"), O: rdf.NewString("NR-7")},
		{S: rdf.BlankNode("insp1"), P: ex("of"), O: ex("T-07")},
		{S: rdf.BlankNode("insp1"), P: rdf.RDFType, O: rdf.BlankNode("kind")},
		{S: rdf.BlankNode("insp1"), P: rdf.RDFType, O: rdf.NewString("not a class")},
		{S: ex("T-07"), P: ex("operator"), O: rdf.IRI("http://example.org/operator")},
	}
}

// TestTurtleLayout checks the layout of the Turtle writer (its own choice,
// not from a specification) and that catalog/rdf's Turtle reader gives the
// triples back: predicate and object lists for consecutive triples
// (RDF 1.1 Turtle §2.3), "a" for rdf:type (§2.4), the short form of numbers
// (§2.5.2), prefixed names (§2.4) only where the local part needs no escape.
func TestTurtleLayout(t *testing.T) {
	var out bytes.Buffer
	prefixes := []rdf.Prefix{
		{Name: "old", IRI: "http://example.org/elsewhere/"},
		{Name: "w", IRI: "http://example.org/"},
		{Name: "old", IRI: wind}, // redeclared: the last one counts
	}
	if err := writeTriples(NewTurtle(&out, prefixes), site()); err != nil {
		t.Fatal(err)
	}
	want := `@prefix w: <http://example.org/> .
@prefix old: <http://example.org/wind/> .

old:T-07 a old:Turbine ;
    old:name "Nordkamm 7"@de ,
        "North Ridge 7" ;
    old:ratedMW 2.5 ;
    old:name "NR-7" .
_:insp1 old:of old:T-07 ;
    a _:kind ,
        "not a class" .
old:T-07 old:operator w:operator .
`
	if out.String() != want {
		t.Errorf("got:\n%s\nwant:\n%s", out.String(), want)
	}
	doc, err := rdf.ParseTurtle("output", out.Bytes(), "")
	if err != nil {
		t.Fatal(err)
	}
	if d := diffTriples(site(), doc.Triples()); d != "" {
		t.Error(d)
	}
	// IRIs whose local part would need escapes are written whole.
	var esc bytes.Buffer
	if err := writeTriples(NewTurtle(&esc, []rdf.Prefix{{Name: "w", IRI: wind}}), []rdf.Triple{
		{S: rdf.IRI(wind + "a/b"), P: rdf.IRI(wind + "p."), O: rdf.IRI(wind + "x~y")},
	}); err != nil {
		t.Fatal(err)
	}
	if want := "@prefix w: <" + wind + "> .\n\n<" + wind + "a/b> <" + wind + "p.> <" + wind + "x~y> .\n"; esc.String() != want {
		t.Errorf("got %q, want %q", esc.String(), want)
	}
	// A prefix name Turtle cannot declare is an error at Begin.
	if err := NewTurtle(io.Discard, []rdf.Prefix{{Name: "1x", IRI: wind}}).Begin(); err == nil {
		t.Error(`prefix "1x" accepted; PN_PREFIX (RDF 1.1 Turtle [167s]) starts with a letter`)
	}
}

// TestJSONLDLayout checks the expanded JSON-LD the writer produces (JSON-LD
// 1.1, expanded document form; the "Serialize RDF as JSON-LD" algorithm of
// JSON-LD 1.1 Processing Algorithms and API for the terms, from memory): a
// new node object when a predicate or subject comes back, "@type" for
// rdf:type with an IRI or blank node object only.
func TestJSONLDLayout(t *testing.T) {
	var out bytes.Buffer
	if err := writeTriples(NewJSONLD(&out), site()); err != nil {
		t.Fatal(err)
	}
	const w, dt = wind, rdf.XSDNS + "decimal"
	want := `[
{"@id":"` + w + `T-07","@type":["` + w + `Turbine"],"` + w + `name":[{"@value":"Nordkamm 7","@language":"de"},{"@value":"North Ridge 7"}],"` + w + `ratedMW":[{"@value":"2.5","@type":"` + dt + `"}]},
{"@id":"` + w + `T-07","` + w + `name":[{"@value":"NR-7"}]},
{"@id":"_:insp1","` + w + `of":[{"@id":"` + w + `T-07"}],"@type":["_:kind"],"` + rdf.RDFNS + `type":[{"@value":"not a class"}]},
{"@id":"` + w + `T-07","` + w + `operator":[{"@id":"http://example.org/operator"}]}
]
`
	if out.String() != want {
		t.Errorf("got:\n%s\nwant:\n%s", out.String(), want)
	}
	got, err := readJSONLD(out.Bytes())
	if err != nil {
		t.Fatal(err)
	}
	if d := diffTriples(site(), got); d != "" {
		t.Error(d)
	}
	var empty bytes.Buffer
	if err := writeTriples(NewJSONLD(&empty), nil); err != nil || empty.String() != "[\n]\n" {
		t.Errorf("empty graph: %q (%v)", empty.String(), err)
	}
}

// TestGraphRejects checks that a triple RDF 1.1 Concepts §3.1 does not allow
// (literal subject, non-IRI predicate, missing term) is an error in every
// graph writer, and the writer is spent.
func TestGraphRejects(t *testing.T) {
	iri := rdf.IRI(wind + "T-07")
	for _, tr := range []rdf.Triple{
		{S: rdf.NewString("x"), P: iri, O: iri},
		{S: iri, P: rdf.BlankNode("p"), O: iri},
		{S: iri, P: rdf.NewString("p"), O: iri},
		{S: nil, P: iri, O: iri},
		{S: iri, P: iri, O: nil},
	} {
		for _, g := range graphFormats {
			var out bytes.Buffer
			gw := g.new(&out)
			if err := gw.Begin(); err != nil {
				t.Fatal(err)
			}
			head := out.Len()
			err := gw.Triple(tr)
			if err == nil {
				t.Errorf("%s: %v accepted", g.name, tr)
				continue
			}
			if end := gw.End(); end != err || out.Len() != head {
				t.Errorf("%s: after %v: End = %v, %d bytes written", g.name, err, end, out.Len()-head)
			}
		}
	}
	// Terms the syntax cannot write.
	for _, o := range []rdf.Term{rdf.NewString("bad \xff"), rdf.IRI("http://example.org/a b"), rdf.NewLangString("x", "en_GB")} {
		for _, g := range graphFormats {
			if g.name == "JSON-LD" {
				if _, isIRI := o.(rdf.IRI); isIRI || strings.Contains(o.(rdf.Literal).Lang, "_") {
					continue // JSON strings can hold them
				}
			}
			gw := g.new(io.Discard)
			if err := gw.Begin(); err != nil {
				t.Fatal(err)
			}
			if err := gw.Triple(rdf.Triple{S: iri, P: iri, O: o}); err == nil {
				t.Errorf("%s: object %#v accepted", g.name, o)
			}
		}
	}
}
