package server

import (
	"context"
	"path/filepath"
	"sync/atomic"
	"testing"

	"veneer/catalog/source"
	"veneer/cmd/veneer/demo"
	"veneer/rewrite"
	"veneer/rewrite/exec"
)

// countingSource counts the statements run on a source.
type countingSource struct {
	source.Source
	statements atomic.Int64
}

func (c *countingSource) Query(ctx context.Context, sql string, args ...any) (source.Rows, error) {
	c.statements.Add(1)
	return c.Source.Query(ctx, sql, args...)
}

// TestStartReadsNoSource holds veneer's engine to the Engine contract the
// server's admission relies on: neither Prepare nor Start runs a statement;
// reading the answer does (for ASK, Boolean; for the other forms, Next).
func TestStartReadsNoSource(t *testing.T) {
	ctx := context.Background()
	d, err := demo.OpenSQLite(ctx, filepath.Join(t.TempDir(), "demo.db"))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { d.Source.Close() })
	counting := &countingSource{Source: d.Source}
	engine := FromExec(&exec.Engine{Planner: rewrite.NewPlanner(d.Catalog, d.Columns, d.Source.Dialect()), Source: counting})
	const wf = "PREFIX wf: <https://vocab.veneer.example/windfarm#>\n"
	for _, text := range []string{
		wf + "ASK { ?w wf:onTurbine ?t }",
		wf + "SELECT ?w WHERE { ?w wf:onTurbine ?t }",
		wf + "CONSTRUCT { ?w wf:onTurbine ?t } WHERE { ?w wf:onTurbine ?t }",
		wf + "DESCRIBE ?t WHERE { ?w wf:onTurbine ?t } LIMIT 1",
	} {
		before := counting.statements.Load()
		p, err := engine.Prepare(Query{Text: text})
		if err != nil {
			t.Fatal(err)
		}
		a, err := p.Start(ctx)
		if err != nil {
			t.Fatal(err)
		}
		if n := counting.statements.Load() - before; n != 0 {
			t.Errorf("%s: %d statements before the answer was read", text, n)
		}
		var got bool
		switch {
		case a.Boolean != nil:
			got, err = a.Boolean()
		case a.Solutions != nil:
			got, err = a.Solutions.Next(), a.Solutions.Err()
		default:
			got, err = a.Graph.Next(), a.Graph.Err()
		}
		a.Close()
		if err != nil || !got {
			t.Errorf("%s: read %v, %v; want an answer", text, got, err)
		}
		if counting.statements.Load() == before {
			t.Errorf("%s: reading the answer ran no statement", text)
		}
	}
}
