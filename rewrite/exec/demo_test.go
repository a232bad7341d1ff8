package exec_test

import (
	"context"
	"path/filepath"
	"testing"

	"veneer/cmd/veneer/demo"
	"veneer/rewrite"
	"veneer/rewrite/exec"
)

// demoEngine builds the demo database in SQLite for one test and returns it
// with an engine over its source; the source closes when the test ends.
func demoEngine(tb testing.TB) (*demo.Served, *exec.Engine) {
	d, err := demo.OpenSQLite(context.Background(), filepath.Join(tb.TempDir(), "demo.db"))
	if err != nil {
		tb.Fatal(err)
	}
	tb.Cleanup(func() { d.Source.Close() })
	return d, &exec.Engine{Planner: rewrite.NewPlanner(d.Catalog, d.Columns, d.Source.Dialect()), Source: d.Source}
}
