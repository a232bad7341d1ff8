package conformance

import (
	"context"
	"fmt"
	"os"
	"path/filepath"

	"veneer/catalog/rdf"
	"veneer/rewrite/algebra"
	"veneer/rewrite/sparql"
)

// The vocabulary of the SPARQL suites' manifests (rdf-tests/ns): each test
// directory has a manifest.ttl whose mf:Manifest lists its tests in an
// mf:entries collection. A syntax test's mf:action is its query file; an
// evaluation test's mf:action is a node whose qt:query is.
const (
	testManifestNS = "http://www.w3.org/2001/sw/DataAccess/tests/test-manifest#"
	mfManifest     = rdf.IRI(testManifestNS + "Manifest")
	mfEntries      = rdf.IRI(testManifestNS + "entries")
	mfAction       = rdf.IRI(testManifestNS + "action")
	qtQuery        = rdf.IRI("http://www.w3.org/2001/sw/DataAccess/tests/test-query#query")
)

// sparqlSyntaxDirs are the test directories of the suite sparql-syntax,
// under rdf-tests/sparql.
var sparqlSyntaxDirs = []string{
	"sparql11/syntax-query", "sparql11/syntax-fed",
	"sparql10/syntax-sparql1", "sparql10/syntax-sparql2", "sparql10/syntax-sparql3",
	"sparql10/syntax-sparql4", "sparql10/syntax-sparql5",
}

// SPARQLSyntax is the suite "sparql-syntax": the syntax tests of SPARQL 1.1
// Query (sparql11/syntax-query), of federated query (sparql11/syntax-fed) and
// of SPARQL 1.0 (sparql10/syntax-sparql1 to 5), as their manifests list them.
// A positive test passes when its query parses and translates to algebra, a
// negative one when either step rejects it with a syntax error (the rules of
// algebra.W3CVerdict). Each directory is a group; a test's identifier is its
// directory and its name in the manifest (the fragment of its IRI), such as
// "sparql11/syntax-query/test_1".
func SPARQLSyntax() Suite { return sparqlSyntaxSuite{} }

type sparqlSyntaxSuite struct{}

func (sparqlSyntaxSuite) Name() string        { return "sparql-syntax" }
func (sparqlSyntaxSuite) NeedsDatabase() bool { return false }

func (sparqlSyntaxSuite) Load(dir string) ([]*Group, error) {
	root := filepath.Join(dir, "rdf-tests", "sparql")
	var groups []*Group
	for _, d := range sparqlSyntaxDirs {
		g, err := loadSyntaxDir(root, d)
		if err != nil {
			return nil, err
		}
		groups = append(groups, g)
	}
	return groups, nil
}

// loadSyntaxDir reads the manifest of one test directory, d under root.
func loadSyntaxDir(root, d string) (*Group, error) {
	m, err := ReadManifest(filepath.Join(root, filepath.FromSlash(d), "manifest.ttl"))
	if err != nil {
		return nil, err
	}
	_, entries, err := m.Entries()
	if err != nil {
		return nil, err
	}
	g := &Group{Name: d}
	for _, e := range entries {
		t, err := readSyntaxTest(m, d, e)
		if err != nil {
			return nil, err
		}
		g.Tests = append(g.Tests, t)
	}
	return g, nil
}

// readSyntaxTest reads one entry of the manifest of directory d.
func readSyntaxTest(m *Manifest, d string, entry rdf.Term) (Test, error) {
	name, err := m.Name(entry)
	if err != nil {
		return Test{}, err
	}
	kind, err := m.Kind(entry, testManifestNS)
	if err != nil {
		return Test{}, err
	}
	if _, known := algebra.W3CVerdict(kind, nil); !known {
		return Test{}, m.Errorf(entry, "has the type mf:%s, which is not a type of test with a query", kind)
	}
	path, err := m.File(entry, mfAction)
	if err != nil {
		return Test{}, err
	}
	run := func(context.Context, *Scratch) error { return checkQueryFile(path, kind) }
	return Test{ID: d + "/" + name, Run: run}, nil
}

// checkQueryFile parses and translates a test's query, its file: IRI being
// the base (the retrieval IRI, SPARQL 1.1 Query §4.1.1.2), and judges the
// outcome by the rules of algebra.W3CVerdict for the test's type.
func checkQueryFile(path, kind string) error {
	src, err := os.ReadFile(path)
	if err != nil {
		return fmt.Errorf("reading the query: %w", err)
	}
	base, err := fileIRI(path)
	if err != nil {
		return fmt.Errorf("reading the query: %w", err)
	}
	q, err := sparql.ParseBase(string(src), base)
	if err == nil {
		_, err = algebra.Translate(q)
	}
	if problem, _ := algebra.W3CVerdict(kind, err); problem != nil {
		return problem
	}
	if err != nil {
		return FailedAsExpected(err)
	}
	return nil
}
