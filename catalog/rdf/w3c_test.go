package rdf

import (
	"bufio"
	"bytes"
	"errors"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

// The W3C RDF 1.1 test suites (w3c/rdf-tests, rdf/rdf11/rdf-turtle, rdf-n-triples,
// rdf-n-quads) are read from the shared checkout; each suite's manifest.ttl is read
// with ParseTurtle itself and lists the tests, their inputs and expected results.

const (
	mfNS   = "http://www.w3.org/2001/sw/DataAccess/tests/test-manifest#"
	rdftNS = "http://www.w3.org/ns/rdftest#"
)

// w3cDir returns the directory of the shared W3C suites: $VENEER_W3C, or
// ../../../shared/w3c from this package. Without it the test skips, except in CI.
func w3cDir(t *testing.T) string {
	t.Helper()
	dir := os.Getenv("VENEER_W3C")
	if dir == "" {
		dir = filepath.Join("..", "..", "..", "shared", "w3c")
	}
	if _, err := os.Stat(dir); err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatalf("W3C suites not found at %s (set VENEER_W3C): %v", dir, err)
		}
		t.Skipf("W3C suites not found at %s (set VENEER_W3C): %v", dir, err)
	}
	return dir
}

// manifestTest is one entry of a test manifest.
type manifestTest struct {
	id, typ        string
	action, result string // local file paths
	base           string // the base IRI the test document is read with
}

// readManifest reads a manifest.ttl and returns its entries in order.
func readManifest(t *testing.T, path string) []manifestTest {
	t.Helper()
	abs, err := filepath.Abs(path)
	if err != nil {
		t.Fatal(err)
	}
	src, err := os.ReadFile(abs)
	if err != nil {
		t.Fatal(err)
	}
	fileBase := "file://" + filepath.ToSlash(abs)
	doc, err := ParseTurtle(path, src, fileBase)
	if err != nil {
		t.Fatalf("reading the manifest: %v", err)
	}
	g := doc.BySubject()
	obj := func(s Term, p IRI) Term {
		for _, st := range g[s] {
			if st.P == p {
				return st.O
			}
		}
		return nil
	}
	var manifest Term
	for _, st := range doc.Statements {
		if st.P == RDFType && st.O == IRI(mfNS+"Manifest") {
			manifest = st.S
		}
	}
	if manifest == nil {
		t.Fatalf("%s: no mf:Manifest", path)
	}
	assumedBase, _ := obj(manifest, mfNS+"assumedTestBase").(IRI)
	localPath := func(iri Term) string {
		s, _ := iri.(IRI)
		return strings.TrimPrefix(string(s), "file://")
	}
	var tests []manifestTest
	for l := obj(manifest, mfNS+"entries"); l != nil && l != RDFNil; l = obj(l, RDFRest) {
		e := obj(l, RDFFirst)
		mt := manifestTest{id: string(e.(IRI))}
		if typ, ok := obj(e, RDFType).(IRI); ok {
			mt.typ = strings.TrimPrefix(string(typ), rdftNS)
		}
		mt.action = localPath(obj(e, mfNS+"action"))
		if r := obj(e, mfNS+"result"); r != nil {
			mt.result = localPath(r)
		}
		mt.base = "file://" + mt.action
		if assumedBase != "" {
			mt.base = string(assumedBase) + filepath.Base(mt.action)
		}
		if i := strings.LastIndexByte(mt.id, '#'); i >= 0 {
			mt.id = mt.id[i+1:]
		}
		tests = append(tests, mt)
	}
	return tests
}

// readSkipList reads testdata/w3c-skip.txt: lines "suite/test-id reason", '#' comments.
func readSkipList(t *testing.T) map[string]string {
	t.Helper()
	f, err := os.Open(filepath.Join("testdata", "w3c-skip.txt"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	skip := map[string]string{}
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := strings.TrimSpace(sc.Text())
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		id, reason, _ := strings.Cut(line, " ")
		if strings.TrimSpace(reason) == "" {
			t.Fatalf("skip list entry %q has no reason", id)
		}
		skip[id] = strings.TrimSpace(reason)
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	return skip
}

func TestW3CSuites(t *testing.T) {
	root := filepath.Join(w3cDir(t), "rdf-tests", "rdf", "rdf11")
	skip := readSkipList(t)
	for _, suite := range []string{"rdf-turtle", "rdf-n-triples", "rdf-n-quads"} {
		t.Run(suite, func(t *testing.T) {
			tests := readManifest(t, filepath.Join(root, suite, "manifest.ttl"))
			if len(tests) == 0 {
				t.Fatal("the manifest lists no tests")
			}
			var passed, failed, skipped int
			for _, mt := range tests {
				key := suite + "/" + mt.id
				if reason, ok := skip[key]; ok {
					t.Logf("skip %s: %s", key, reason)
					skipped++
					continue
				}
				if msg := runW3CTest(mt); msg != "" {
					t.Errorf("%s (%s): %s", key, mt.typ, msg)
					failed++
					continue
				}
				passed++
			}
			t.Logf("%s: %d passed, %d failed, %d skipped", suite, passed, failed, skipped)
		})
	}
}

// runW3CTest runs one test and returns why it failed, or "".
func runW3CTest(mt manifestTest) string {
	src, err := os.ReadFile(mt.action)
	if err != nil {
		return err.Error()
	}
	var parse func() (*Document, error)
	switch {
	case strings.HasPrefix(mt.typ, "TestTurtle"):
		parse = func() (*Document, error) { return ParseTurtle(mt.action, src, mt.base) }
	case strings.HasPrefix(mt.typ, "TestNTriples"):
		parse = func() (*Document, error) { return ParseNTriples(mt.action, src) }
	case strings.HasPrefix(mt.typ, "TestNQuads"):
		parse = func() (*Document, error) { return ParseNQuads(mt.action, src) }
	default:
		return "unknown test type " + mt.typ
	}
	doc, err := parse()
	switch {
	case strings.HasSuffix(mt.typ, "NegativeSyntax") || strings.HasSuffix(mt.typ, "NegativeEval"):
		var se *SyntaxError
		switch {
		case err == nil:
			return "expected a syntax error, the document was accepted"
		case !errors.As(err, &se) || se.Pos.Line == 0:
			return "expected a syntax error with a position, got: " + err.Error()
		}
		return ""
	case err != nil:
		return "unexpected error: " + err.Error()
	case strings.HasSuffix(mt.typ, "PositiveSyntax"):
		return ""
	case strings.HasSuffix(mt.typ, "Eval"):
		want, err := os.ReadFile(mt.result)
		if err != nil {
			return err.Error()
		}
		wantDoc, err := ParseNTriples(mt.result, want)
		if err != nil {
			return "reading the expected result: " + err.Error()
		}
		if !Isomorphic(doc.Quads(), wantDoc.Quads()) {
			return "graph differs from the expected one:\ngot:\n" + sortedNTriples(doc.Triples()) + "want:\n" + sortedNTriples(wantDoc.Triples())
		}
		return ""
	}
	return "unknown test type " + mt.typ
}

func sortedNTriples(ts []Triple) string {
	var b bytes.Buffer
	if err := WriteNTriples(&b, ts); err != nil {
		return err.Error()
	}
	lines := strings.SplitAfter(b.String(), "\n")
	slices.Sort(lines)
	return strings.Join(lines, "")
}
