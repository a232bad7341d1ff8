package sparql_test

import (
	"net/url"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"veneer/conformance/w3cdir"
	"veneer/rewrite/sparql"
)

// fileIRI is the IRI a query file is retrieved from, its base IRI.
func fileIRI(path string) string {
	return (&url.URL{Scheme: "file", Path: filepath.ToSlash(path)}).String()
}

// stripPositions zeroes every position and the source text in a tree, so that
// trees parsed from different texts can be compared.
func stripPositions(v reflect.Value) {
	switch v.Kind() {
	case reflect.Pointer, reflect.Interface:
		if !v.IsNil() {
			stripPositions(v.Elem())
		}
	case reflect.Slice, reflect.Array:
		if v.Type().Elem() == reflect.TypeOf(sparql.Pos(0)) {
			v.Set(reflect.Zero(v.Type()))
			return
		}
		for i := 0; i < v.Len(); i++ {
			stripPositions(v.Index(i))
		}
	case reflect.Struct:
		for i := 0; i < v.NumField(); i++ {
			f := v.Field(i)
			switch {
			case !f.CanSet():
			case f.Type() == reflect.TypeOf(sparql.Pos(0)):
				f.SetInt(0)
			case v.Type().Field(i).Name == "Source":
				f.SetString("")
			default:
				stripPositions(f)
			}
		}
	}
}

// printedLimits are the limits for reading printed text back. The printer puts
// every operand that is an operation in brackets, so its text may nest deeper
// than the original (at most about twice as deep) and be longer.
var printedLimits = sparql.Limits{
	MaxLength:  4 * sparql.DefaultMaxLength,
	MaxDepth:   4 * sparql.DefaultMaxDepth,
	MaxTriples: sparql.DefaultMaxTriples,
}

// roundTrip checks the printer's property: parsing the printed text gives the
// same tree as parsing the original, and printing that tree gives the same text.
func roundTrip(t *testing.T, name, src, base string) bool {
	t.Helper()
	q1, err := sparql.ParseBase(src, base)
	if err != nil {
		return false // only parsable text has a round trip
	}
	text := q1.String()
	q2, err := sparql.ParseWith(text, sparql.Options{Base: base, Limits: printedLimits})
	if err != nil {
		t.Fatalf("%s: the printed query does not parse: %v\n--- printed\n%s", name, err, text)
	}
	if again := q2.String(); again != text {
		t.Fatalf("%s: printing is not stable:\n--- first\n%s--- second\n%s", name, text, again)
	}
	stripPositions(reflect.ValueOf(q1))
	stripPositions(reflect.ValueOf(q2))
	if !reflect.DeepEqual(q1, q2) {
		t.Fatalf("%s: the printed query parses into a different tree\n--- source\n%s\n--- printed\n%s", name, src, text)
	}
	return true
}

// TestRoundTripW3C applies the round trip to every query file of the W3C SPARQL
// suites (rdf-tests/sparql, all .rq files, valid or not) and to our testdata.
func TestRoundTripW3C(t *testing.T) {
	root := filepath.Join(w3cdir.ForTest(t), "rdf-tests", "sparql")
	var files []string
	err := filepath.WalkDir(root, func(path string, d os.DirEntry, err error) error {
		if err == nil && !d.IsDir() && strings.HasSuffix(path, ".rq") {
			files = append(files, path)
		}
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	local, _ := filepath.Glob("testdata/*.rq")
	files = append(files, local...)
	if len(files) < 500 {
		t.Fatalf("found only %d query files under %s", len(files), root)
	}
	parsed := 0
	for _, f := range files {
		src, err := os.ReadFile(f)
		if err != nil {
			t.Fatal(err)
		}
		abs, _ := filepath.Abs(f)
		if roundTrip(t, f, string(src), fileIRI(abs)) {
			parsed++
		}
	}
	t.Logf("round trip over %d query files, %d of which parse", len(files), parsed)
}

// FuzzParse asserts that no input makes the parser panic or hang, and that
// whatever parses survives the print and parse round trip. The seeds are the
// queries under testdata and the golden queries of the algebra package; go
// test also runs the inputs the fuzzer found, kept in testdata/fuzz/FuzzParse.
func FuzzParse(f *testing.F) {
	seeds, _ := filepath.Glob("testdata/*.rq")
	golden, _ := filepath.Glob("../algebra/testdata/*.rq")
	for _, s := range append(seeds, golden...) {
		src, err := os.ReadFile(s)
		if err == nil {
			f.Add(string(src))
		}
	}
	f.Fuzz(func(t *testing.T, src string) {
		roundTrip(t, "fuzz input", src, "http://example.org/base/")
	})
}

// TestGroupString checks that a group printed on its own spells out prefixed
// names (the text must parse without the query's prologue) and reads back as
// the same group.
func TestGroupString(t *testing.T) {
	for _, c := range []struct{ query, want string }{
		{`PREFIX ex: <http://x.example/> SELECT * { ?s ex:p "1"^^ex:t ; a ex:C FILTER (ex:f(?s)) }`,
			"{\n  ?s <http://x.example/p> \"1\"^^<http://x.example/t> ; a <http://x.example/C> .\n  FILTER (<http://x.example/f>(?s))\n}"},
		{`BASE <http://x.example/a/> SELECT * { ?s <b> ?o }`, "{\n  ?s <http://x.example/a/b> ?o .\n}"},
	} {
		q, err := sparql.Parse(c.query)
		if err != nil {
			t.Fatal(err)
		}
		got := sparql.GroupString(q.Where)
		if got != c.want {
			t.Errorf("%s:\ngot  %q\nwant %q", c.query, got, c.want)
		}
		back, err := sparql.Parse("SELECT * WHERE " + got)
		if err != nil {
			t.Errorf("%s: the printed group does not parse alone: %v", c.query, err)
		} else if again := sparql.GroupString(back.Where); again != got {
			t.Errorf("%s: read back as %q", c.query, again)
		}
	}
}
