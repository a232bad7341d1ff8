package conformance

import (
	"context"
	"errors"
	"fmt"
	"net/url"
	"os"
	"path/filepath"
	"strings"

	"veneer/catalog/rdf"
	"veneer/rewrite/algebra"
	"veneer/rewrite/sparql"
)

// The SPARQL suites under rdf-tests/sparql: each test directory has a
// manifest.ttl whose mf:Manifest lists its tests in an mf:entries collection.
// A test's rdf:type says what is expected of its query, which is the file
// mf:action names, or the qt:query of the mf:action of an evaluation test.
const (
	testManifestNS = "http://www.w3.org/2001/sw/DataAccess/tests/test-manifest#"
	mfManifest     = rdf.IRI(testManifestNS + "Manifest")
	mfEntries      = rdf.IRI(testManifestNS + "entries")
	mfAction       = rdf.IRI(testManifestNS + "action")
	qtQuery        = rdf.IRI("http://www.w3.org/2001/sw/DataAccess/tests/test-query#query")
)

// queryExpectations say, for each type of test that has a query, what
// veneer's parser and translation must make of the query (SPARQL 1.1 Test
// Cases, the mf: vocabulary under rdf-tests/ns): accept it, reject it as
// malformed, or refuse it as a well-formed update, the endpoint being
// read-only. Evaluation tests need a valid query too.
var queryExpectations = map[string]expectation{
	"PositiveSyntaxTest":         accept,
	"PositiveSyntaxTest11":       accept,
	"QueryEvaluationTest":        accept,
	"CSVResultFormatTest":        accept,
	"NegativeSyntaxTest":         reject,
	"NegativeSyntaxTest11":       reject,
	"PositiveUpdateSyntaxTest11": refuseUpdate,
	"NegativeUpdateSyntaxTest11": reject,
}

type expectation int

const (
	accept expectation = iota + 1
	reject
	refuseUpdate
)

// SPARQLSyntax is the suite "sparql-syntax": the syntax tests of SPARQL 1.1
// Query (sparql11/syntax-query), of federated query (sparql11/syntax-fed) and
// of SPARQL 1.0 (sparql10/syntax-sparql1 to 5). A positive test passes when
// its query parses and translates to algebra, a negative one when either step
// rejects it with a syntax error.
func SPARQLSyntax() Suite {
	return sparqlQuerySuite{name: "sparql-syntax", dirs: []string{
		"sparql11/syntax-query", "sparql11/syntax-fed",
		"sparql10/syntax-sparql1", "sparql10/syntax-sparql2", "sparql10/syntax-sparql3",
		"sparql10/syntax-sparql4", "sparql10/syntax-sparql5",
	}}
}

// SPARQLQueries is a suite named "sparql-queries" over the given test
// directories of rdf-tests/sparql (such as "sparql11/bind"): it checks what
// veneer makes of the query of every test the manifests list, by the rules of
// SPARQLSyntax; an evaluation test's query must be accepted, a well-formed
// update request refused as read-only. Tests without a query file (protocol,
// service description) are not part of it.
func SPARQLQueries(dirs ...string) Suite {
	return sparqlQuerySuite{name: "sparql-queries", dirs: dirs}
}

type sparqlQuerySuite struct {
	name string
	dirs []string
}

func (s sparqlQuerySuite) Name() string      { return s.name }
func (sparqlQuerySuite) NeedsDatabase() bool { return false }

func (s sparqlQuerySuite) Load(dir string) ([]*Group, error) {
	root := filepath.Join(dir, "rdf-tests", "sparql")
	var groups []*Group
	for _, d := range s.dirs {
		g, err := loadSPARQLDir(filepath.Join(root, filepath.FromSlash(d)))
		if err != nil {
			return nil, err
		}
		g.Name = d
		groups = append(groups, g)
	}
	return groups, nil
}

// loadSPARQLDir reads the manifest of one test directory.
func loadSPARQLDir(dir string) (*Group, error) {
	m, err := ReadManifest(filepath.Join(dir, "manifest.ttl"))
	if err != nil {
		return nil, err
	}
	manifests := m.OfType(mfManifest)
	if len(manifests) != 1 {
		return nil, fmt.Errorf("%s: %d resources of type mf:Manifest, want one", m.Path, len(manifests))
	}
	head, err := m.Object(manifests[0], mfEntries)
	if err != nil {
		return nil, err
	}
	if head == nil {
		return nil, m.Errorf(manifests[0], "has no mf:entries")
	}
	entries, err := m.List(head)
	if err != nil {
		return nil, err
	}
	g := &Group{}
	for _, e := range entries {
		t, ok, err := readSPARQLTest(m, e)
		if err != nil {
			return nil, err
		}
		if ok {
			g.Tests = append(g.Tests, t)
		}
	}
	return g, nil
}

// readSPARQLTest reads one entry; ok is false for a test without a query.
func readSPARQLTest(m *Manifest, entry rdf.Term) (t Test, ok bool, err error) {
	id := entry.String()
	if iri, isIRI := entry.(rdf.IRI); isIRI {
		id = string(iri)
	}
	ty, err := m.Object(entry, rdf.RDFType)
	if err != nil {
		return Test{}, false, err
	}
	tyIRI, _ := ty.(rdf.IRI)
	kind, _ := strings.CutPrefix(string(tyIRI), testManifestNS)
	want, known := queryExpectations[kind]
	if !known {
		return Test{}, false, nil
	}
	subj, pred := entry, mfAction
	if action, err := m.Object(entry, mfAction); err != nil {
		return Test{}, false, err
	} else if _, isIRI := action.(rdf.IRI); !isIRI && action != nil {
		subj, pred = action, qtQuery
	}
	path, err := m.File(subj, pred)
	if err != nil {
		return Test{}, false, err
	}
	run := func(context.Context, *Scratch) error { return checkQueryFile(path, want) }
	return Test{ID: id, Run: run}, true, nil
}

// checkQueryFile parses and translates a test's query, its file: IRI being
// the base (the retrieval IRI, SPARQL 1.1 Query §4.1.1.2), and says whether
// the outcome is what the test expects.
func checkQueryFile(path string, want expectation) error {
	src, err := os.ReadFile(path)
	if err != nil {
		return fmt.Errorf("reading the query: %w", err)
	}
	abs, err := filepath.Abs(path)
	if err != nil {
		return fmt.Errorf("reading the query: %w", err)
	}
	base := (&url.URL{Scheme: "file", Path: filepath.ToSlash(abs)}).String()
	q, err := sparql.ParseBase(string(src), base)
	if err == nil {
		_, err = algebra.Translate(q)
	}
	update := errors.Is(err, sparql.ErrUpdate)
	switch {
	case want == accept && err != nil:
		return fmt.Errorf("rejected a valid query: %w", err)
	case want == reject && err == nil:
		return errors.New("accepted an invalid query")
	case want == reject && update:
		return fmt.Errorf("refused a malformed request as a valid update: %w", err)
	case want == refuseUpdate && !update:
		if err == nil {
			return errors.New("accepted an update request instead of refusing it as read-only")
		}
		return fmt.Errorf("rejected a valid update request as malformed: %w", err)
	case err != nil:
		return FailedAsExpected(err)
	}
	return nil
}
