package rewrite_test

import (
	"os"
	"path/filepath"
	"testing"

	"veneer/catalog/source"
	"veneer/rewrite"
	"veneer/rewrite/sql"
)

// FuzzPlan feeds query texts through parse → translate → plan for the three
// dialects: whatever the text, the planner answers with a plan or an error,
// never a panic, and every SQL statement of a plan prints with exactly one bind
// argument per placeholder of its dialect. Each text also goes three times
// through the plan cache, so that a text with VALUES data is planned alone,
// then with its data lifted out, then bound into its shape's plan.
func FuzzPlan(f *testing.F) {
	seeds, _ := filepath.Glob("testdata/plans/*.rq")
	for _, s := range seeds {
		if b, err := os.ReadFile(s); err == nil {
			f.Add(string(b))
		}
	}
	planners := map[source.Dialect]*rewrite.Planner{}
	for _, d := range []source.Dialect{source.Postgres, source.MySQL, source.SQLite} {
		planners[d] = planner(f, d)
	}
	f.Fuzz(func(t *testing.T, text string) {
		for d, pl := range planners {
			p, err := pl.CompileFresh(text)
			if err != nil {
				continue
			}
			for _, s := range scans(p.Root) {
				if s.Stmt == nil {
					continue
				}
				text, args := sql.Print(s.Stmt, d)
				if got := placeholders(text, d); got != len(args) {
					t.Fatalf("%s: %d placeholders, %d arguments in %s", d, got, len(args), text)
				}
			}
			for range 3 {
				p, _, err := pl.CompileRequest(rewrite.Request{Text: text})
				if err != nil {
					t.Fatalf("%s: planned alone, but through the cache: %v", d, err)
				}
				for _, s := range scans(p.Root) {
					if got := placeholders(s.SQL, d); s.Stmt != nil && got != len(s.Args) {
						t.Fatalf("%s, through the cache: %d placeholders, %d arguments in %s", d, got, len(s.Args), s.SQL)
					}
				}
			}
		}
	})
}

// scans lists the SQL scans of an operator tree.
func scans(op rewrite.Op) []*rewrite.Scan {
	switch op := op.(type) {
	case *rewrite.Scan:
		return []*rewrite.Scan{op}
	case *rewrite.Filter:
		return scans(op.Input)
	case *rewrite.Extend:
		return scans(op.Input)
	case *rewrite.Join:
		return append(scans(op.Left), scans(op.Right)...)
	case *rewrite.LeftJoin:
		return append(scans(op.Left), scans(op.Right)...)
	case *rewrite.Union:
		return append(scans(op.Left), scans(op.Right)...)
	case *rewrite.Minus:
		return append(scans(op.Left), scans(op.Right)...)
	case *rewrite.Group:
		return scans(op.Input)
	case *rewrite.Order:
		return scans(op.Input)
	case *rewrite.Project:
		return scans(op.Input)
	case *rewrite.Distinct:
		return scans(op.Input)
	case *rewrite.Slice:
		return scans(op.Input)
	case *rewrite.PerGraph:
		return scans(op.Names)
	}
	return nil
}

// placeholders counts the bind placeholders outside quoted identifiers. The
// printer puts no literal text in SQL, so every ? or $n is a placeholder.
func placeholders(text string, d source.Dialect) int {
	n := 0
	quote := byte('"')
	if d == source.MySQL {
		quote = '`'
	}
	in := false
	for i := 0; i < len(text); i++ {
		switch c := text[i]; {
		case c == quote:
			in = !in
		case in:
		case d == source.Postgres && c == '$':
			n++
		case d != source.Postgres && c == '?':
			n++
		}
	}
	return n
}
