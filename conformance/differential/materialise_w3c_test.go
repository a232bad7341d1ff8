package differential

import (
	"context"
	"database/sql"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"veneer/catalog/r2rml"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/conformance"
	"veneer/conformance/w3cdir"
)

// The materialiser is itself checked against external ground truth: the W3C
// "R2RML and Direct Mapping Test Cases" (rdb2rdf-tests/D*/manifest.ttl, the
// rdb2rdftest:R2RML tests with an expected output), on SQLite. A test whose
// expected dataset has named graphs is skipped: the materialiser makes the
// default graph only, which is all the demo mapping needs.

const rdb2rdfNS = "http://purl.org/NET/rdb2rdf-test#"

// w3cSkips are the R2RML tests the materialiser cannot be checked with on
// SQLite, each with the reason.
var w3cSkips = map[string]string{
	"R2RMLTC0003b": "its R2RML view joins strings with '+', SQL Server's operator, which SQLite takes for addition",
	"R2RMLTC0014b": "its R2RML view joins strings with '+', SQL Server's operator, which SQLite takes for addition",
}

func TestMaterialiseW3CR2RML(t *testing.T) {
	ctx := context.Background()
	dirs, err := filepath.Glob(filepath.Join(w3cdir.ForTest(t), "rdb2rdf-tests", "D*"))
	if err != nil || len(dirs) == 0 {
		t.Fatalf("no test directories: %v", err)
	}
	srv, err := conformance.OpenServer(ctx, source.SQLite, "")
	if err != nil {
		t.Fatal(err)
	}
	defer srv.Close()
	var passed, skipped, failed int
	for _, dir := range dirs {
		m, err := conformance.ReadManifest(filepath.Join(dir, "manifest.ttl"))
		if err != nil {
			t.Fatal(err)
		}
		dbs := m.OfType(rdb2rdfNS + "DataBase")
		if len(dbs) != 1 {
			t.Fatalf("%s: %d databases", m.Path, len(dbs))
		}
		script, err := m.File(dbs[0], rdb2rdfNS+"sqlScriptFile")
		if err != nil {
			t.Fatal(err)
		}
		for _, test := range m.OfType(rdb2rdfNS + "R2RML") {
			id, err := m.String(test, "http://purl.org/dc/elements/1.1/identifier")
			if err != nil {
				t.Fatal(err)
			}
			if ok, err := m.Bool(test, rdb2rdfNS+"hasExpectedOutput"); err != nil || !ok {
				continue // a test of a mapping or data error: nothing to materialise
			}
			mapping, err := m.File(test, rdb2rdfNS+"mappingDocument")
			if err != nil {
				t.Fatal(err)
			}
			output, err := m.File(test, rdb2rdfNS+"output")
			if err != nil {
				t.Fatal(err)
			}
			t.Run(id, func(t *testing.T) {
				defer func() {
					switch {
					case t.Skipped():
						skipped++
					case t.Failed():
						failed++
					default:
						passed++
					}
				}()
				if why, ok := w3cSkips[id]; ok {
					t.Skip(why)
				}
				want := readNQuads(t, output)
				if slices.ContainsFunc(want, func(q rdf.Quad) bool { return q.G != nil }) {
					t.Skip("the expected dataset has named graphs; the materialiser makes the default graph only")
				}
				sc, err := srv.Create(ctx)
				if err != nil {
					t.Fatal(err)
				}
				defer sc.Close()
				src, err := os.ReadFile(script)
				if err != nil {
					t.Fatal(err)
				}
				if err := sc.Load(ctx, filepath.Base(script), src); err != nil {
					t.Fatal(err)
				}
				db, err := sql.Open("sqlite", strings.TrimPrefix(sc.DSN, "sqlite:"))
				if err != nil {
					t.Fatal(err)
				}
				defer db.Close()
				cat, err := r2rml.LoadFiles(mapping)
				if err != nil {
					t.Fatalf("loading %s: %v", mapping, err)
				}
				g, err := Materialise(ctx, Database{DB: db, Dialect: "sqlite"}, cat)
				if err != nil {
					t.Fatal(err)
				}
				got := make([]rdf.Quad, len(g.Triples))
				for i, tr := range g.Triples {
					got[i] = rdf.Quad{S: tr.S, P: tr.P, O: tr.O}
				}
				if err := conformance.CompareDatasets(want, got); err != nil {
					t.Errorf("%s (%s): %v", id, filepath.Base(mapping), err)
				}
			})
		}
	}
	t.Logf("W3C R2RML test cases on SQLite: %d passed, %d failed, %d skipped", passed, failed, skipped)
}

func readNQuads(t *testing.T, path string) []rdf.Quad {
	src, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	doc, err := rdf.ParseNQuads(path, src)
	if err != nil {
		t.Fatal(err)
	}
	return doc.Quads()
}
