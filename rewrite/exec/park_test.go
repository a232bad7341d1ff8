package exec_test

import (
	"context"
	"errors"
	"strings"
	"testing"

	"veneer/catalog/source"
	"veneer/rewrite"
	"veneer/rewrite/exec"
)

// oneConnection is a source that, like a pool of one connection, holds one
// statement open at a time: a second Query while one is open fails, where a
// pool would wait for a connection that the waiting query itself holds.
type oneConnection struct {
	source.Source
	open int
}

func (o *oneConnection) Query(ctx context.Context, sql string, args ...any) (source.Rows, error) {
	if o.open > 0 {
		return nil, errors.New("a second statement while one is open")
	}
	rows, err := o.Source.Query(ctx, sql, args...)
	if err != nil {
		return nil, err
	}
	o.open++
	return &heldRows{Rows: rows, o: o}, nil
}

// heldRows gives its connection back when closed.
type heldRows struct {
	source.Rows
	o      *oneConnection
	closed bool
}

func (h *heldRows) Close() error {
	if !h.closed {
		h.closed = true
		h.o.open--
	}
	return h.Rows.Close()
}

// TestNestedStatementsHoldOneConnection runs an EXISTS that the planner leaves
// in-process (STRLEN has no SQL form here), so that its pattern runs as a
// statement of its own for each solution of the outer statement, on a source
// of one connection. The outer rows are read into memory before the inner
// statement starts, so the query never holds two connections; the answer is
// counted against the database's own count (every turbine has a status, so
// every work order and inspection on a turbine passes the filter).
func TestNestedStatementsHoldOneConnection(t *testing.T) {
	ctx := context.Background()
	d, base := demoEngine(t)
	rows, err := d.Source.Query(ctx, "SELECT (SELECT COUNT(*) FROM work_order) + (SELECT COUNT(*) FROM inspection)")
	if err != nil {
		t.Fatal(err)
	}
	var want int64
	for rows.Next() {
		want = rows.Values()[0].(int64)
	}
	rows.Close()
	one := &oneConnection{Source: d.Source}
	engine := &exec.Engine{Planner: base.Planner, Source: one}
	const q = `PREFIX wf: <https://vocab.veneer.example/windfarm#>
SELECT ?w WHERE { ?w wf:onTurbine ?t FILTER EXISTS { ?t wf:status ?s FILTER(STRLEN(STR(?t)) > STRLEN(LCASE(?s))) } }`
	p, _, err := engine.Planner.CompileRequest(rewrite.Request{Text: q})
	if err != nil {
		t.Fatal(err)
	}
	if plan := rewrite.Explain(p); !strings.Contains(plan, "in-process filter (exists") {
		t.Fatalf("the EXISTS is not evaluated in-process, so this test tests nothing:\n%s", plan)
	}
	c, err := engine.Query(ctx, q)
	if err != nil {
		t.Fatal(err)
	}
	var got int64
	for c.Next() {
		got++
	}
	if err := c.Err(); err != nil {
		t.Fatal(err)
	}
	c.Close()
	if got != want || want == 0 {
		t.Errorf("%d solutions, the database counts %d", got, want)
	}
	if one.open != 0 {
		t.Errorf("%d statements left open", one.open)
	}
	// With room for only 5 rows in memory, the outer statement stays open
	// past them and the inner ones take a second connection of the pool
	// (of 8): the same answer.
	small := &exec.Engine{Planner: engine.Planner, Source: d.Source, Options: exec.Options{MaxBuffered: 5}}
	c, err = small.Query(ctx, q)
	if err != nil {
		t.Fatal(err)
	}
	got = 0
	for c.Next() {
		got++
	}
	if err := c.Err(); err != nil {
		t.Fatal(err)
	}
	c.Close()
	if got != want {
		t.Errorf("with 5 rows of memory: %d solutions, the database counts %d", got, want)
	}
}
