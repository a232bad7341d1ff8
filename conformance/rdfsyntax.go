package conformance

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"veneer/catalog/rdf"
)

// The RDF 1.1 syntax suites (rdf-tests/rdf/rdf11/rdf-turtle, rdf-n-triples,
// rdf-n-quads). Each folder's manifest.ttl lists its tests in an mf:entries
// collection; a test's rdf:type (in the rdft: vocabulary) says what it
// expects, its mf:action is the document to read and, for an evaluation test,
// mf:result the N-Triples of the graph the document means. The Turtle
// manifest's mf:assumedTestBase is the base IRI the expected graphs were made
// with: a document is read with that IRI followed by its file name.
const (
	rdftNS        = "http://www.w3.org/ns/rdftest#"
	mfAssumedBase = rdf.IRI(testManifestNS + "assumedTestBase")
)

// rdfSyntaxSuite is one of the RDF syntax suites: its folder under
// rdf-tests/rdf/rdf11, the prefix of its test types in the rdft: vocabulary
// and the reader of its documents.
type rdfSyntaxSuite struct {
	name, folder, typePrefix string
	parse                    func(name string, src []byte, base string) (*rdf.Document, error)
}

// Turtle is the suite "turtle": the RDF 1.1 Turtle tests (rdf-turtle) read by
// rdf.ParseTurtle. A test's identifier is its name in the manifest (the
// fragment of its IRI), such as "turtle-syntax-file-01".
func Turtle() Suite {
	return rdfSyntaxSuite{name: "turtle", folder: "rdf-turtle", typePrefix: "TestTurtle", parse: rdf.ParseTurtle}
}

// NTriples is the suite "ntriples": the RDF 1.1 N-Triples tests
// (rdf-n-triples) read by rdf.ParseNTriples; identifiers as in Turtle.
func NTriples() Suite {
	return rdfSyntaxSuite{name: "ntriples", folder: "rdf-n-triples", typePrefix: "TestNTriples",
		parse: func(name string, src []byte, _ string) (*rdf.Document, error) { return rdf.ParseNTriples(name, src) }}
}

// NQuads is the suite "nquads": the RDF 1.1 N-Quads tests (rdf-n-quads) read
// by rdf.ParseNQuads; identifiers as in Turtle.
func NQuads() Suite {
	return rdfSyntaxSuite{name: "nquads", folder: "rdf-n-quads", typePrefix: "TestNQuads",
		parse: func(name string, src []byte, _ string) (*rdf.Document, error) { return rdf.ParseNQuads(name, src) }}
}

func (s rdfSyntaxSuite) Name() string      { return s.name }
func (rdfSyntaxSuite) NeedsDatabase() bool { return false }

// The kinds of test, the rdft: type without the suite's prefix (RDF 1.1
// Turtle, N-Triples and N-Quads test suites; rdf-tests/ns/rdftest.ttl).
const (
	rdfPositiveSyntax = "PositiveSyntax"
	rdfNegativeSyntax = "NegativeSyntax"
	rdfEval           = "Eval"
	rdfNegativeEval   = "NegativeEval"
)

// Load reads the suite's manifest; its tests are one group.
func (s rdfSyntaxSuite) Load(dir string) ([]*Group, error) {
	folder := filepath.Join(dir, "rdf-tests", "rdf", "rdf11", s.folder)
	m, err := ReadManifest(filepath.Join(folder, "manifest.ttl"))
	if err != nil {
		return nil, err
	}
	manifest, entries, err := m.Entries()
	if err != nil {
		return nil, err
	}
	assumed, err := m.Object(manifest, mfAssumedBase)
	if err != nil {
		return nil, err
	}
	base, _ := assumed.(rdf.IRI)
	g := &Group{Name: s.folder}
	for _, e := range entries {
		t, err := s.readTest(m, e, base)
		if err != nil {
			return nil, err
		}
		g.Tests = append(g.Tests, t)
	}
	return []*Group{g}, nil
}

// readTest reads one entry of the manifest; base is the manifest's
// mf:assumedTestBase, or empty.
func (s rdfSyntaxSuite) readTest(m *Manifest, entry rdf.Term, base rdf.IRI) (Test, error) {
	name, err := m.Name(entry)
	if err != nil {
		return Test{}, err
	}
	ty, err := m.Kind(entry, rdftNS)
	if err != nil {
		return Test{}, err
	}
	kind, ok := strings.CutPrefix(ty, s.typePrefix)
	switch {
	case !ok:
		return Test{}, m.Errorf(entry, "has the type rdft:%s, not an rdft:%s… test", ty, s.typePrefix)
	case kind != rdfPositiveSyntax && kind != rdfNegativeSyntax && kind != rdfEval && kind != rdfNegativeEval:
		return Test{}, m.Errorf(entry, "has the type rdft:%s, which is not a kind of test this suite knows", ty)
	}
	c := &rdfSyntaxCase{kind: kind, parse: s.parse}
	if c.action, err = m.File(entry, mfAction); err != nil {
		return Test{}, err
	}
	if kind == rdfEval {
		if c.result, err = m.File(entry, mfResult); err != nil {
			return Test{}, err
		}
	}
	if base != "" {
		c.base = string(base) + filepath.Base(c.action)
	} else if c.base, err = fileIRI(c.action); err != nil {
		return Test{}, err
	}
	return Test{ID: name, Run: func(context.Context, *Scratch) error { return c.run() }}, nil
}

// rdfSyntaxCase is one test of an RDF syntax suite.
type rdfSyntaxCase struct {
	kind string
	// action is the document to read, with base as its base IRI; result, for
	// an evaluation test, the N-Triples of the graph it means.
	action, base, result string
	parse                func(name string, src []byte, base string) (*rdf.Document, error)
}

// run reads the document and judges the outcome by the test's kind: a
// negative test passes on a syntax error that says where it is, a positive
// syntax test when the document is read, an evaluation test when the graph
// read is the expected one up to blank node labels (RDF 1.1 Concepts §3.6).
func (c *rdfSyntaxCase) run() error {
	src, err := os.ReadFile(c.action)
	if err != nil {
		return err
	}
	doc, err := c.parse(c.action, src, c.base)
	switch {
	case c.kind == rdfNegativeSyntax || c.kind == rdfNegativeEval:
		var se *rdf.SyntaxError
		switch {
		case err == nil:
			return errors.New("expected a syntax error, the document was accepted")
		case !errors.As(err, &se) || se.Pos.Line == 0:
			return fmt.Errorf("expected a syntax error with a position, got: %w", err)
		}
		return FailedAsExpected(err)
	case err != nil:
		return fmt.Errorf("the document is rejected: %w", err)
	case c.kind == rdfPositiveSyntax:
		return nil
	}
	want, err := os.ReadFile(c.result)
	if err != nil {
		return err
	}
	wantDoc, err := rdf.ParseNTriples(c.result, want)
	if err != nil {
		return fmt.Errorf("reading the expected graph: %w", err)
	}
	// A graph is a set (RDF 1.1 Concepts §3): a triple the document states
	// twice is one triple.
	got, _ := dedupe(doc.Quads())
	return CompareDatasets(wantDoc.Quads(), got)
}
