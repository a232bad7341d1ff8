package algebra_test

import (
	"errors"
	"flag"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"veneer/rewrite/algebra"
	"veneer/rewrite/sparql"
)

var update = flag.Bool("update", false, "rewrite the golden files under testdata")

// TestGolden translates every testdata/*.rq query and compares the printed
// algebra with testdata/*.algebra. Each query starts with comments naming the
// section of SPARQL 1.1 Query (§18.2 mostly) whose rules it checks; the
// expected trees follow those rules and were checked against them by hand.
// -update regenerates them from the current output, for a reviewer to read
// the diff.
func TestGolden(t *testing.T) {
	files, err := filepath.Glob("testdata/*.rq")
	if err != nil || len(files) == 0 {
		t.Fatalf("no golden inputs: %v", err)
	}
	for _, file := range files {
		name := strings.TrimSuffix(filepath.Base(file), ".rq")
		t.Run(name, func(t *testing.T) {
			src, err := os.ReadFile(file)
			if err != nil {
				t.Fatal(err)
			}
			if !strings.HasPrefix(string(src), "# §") {
				t.Errorf("%s does not start with a comment citing the section it checks (# §...)", file)
			}
			q, err := sparql.Parse(string(src))
			if err != nil {
				t.Fatalf("parse: %v", err)
			}
			a, err := algebra.Translate(q)
			if err != nil {
				t.Fatalf("translate: %v", err)
			}
			got := a.String() + "\n"
			golden := strings.TrimSuffix(file, ".rq") + ".algebra"
			if *update {
				if err := os.WriteFile(golden, []byte(got), 0o644); err != nil {
					t.Fatal(err)
				}
				return
			}
			want, err := os.ReadFile(golden)
			if err != nil {
				t.Fatalf("%v (run go test -update to create it)", err)
			}
			if got != string(want) {
				t.Errorf("algebra differs from %s:\n--- got\n%s--- want\n%s", golden, got, want)
			}
		})
	}
}

// FuzzTranslate asserts that translating any query that parses neither panics
// nor fails without a positioned error. The seeds are the golden inputs.
func FuzzTranslate(f *testing.F) {
	seeds, _ := filepath.Glob("testdata/*.rq")
	for _, s := range seeds {
		if src, err := os.ReadFile(s); err == nil {
			f.Add(string(src))
		}
	}
	f.Fuzz(func(t *testing.T, src string) {
		q, err := sparql.Parse(src)
		if err != nil {
			return
		}
		a, err := algebra.Translate(q)
		if err != nil {
			var list sparql.ErrorList
			if !errors.As(err, &list) || len(list) == 0 {
				t.Fatalf("translation error without positions: %v", err)
			}
			return
		}
		_ = a.String()
	})
}
