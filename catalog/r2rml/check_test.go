package r2rml

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"veneer/catalog/internal/rdb2rdf"
	"veneer/catalog/source"
	"veneer/catalog/source/sourcetest"
)

// dataErrors are the tests of w3c-needs-db.txt whose error is in the rows (a
// value that makes no valid IRI), which the query runner meets, not in the
// schema: CheckFiles must accept their mappings.
var dataErrors = map[string]bool{"R2RMLTC0019b": true, "R2RMLTC0020b": true}

// caseBlind are tests whose expected error rests on telling a regular column
// name from a delimited one of the same letters, which MySQL and SQLite do not:
// they keep the case a column was created with, delimited or not, and find
// columns without regard to case, so there the mapping's regular Name is the
// column "Name", as the database itself resolves it.
var caseBlind = map[string]bool{"R2RMLTC0002f": true}

// foreignViews are tests whose rr:sqlQuery is in SQL Server's dialect ('+'
// joins strings, CAST to NVARCHAR). PostgreSQL rejects each, which CheckFiles
// must report; MySQL and SQLite read '+' as addition and run some of them
// with another meaning, which only the graph shows (the conformance run skips
// these tests).
var foreignViews = []string{"R2RMLTC0002d", "R2RMLTC0003b", "R2RMLTC0014a", "R2RMLTC0014b", "R2RMLTC0014c"}

// TestW3CCheck checks the mapping of every R2RML test of the W3C RDB2RDF suite
// against the test's database on each dialect: mappings the manifest expects
// to give output must pass, those it expects to fail must be rejected with
// positioned errors, and the errors that need the database
// (w3c-needs-db.txt) must be found here.
func TestW3CCheck(t *testing.T) {
	root := rdb2rdf.Dir(t)
	dirs, err := filepath.Glob(filepath.Join(root, "D*"))
	if err != nil || len(dirs) == 0 {
		t.Fatalf("no test directories under %s (%v)", root, err)
	}
	needsDB := readNeedsDB(t)
	for _, d := range sourcetest.Dialects {
		t.Run(d.String(), func(t *testing.T) {
			var passed, rejected int
			for _, dir := range dirs {
				tests := readR2RMLManifest(t, dir)
				if len(tests) == 0 {
					continue
				}
				t.Run(filepath.Base(dir)[:4], func(t *testing.T) {
					if why := rdb2rdf.Unsupported(d, dir); why != "" {
						t.Skip(why)
					}
					db := sourcetest.New(t, d)
					rdb2rdf.Load(t, db, dir, tests[0].script)
					src := db.Open(t)
					for _, rt := range tests {
						p, r := checkW3C(t, src, rt, needsDB)
						passed += p
						rejected += r
					}
				})
			}
			t.Logf("%s: %d mappings passed the check, %d rejected as expected", d, passed, rejected)
		})
	}
}

// checkW3C checks one test's mapping and says whether it passed or was
// rejected as expected.
func checkW3C(t *testing.T, src source.Source, rt r2rmlTest, needsDB map[string]string) (passed, rejected int) {
	rep, err := CheckFiles(context.Background(), src, rt.mapping)
	if err != nil {
		t.Errorf("%s: %v", rt.id, err)
		return 0, 0
	}
	for _, w := range rep.Problems.Warnings() {
		t.Logf("%s: %v", rt.id, w)
	}
	errs := rep.Problems.Errors()
	wantError := rt.wantError && !dataErrors[rt.id] && !(caseBlind[rt.id] && src.Dialect() != source.Postgres)
	foreign := slices.Contains(foreignViews, rt.id)
	switch {
	case foreign && src.Dialect() == source.Postgres:
		if len(errs) == 0 || !strings.Contains(errs[0].Msg, "the database rejects the R2RML view") {
			t.Errorf("%s: the view in SQL Server's dialect: got %v, want the database to reject it", rt.id, errs)
		}
		return 0, 1
	case foreign:
		t.Logf("%s, a view in SQL Server's dialect: %v", rt.id, errs)
	case wantError && len(errs) == 0:
		t.Errorf("%s: the manifest expects an error (%s); the check found none", rt.id, needsDB[rt.id])
	case !wantError && len(errs) > 0:
		t.Errorf("%s: %v", rt.id, errs)
	case wantError:
		for _, e := range errs {
			if e.Pos.Line == 0 {
				t.Errorf("%s: error without a line: %v", rt.id, e)
			}
		}
		t.Logf("%s rejected as expected: %v", rt.id, errs)
		return 0, 1
	default:
		return 1, 0
	}
	return 0, 0
}

// TestLoadPartial loads a mapping whose mistakes leave parts out: a triples map
// without a logical table, a reference to it, and a reference to a map that
// does not exist. What remains must be checkable, and the check must report
// the mistakes together with what the database says.
func TestLoadPartial(t *testing.T) {
	const mapping = `@prefix rr: <http://www.w3.org/ns/r2rml#> .
@base <http://example.com/m/> .
<NoTable> rr:subjectMap [ rr:template "http://example.com/x/{id}" ] .
<Site> rr:logicalTable [ rr:tableName "site" ] ;
    rr:subjectMap [ rr:template "http://example.com/site/{code}" ] ;
    rr:predicateObjectMap [ rr:predicate <http://example.com/p> ; rr:objectMap [ rr:parentTriplesMap <NoTable> ] ] ;
    rr:predicateObjectMap [ rr:predicate <http://example.com/q> ; rr:objectMap [ rr:parentTriplesMap <Nowhere> ] ] ;
    rr:predicateObjectMap [ rr:predicate <http://example.com/r> ; rr:objectMap [ rr:column "nme" ] ] .
`
	path := filepath.Join(t.TempDir(), "partial.ttl")
	if err := os.WriteFile(path, []byte(mapping), 0o600); err != nil {
		t.Fatal(err)
	}
	cat, mistakes, err := LoadPartial(path)
	if err != nil {
		t.Fatal(err)
	}
	if len(cat.Maps) != 1 || len(cat.Maps[0].PredicateObjects) != 1 {
		t.Fatalf("kept %d maps (want Site alone) and %v", len(cat.Maps), cat.Maps)
	}
	if len(mistakes) < 2 {
		t.Errorf("mistakes %v, want the missing logical table and the unknown parent", mistakes)
	}
	db := sourcetest.New(t, source.SQLite)
	db.Exec(t, "CREATE TABLE site (code VARCHAR(8), name VARCHAR(20))")
	rep, err := CheckFiles(context.Background(), db.Open(t), path)
	if err != nil {
		t.Fatal(err)
	}
	var got []string
	for _, p := range rep.Problems {
		got = append(got, fmt.Sprintf("%d:%d %s", p.Pos.Line, p.Pos.Col, p.Msg))
	}
	want := []string{
		"3:1 triples map <http://example.com/m/NoTable> has no rr:logicalTable",
		"7:102 rr:parentTriplesMap <http://example.com/m/Nowhere>: there is no triples map with that name",
		`8:80 column "nme" is not in table site (it has: code, name)`,
	}
	if len(got) != len(want) {
		t.Fatalf("problems:\n%s\nwant:\n%s", strings.Join(got, "\n"), strings.Join(want, "\n"))
	}
	for i := range want {
		if !strings.HasPrefix(got[i], want[i]) {
			t.Errorf("problem %d: %s\nwant: %s…", i+1, got[i], want[i])
		}
	}
}
