package rdf_test

import (
	"context"
	"os"
	"path/filepath"
	"testing"

	"veneer/catalog/rdf"
	"veneer/conformance"
	"veneer/conformance/w3cdir"
)

// TestW3CSuites runs the W3C RDF 1.1 Turtle, N-Triples and N-Quads tests
// (rdf-tests/rdf/rdf11/rdf-turtle, rdf-n-triples, rdf-n-quads), as their
// manifests list them, through the conformance runner's suites: every test
// that fails and is not in the suite's skip list fails this test.
func TestW3CSuites(t *testing.T) {
	dir := w3cdir.ForTest(t)
	for _, s := range []conformance.Suite{conformance.Turtle(), conformance.NTriples(), conformance.NQuads()} {
		t.Run(s.Name(), func(t *testing.T) {
			skips, err := conformance.SkipListFor(s.Name())
			if err != nil {
				t.Fatal(err)
			}
			rep, err := conformance.Run(context.Background(), s, conformance.Options{Dir: dir, Skips: skips}, nil)
			if err != nil {
				t.Fatal(err)
			}
			for _, r := range rep.Results {
				if r.Outcome == conformance.Failed {
					t.Errorf("%s: %s", r.ID, r.Reason)
					for _, line := range r.Details {
						t.Log("    " + line)
					}
				}
			}
			for _, w := range rep.Warnings {
				t.Error(w)
			}
			if rep.Passed == 0 {
				t.Error("no test passed")
			}
			t.Log(rep.Summary())
		})
	}
}

// TestTurtleRoundTripW3C writes the graph of every Turtle evaluation test of
// the W3C suite (rdf-turtle, the rdft:TestTurtleEval entries of its manifest)
// with the document's own prefixes, and reads it back.
func TestTurtleRoundTripW3C(t *testing.T) {
	const (
		mfNS     = "http://www.w3.org/2001/sw/DataAccess/tests/test-manifest#"
		evalTest = rdf.IRI("http://www.w3.org/ns/rdftest#TestTurtleEval")
	)
	dir := filepath.Join(w3cdir.ForTest(t), "rdf-tests", "rdf", "rdf11", "rdf-turtle")
	m, err := conformance.ReadManifest(filepath.Join(dir, "manifest.ttl"))
	if err != nil {
		t.Fatal(err)
	}
	// The expected graphs were made with mf:assumedTestBase followed by the
	// document's file name as the base IRI.
	var base rdf.IRI
	for _, man := range m.OfType(mfNS + "Manifest") {
		b, err := m.Object(man, mfNS+"assumedTestBase")
		if err != nil {
			t.Fatal(err)
		}
		base, _ = b.(rdf.IRI)
	}
	tests := m.OfType(evalTest)
	if len(tests) == 0 || base == "" {
		t.Fatalf("%s: %d rdft:TestTurtleEval entries, assumed base %q", m.Path, len(tests), base)
	}
	for _, e := range tests {
		path, err := m.File(e, mfNS+"action")
		if err != nil {
			t.Fatal(err)
		}
		src, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		doc, err := rdf.ParseTurtle(path, src, string(base)+filepath.Base(path))
		if err != nil {
			t.Fatalf("%s: %v", e, err)
		}
		rdf.RoundTrip(t, filepath.Base(path), doc.Triples(), doc.Prefixes)
	}
	t.Logf("%d graphs written and read back", len(tests))
}
