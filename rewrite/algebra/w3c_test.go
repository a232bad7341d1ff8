package algebra_test

import (
	"context"
	"os"
	"path/filepath"
	"sort"
	"testing"

	"veneer/conformance"
)

// w3cDir is where the W3C test suites are: ../../../shared/w3c from this
// package, or $VENEER_W3C.
func w3cDir(t *testing.T) string {
	dir := os.Getenv("VENEER_W3C")
	if dir == "" {
		dir = filepath.Join("..", "..", "..", "shared", "w3c")
	}
	if _, err := os.Stat(filepath.Join(dir, "rdf-tests", "sparql")); err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatalf("W3C suites not found at %s: %v", dir, err)
		}
		t.Skipf("W3C suites not found at %s (set VENEER_W3C): %v", dir, err)
	}
	return dir
}

// runSuite runs a suite of the conformance package and fails the test for
// each test of the suite that failed; it logs the counts per group.
func runSuite(t *testing.T, s conformance.Suite, dir string) *conformance.Report {
	t.Helper()
	skips, err := conformance.SkipListFor(s.Name())
	if err != nil {
		t.Fatal(err)
	}
	rep, err := conformance.Run(context.Background(), s, conformance.Options{Dir: dir, Skips: skips}, nil)
	if err != nil {
		t.Fatal(err)
	}
	counts := map[string]*conformance.Counts{}
	var groups []string
	for _, r := range rep.Results {
		c := counts[r.Group]
		if c == nil {
			c = &conformance.Counts{}
			counts[r.Group] = c
			groups = append(groups, r.Group)
		}
		switch r.Outcome {
		case conformance.Passed:
			c.Passed++
		case conformance.Failed:
			c.Failed++
			t.Errorf("%s %s: %s", r.Group, r.ID, r.Reason)
		case conformance.Skipped:
			c.Skipped++
			t.Logf("skip %s: %s", r.ID, r.Reason)
		}
	}
	sort.Strings(groups)
	for _, g := range groups {
		c := counts[g]
		t.Logf("%-28s %4d passed, %3d failed, %3d skipped", g, c.Passed, c.Failed, c.Skipped)
	}
	for _, w := range rep.Warnings {
		t.Error(w)
	}
	if rep.Passed == 0 {
		t.Error("no test passed")
	}
	t.Log(rep.Summary())
	return rep
}

// TestW3CSyntax runs the suite of `go run ./conformance/cmd/w3c sparql-syntax`:
// the syntax tests of rdf-tests/sparql (sparql11/syntax-query, syntax-fed,
// sparql10/syntax-sparql1..5) as their manifests list them. Every positive
// test must parse and translate, every negative one be rejected.
func TestW3CSyntax(t *testing.T) {
	runSuite(t, conformance.SPARQLSyntax(), w3cDir(t))
}

// TestW3CQueries checks the query of every test in every manifest of the
// SPARQL 1.1 and 1.0 suites (rdf-tests/sparql/sparql1[01]/*/manifest.ttl):
// the syntax tests as above, the update syntax tests (sparql11/syntax-update-1:
// a valid update is refused as read-only, an invalid one rejected), and the
// query of each evaluation test, which must parse and translate.
func TestW3CQueries(t *testing.T) {
	dir := w3cDir(t)
	root := filepath.Join(dir, "rdf-tests", "sparql")
	manifests, err := filepath.Glob(filepath.Join(root, "sparql1[01]", "*", "manifest.ttl"))
	if err != nil {
		t.Fatal(err)
	}
	var dirs []string
	for _, m := range manifests {
		rel, err := filepath.Rel(root, filepath.Dir(m))
		if err != nil {
			t.Fatal(err)
		}
		dirs = append(dirs, filepath.ToSlash(rel))
	}
	sort.Strings(dirs)
	runSuite(t, conformance.SPARQLQueries(dirs...), dir)
}
