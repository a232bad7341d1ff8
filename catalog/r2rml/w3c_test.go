package r2rml

import (
	"bufio"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"veneer/catalog/internal/rdb2rdf"
	"veneer/catalog/rdf"
)

// The W3C "R2RML and Direct Mapping Test Cases" (rdb2rdf-tests) are read from
// the shared checkout. Each test directory's manifest.ttl, in the rdb2rdf test
// vocabulary, lists its R2RML tests (a rdb2rdftest:R2RML) with their mapping
// document (rdb2rdftest:mappingDocument) and whether the test expects output
// (rdb2rdftest:hasExpectedOutput) or an error.

const (
	testNS    rdf.IRI = "http://purl.org/NET/rdb2rdf-test#"
	dctermsID         = rdf.IRI("http://purl.org/dc/elements/1.1/identifier")
)

type r2rmlTest struct {
	id, mapping string
	// script is the SQL script that creates the test's database.
	script    string
	wantError bool
}

// readR2RMLManifest lists the R2RML tests of one test directory.
func readR2RMLManifest(t *testing.T, dir string) []r2rmlTest {
	t.Helper()
	path := filepath.Join(dir, "manifest.ttl")
	src, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	doc, err := rdf.ParseTurtle(path, src, "")
	if err != nil {
		t.Fatalf("reading the manifest: %v", err)
	}
	bySubj := doc.BySubject()
	var tests []r2rmlTest
	for subj, sts := range bySubj {
		isR2RML := false
		var rt r2rmlTest
		var hasExpected rdf.Term
		for _, st := range sts {
			switch st.P {
			case rdf.RDFType:
				isR2RML = isR2RML || st.O == testNS+"R2RML"
			case dctermsID:
				rt.id = st.O.(rdf.Literal).Lexical
			case testNS + "mappingDocument":
				rt.mapping = filepath.Join(dir, st.O.(rdf.Literal).Lexical)
			case testNS + "hasExpectedOutput":
				hasExpected = st.O
			case testNS + "database":
				for _, dst := range bySubj[st.O] {
					if dst.P == testNS+"sqlScriptFile" {
						rt.script = dst.O.(rdf.Literal).Lexical
					}
				}
			}
		}
		if !isR2RML {
			continue
		}
		if rt.id == "" || rt.mapping == "" || rt.script == "" || hasExpected == nil {
			t.Fatalf("%s: test %v lacks an identifier, mapping document, database script or rdb2rdftest:hasExpectedOutput", path, subj)
		}
		rt.wantError = hasExpected == rdf.NewTyped("false", rdf.XSDBoolean)
		tests = append(tests, rt)
	}
	return tests
}

// readNeedsDB reads testdata/w3c-needs-db.txt: "test-id reason" lines.
func readNeedsDB(t *testing.T) map[string]string {
	t.Helper()
	f, err := os.Open(filepath.Join("testdata", "w3c-needs-db.txt"))
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	m := map[string]string{}
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		line := strings.TrimSpace(sc.Text())
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		id, reason, _ := strings.Cut(line, " ")
		if strings.TrimSpace(reason) == "" {
			t.Fatalf("w3c-needs-db.txt: entry %s has no reason", id)
		}
		m[id] = reason
	}
	if err := sc.Err(); err != nil {
		t.Fatal(err)
	}
	return m
}

// TestW3CMappings loads the mapping of every R2RML test of the suite: a mapping
// the manifest expects to fail, for a reason the loader can see, must be
// rejected with positioned errors; every other mapping must load.
func TestW3CMappings(t *testing.T) {
	root := rdb2rdf.Dir(t)
	dirs, err := filepath.Glob(filepath.Join(root, "D*"))
	if err != nil || len(dirs) == 0 {
		t.Fatalf("no test directories under %s (%v)", root, err)
	}
	needsDB := readNeedsDB(t)
	used := map[string]bool{}
	covered := map[string]bool{}
	var loaded, rejected, dbOnly int
	for _, dir := range dirs {
		for _, rt := range readR2RMLManifest(t, dir) {
			covered[rt.mapping] = true
			_, err := LoadFiles(rt.mapping)
			reason, db := needsDB[rt.id]
			used[rt.id] = db
			switch {
			case db && !rt.wantError:
				t.Errorf("%s: listed in w3c-needs-db.txt, but the manifest expects output", rt.id)
			case rt.wantError && !db:
				var list ErrorList
				if !errors.As(err, &list) {
					t.Errorf("%s (%s): the manifest expects an error; Load returned %v", rt.id, filepath.Base(rt.mapping), err)
					continue
				}
				for _, e := range list {
					if e.Pos.Line == 0 {
						t.Errorf("%s: error without a line: %v", rt.id, e)
					}
				}
				t.Logf("%s rejected as expected: %v", rt.id, err)
				rejected++
			case err != nil:
				t.Errorf("%s (%s): %v", rt.id, filepath.Base(rt.mapping), err)
			case db:
				t.Logf("%s loads; its expected error needs the database: %s", rt.id, reason)
				dbOnly++
			default:
				loaded++
			}
		}
	}
	for id := range needsDB {
		if !used[id] {
			t.Errorf("w3c-needs-db.txt names %s, which no manifest lists as an R2RML test", id)
		}
	}
	files, _ := filepath.Glob(filepath.Join(root, "D*", "r2rml*.ttl"))
	for _, f := range files {
		if !covered[f] {
			t.Errorf("%s is not the mapping document of any R2RML test", f)
		}
	}
	t.Logf("rdb2rdf-tests: %d mappings loaded, %d rejected as expected, %d loaded whose error needs a database; %d mapping files", loaded, rejected, dbOnly, len(files))
}
