package exec_test

import (
	"context"
	"testing"

	"veneer/rewrite"
)

// BenchmarkQueryOverhead times a point lookup through the engine (plan cache,
// planning state, cursor, decoding) against the same statement through the
// source alone, on the demo in SQLite: the difference is what veneer adds to
// a query that returns one row. It measures; it asserts nothing about time.
func BenchmarkQueryOverhead(b *testing.B) {
	ctx := context.Background()
	d, engine := demoEngine(b)
	const query = `PREFIX wf: <https://vocab.veneer.example/windfarm#>
SELECT ?serial ?kw WHERE { <https://data.veneer.example/windfarm/turbine/WF23-2012-000001> wf:serialNumber ?serial ; wf:ratedPowerKW ?kw }`
	plan, err := engine.Planner.Compile(query)
	if err != nil {
		b.Fatal(err)
	}
	scan, ok := plan.Root.(*rewrite.Scan)
	if !ok {
		b.Fatalf("the plan is %T, not one scan", plan.Root)
	}
	b.Run("engine", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			c, err := engine.Query(ctx, query)
			if err != nil {
				b.Fatal(err)
			}
			for c.Next() {
			}
			if err := c.Err(); err != nil {
				b.Fatal(err)
			}
			c.Close()
		}
	})
	b.Run("source", func(b *testing.B) {
		b.ReportAllocs()
		for b.Loop() {
			rows, err := d.Source.Query(ctx, scan.SQL, scan.Args...)
			if err != nil {
				b.Fatal(err)
			}
			for rows.Next() {
			}
			if err := rows.Err(); err != nil {
				b.Fatal(err)
			}
			rows.Close()
		}
	})
}
