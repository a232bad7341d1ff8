package rewrite_test

import (
	"context"
	"database/sql"
	"errors"
	"flag"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	_ "modernc.org/sqlite"

	"veneer/catalog"
	"veneer/catalog/r2rml"
	"veneer/catalog/source"
	"veneer/rewrite"
	"veneer/rewrite/algebra"
)

var update = flag.Bool("update", false, "rewrite the golden files")

// planner builds a planner over testdata/schema.sql and testdata/mapping.ttl,
// probing the columns on a real SQLite file.
func planner(t testing.TB, d source.Dialect) *rewrite.Planner {
	t.Helper()
	path := filepath.Join(t.TempDir(), "plan.db")
	db, err := sql.Open("sqlite", path)
	if err != nil {
		t.Fatal(err)
	}
	schema, err := os.ReadFile("testdata/schema.sql")
	if err != nil {
		t.Fatal(err)
	}
	if _, err := db.Exec(string(schema)); err != nil {
		t.Fatal(err)
	}
	db.Close()
	cat, err := r2rml.LoadFiles("testdata/mapping.ttl")
	if err != nil {
		t.Fatal(err)
	}
	src, err := source.Open(context.Background(), "sqlite:"+path)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { src.Close() })
	cols, err := catalog.ProbeColumns(context.Background(), src, cat)
	if err != nil {
		t.Fatal(err)
	}
	return rewrite.NewPlanner(cat, cols, d)
}

// TestPlansGolden prints the plan of each testdata/plans/*.rq for the three
// dialects; a reviewer reads the diff when a golden file changes (go test -update).
func TestPlansGolden(t *testing.T) {
	queries, _ := filepath.Glob("testdata/plans/*.rq")
	if len(queries) == 0 {
		t.Fatal("no queries under testdata/plans")
	}
	planners := map[source.Dialect]*rewrite.Planner{}
	for _, d := range []source.Dialect{source.Postgres, source.MySQL, source.SQLite} {
		planners[d] = planner(t, d)
	}
	for _, q := range queries {
		text, err := os.ReadFile(q)
		if err != nil {
			t.Fatal(err)
		}
		var b strings.Builder
		for _, d := range []source.Dialect{source.Postgres, source.MySQL, source.SQLite} {
			p, err := planners[d].Compile(string(text))
			if err != nil {
				t.Fatalf("%s: %v", q, err)
			}
			b.WriteString("== " + d.String() + "\n" + rewrite.Explain(p))
		}
		golden := strings.TrimSuffix(q, ".rq") + ".golden"
		if *update {
			if err := os.WriteFile(golden, []byte(b.String()), 0o644); err != nil {
				t.Fatal(err)
			}
			continue
		}
		want, err := os.ReadFile(golden)
		if err != nil {
			t.Fatalf("%v (go test -update creates it)", err)
		}
		if b.String() != string(want) {
			t.Errorf("%s:\ngot:\n%s\nwant:\n%s", q, b.String(), want)
		}
	}
}

func TestUnsupportedIsNamed(t *testing.T) {
	pl := planner(t, source.SQLite)
	_, err := pl.Compile(`SELECT * WHERE { SERVICE ?where { ?s ?p ?o } }`)
	if err == nil || !strings.Contains(err.Error(), "SERVICE with a variable endpoint") {
		t.Errorf("err = %v, want one naming SERVICE with a variable endpoint", err)
	}
}

// TestServicePlan checks that SERVICE on the right of a join is planned as a
// bind join whose pattern text needs no prologue.
func TestServicePlan(t *testing.T) {
	pl := planner(t, source.SQLite)
	p, err := pl.Compile(`PREFIX ex: <http://x.example/> SELECT * WHERE { ?s ?p ?o .
		SERVICE SILENT <http://elsewhere.example/sparql> { ?s ex:q ?v FILTER (?v > 1) } }`)
	if err != nil {
		t.Fatal(err)
	}
	var join *rewrite.Join
	for op := p.Root; join == nil; {
		switch o := op.(type) {
		case *rewrite.Project:
			op = o.Input
		case *rewrite.Join:
			join = o
		default:
			t.Fatalf("plan root %T, want a Join under a projection", op)
		}
	}
	svc, ok := join.Right.(*rewrite.Service)
	if !ok {
		t.Fatalf("right of the join is %T, want *rewrite.Service", join.Right)
	}
	if svc.Endpoint != "http://elsewhere.example/sparql" || !svc.Silent ||
		!strings.Contains(svc.Pattern, "<http://x.example/q>") || strings.Contains(svc.Pattern, "ex:") ||
		!slices.Equal(svc.Vars, []algebra.Var{"s", "v"}) {
		t.Errorf("service %+v", svc)
	}
}

func TestLimits(t *testing.T) {
	pl := planner(t, source.SQLite)
	pl.SetLimits(rewrite.Limits{MaxUnions: 4, MaxTables: 64})
	// ?s ?p ?o unfolds into one branch per producer: more than four.
	_, err := pl.Compile(`SELECT * WHERE { ?s ?p ?o }`)
	var tc *rewrite.TooComplex
	if !errors.As(err, &tc) || !strings.Contains(err.Error(), "union branches") {
		t.Errorf("err = %v, want a TooComplex error about union branches", err)
	}
	pl.SetLimits(rewrite.Limits{MaxUnions: 512, MaxTables: 2})
	_, err = pl.Compile(`PREFIX wf: <https://vocab.veneer.example/windfarm#>
SELECT * WHERE { ?t wf:locatedAt ?s . ?u wf:locatedAt ?s . ?v wf:locatedAt ?s }`)
	if !errors.As(err, &tc) || !strings.Contains(err.Error(), "tables") {
		t.Errorf("err = %v, want a TooComplex error about tables", err)
	}
}
