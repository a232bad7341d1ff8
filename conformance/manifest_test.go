package conformance

import (
	"os"
	"path/filepath"
	"testing"

	"veneer/catalog/rdf"
	"veneer/conformance/w3cdir"
)

const mfNS = "http://www.w3.org/2001/sw/DataAccess/tests/test-manifest#"

// The SPARQL 1.1 syntax tests' manifest (rdf-tests sparql11/syntax-query)
// lists its tests in an mf:entries collection, each with an mf:action naming
// a query file by IRI: reading it exercises List and File as the SPARQL
// suites will use them.
func TestManifestEntries(t *testing.T) {
	path := filepath.Join(w3cdir.ForTest(t), "rdf-tests", "sparql", "sparql11", "syntax-query", "manifest.ttl")
	m, err := ReadManifest(path)
	if err != nil {
		t.Fatal(err)
	}
	manifests := m.OfType(mfNS + "Manifest")
	if len(manifests) != 1 {
		t.Fatalf("%d mf:Manifest resources, want 1", len(manifests))
	}
	head, err := m.Object(manifests[0], mfNS+"entries")
	if err != nil || head == nil {
		t.Fatalf("mf:entries: %v, %v", head, err)
	}
	entries, err := m.List(head)
	if err != nil {
		t.Fatal(err)
	}
	if len(entries) == 0 {
		t.Fatal("mf:entries is empty")
	}
	for _, e := range entries {
		if _, err := m.String(e, mfNS+"name"); err != nil {
			t.Error(err)
		}
		action, err := m.File(e, mfNS+"action")
		if err != nil {
			t.Error(err)
			continue
		}
		if _, err := os.Stat(action); err != nil {
			t.Errorf("%v: mf:action: %v", e, err)
		}
	}
	t.Logf("%d entries", len(entries))
}

// Errors about a manifest's resources name the file, line and column of the
// first statement about the resource (common practice).
func TestManifestErrors(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "manifest.ttl")
	src := "@prefix ex: <http://example.com/> .\n\nex:t ex:flag \"yes\" ;\n  ex:file \"../outside\" ;\n  ex:list ( ex:a ex:b ) ;\n  ex:two 1, 2 .\n"
	if err := os.WriteFile(path, []byte(src), 0o644); err != nil {
		t.Fatal(err)
	}
	m, err := ReadManifest(path)
	if err != nil {
		t.Fatal(err)
	}
	s := rdf.IRI("http://example.com/t")
	where := path + ":3:1: <http://example.com/t>: "
	if _, err := m.Bool(s, "http://example.com/flag"); err == nil || err.Error() != where+`<http://example.com/flag> is "yes", not an xsd:boolean` {
		t.Errorf("Bool: %v", err)
	}
	if _, err := m.File(s, "http://example.com/file"); err == nil || err.Error() != where+`<http://example.com/file> "../outside" is not a file name inside the suite` {
		t.Errorf("File: %v", err)
	}
	if _, err := m.Object(s, "http://example.com/two"); err == nil || err.Error() != where+"has 2 values for <http://example.com/two>, want one" {
		t.Errorf("Object: %v", err)
	}
	if _, err := m.String(s, "http://example.com/none"); err == nil || err.Error() != where+"has no <http://example.com/none>" {
		t.Errorf("String: %v", err)
	}
	head, _ := m.Object(s, "http://example.com/list")
	items, err := m.List(head)
	if err != nil || len(items) != 2 || items[0] != rdf.Term(rdf.IRI("http://example.com/a")) {
		t.Errorf("List: %v, %v", items, err)
	}
}
