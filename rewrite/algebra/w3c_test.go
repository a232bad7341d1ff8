package algebra_test

import (
	"net/url"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"

	"veneer/catalog/rdf"
	"veneer/conformance/w3cdir"
	"veneer/rewrite/algebra"
	"veneer/rewrite/sparql"
)

// Vocabulary of the W3C test manifests (rdf-tests/ns).
const (
	mf = "http://www.w3.org/2001/sw/DataAccess/tests/test-manifest#"
	qt = "http://www.w3.org/2001/sw/DataAccess/tests/test-query#"
)

// manifestTest is one entry of a manifest.
type manifestTest struct {
	id    string // the test's IRI
	kind  string // local name of its rdf:type in mf:
	query string // path of the query or update file
}

// readManifest reads the entries of a manifest.ttl, in the order mf:entries
// lists them.
func readManifest(t *testing.T, path string) []manifestTest {
	t.Helper()
	src, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	abs, err := filepath.Abs(path)
	if err != nil {
		t.Fatal(err)
	}
	base := (&url.URL{Scheme: "file", Path: filepath.ToSlash(abs)}).String()
	doc, err := rdf.ParseTurtle(path, src, base)
	if err != nil {
		t.Fatalf("reading manifest: %v", err)
	}
	objects := map[rdf.Term]map[rdf.IRI][]rdf.Term{}
	for _, s := range doc.Statements {
		p, ok := s.P.(rdf.IRI)
		if !ok {
			continue
		}
		if objects[s.S] == nil {
			objects[s.S] = map[rdf.IRI][]rdf.Term{}
		}
		objects[s.S][p] = append(objects[s.S][p], s.O)
	}
	one := func(s rdf.Term, p rdf.IRI) rdf.Term {
		if objs := objects[s][p]; len(objs) > 0 {
			return objs[0]
		}
		return nil
	}
	var entries []rdf.Term
	for s, props := range objects {
		for _, ty := range props[rdf.RDFType] {
			if ty == rdf.IRI(mf+"Manifest") {
				for list := one(s, mf+"entries"); list != nil && list != rdf.RDFNil; list = one(list, rdf.RDFRest) {
					entries = append(entries, one(list, rdf.RDFFirst))
				}
			}
		}
	}
	var tests []manifestTest
	for _, e := range entries {
		mt := manifestTest{id: e.String()}
		if ty, ok := one(e, rdf.RDFType).(rdf.IRI); ok {
			mt.kind = strings.TrimPrefix(string(ty), mf)
		}
		action := one(e, mf+"action")
		if q := one(action, qt+"query"); q != nil {
			action = q
		}
		if iri, ok := action.(rdf.IRI); ok {
			if u, err := url.Parse(string(iri)); err == nil && u.Scheme == "file" {
				mt.query = filepath.FromSlash(u.Path)
			}
		}
		tests = append(tests, mt)
	}
	return tests
}

// fileIRI is the IRI a query file is retrieved from, its base IRI.
func fileIRI(path string) string {
	return (&url.URL{Scheme: "file", Path: filepath.ToSlash(path)}).String()
}

// check parses and translates the file of one test; it returns "" when the
// outcome is what the test's type requires (algebra.W3CVerdict), else the
// reason it is not.
func check(mt manifestTest) string {
	src, err := os.ReadFile(mt.query)
	if err != nil {
		return "cannot read the query: " + err.Error()
	}
	q, err := sparql.ParseBase(string(src), fileIRI(mt.query))
	if err == nil {
		_, err = algebra.Translate(q)
	}
	problem, known := algebra.W3CVerdict(mt.kind, err)
	switch {
	case !known:
		return "unknown test type " + mt.kind
	case problem != nil:
		return problem.Error()
	}
	return ""
}

// w3cSkips are tests whose expected outcome this parser deliberately does not
// give, each with the reason.
var w3cSkips = map[string]string{}

// TestW3C runs the syntax tests of the SPARQL 1.1 and 1.0 suites
// (rdf-tests/sparql/sparql11/syntax-query, syntax-fed, syntax-update-1,
// sparql10/syntax-sparql1..5) and parses and translates the query of every
// evaluation test of both suites, as each manifest lists them. It logs pass and
// fail counts per manifest.
func TestW3C(t *testing.T) {
	root := filepath.Join(w3cdir.ForTest(t), "rdf-tests", "sparql")
	manifests, err := filepath.Glob(filepath.Join(root, "sparql1[01]", "*", "manifest.ttl"))
	if err != nil {
		t.Fatal(err)
	}
	sort.Strings(manifests)
	total := map[string]int{}
	kinds := map[string]int{}
	for _, m := range manifests {
		suite, _ := filepath.Rel(root, filepath.Dir(m))
		pass, fail, skip, other := 0, 0, 0, 0
		for _, mt := range readManifest(t, m) {
			if mt.query == "" || !strings.HasSuffix(mt.query, ".rq") && !strings.HasSuffix(mt.query, ".ru") {
				other++ // protocol and service description tests have no query file
				continue
			}
			if reason, ok := w3cSkips[mt.id]; ok {
				t.Logf("skip %s: %s", mt.id, reason)
				skip++
				continue
			}
			kinds[mt.kind]++
			if why := check(mt); why != "" {
				t.Errorf("%s %s (%s): %s", suite, mt.id, mt.kind, why)
				fail++
				continue
			}
			pass++
		}
		if pass+fail+skip > 0 {
			t.Logf("%-36s %4d passed, %3d failed, %3d skipped", suite, pass, fail, skip)
		}
		total["pass"] += pass
		total["fail"] += fail
		total["skip"] += skip
		total["other"] += other
	}
	t.Logf("tests by type: %v", kinds)
	t.Logf("all manifests: %d passed, %d failed, %d skipped (%d entries without a query file)",
		total["pass"], total["fail"], total["skip"], total["other"])
}
