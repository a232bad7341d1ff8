package rewrite_test

import (
	"strings"
	"testing"

	"veneer/rewrite"
	"veneer/rewrite/sql"
)

// TestSQLShapes checks, for common query shapes over the demo mapping, that the
// planner's SQL reads exactly as many tables as the SQL a database engineer would
// write for the same question (the hand-written SQL is given beside each case).
func TestSQLShapes(t *testing.T) {
	pl := demoPlanner(t)
	const p = `PREFIX wf: <https://vocab.veneer.example/windfarm#>
PREFIX rdfs: <http://www.w3.org/2000/01/rdf-schema#>
`
	cases := []struct {
		name, query, handWritten string
		tables                   int
	}{
		{"star on one table", p + `SELECT ?serial ?kw ?model WHERE { ?t wf:serialNumber ?serial ; wf:ratedPowerKW ?kw ; wf:model ?model }`,
			`SELECT serial, rated_power_kw, model FROM turbine`, 1},
		{"type filter", p + `SELECT ?t WHERE { ?t a wf:Turbine ; wf:status "operating" }`,
			`SELECT serial FROM turbine WHERE status = 'operating'`, 1},
		{"constant IRI lookup", p + `SELECT ?kw WHERE { <https://data.veneer.example/windfarm/turbine/RKF-01> wf:ratedPowerKW ?kw }`,
			`SELECT rated_power_kw FROM turbine WHERE serial = ?`, 1},
		{"chain over one foreign key", p + `SELECT ?serial ?site WHERE { ?t wf:serialNumber ?serial ; wf:locatedAt ?s . ?s rdfs:label ?site }`,
			`SELECT t.serial, s.name FROM turbine t JOIN site s ON s.site_id = t.site_id`, 2},
		{"chain over two foreign keys", p + `SELECT ?order ?site WHERE { ?w wf:orderNumber ?order ; wf:onTurbine ?t . ?t wf:locatedAt ?s . ?s rdfs:label ?site }`,
			`SELECT w.order_number, s.name FROM work_order w JOIN turbine t ON … JOIN site s ON …`, 3},
		{"OPTIONAL attribute", p + `SELECT ?order ?closed WHERE { ?w wf:orderNumber ?order OPTIONAL { ?w wf:closedAt ?closed } }`,
			`SELECT order_number, closed_at FROM work_order`, 1},
		{"range filter", p + `SELECT ?t WHERE { ?t wf:ratedPowerKW ?kw . FILTER(?kw > 3000) }`,
			`SELECT serial FROM turbine WHERE rated_power_kw > 3000`, 1},
		{"count per site", p + `SELECT ?s (COUNT(?t) AS ?n) WHERE { ?t wf:locatedAt ?s } GROUP BY ?s`,
			`SELECT s.code, COUNT(*) FROM turbine t JOIN site s ON … GROUP BY s.code`, 2},
		{"top-k", p + `SELECT ?t ?kw WHERE { ?t wf:ratedPowerKW ?kw } ORDER BY DESC(?kw) LIMIT 5`,
			`SELECT serial, rated_power_kw FROM turbine ORDER BY rated_power_kw DESC LIMIT 5`, 1},
		{"VALUES-bound join", p + `SELECT ?t ?kw WHERE { VALUES ?t { <https://data.veneer.example/windfarm/turbine/RKF-01> } ?t wf:ratedPowerKW ?kw }`,
			`SELECT serial, rated_power_kw FROM turbine WHERE serial IN (?)`, 1},
	}
	for _, c := range cases {
		plan, err := pl.Compile(c.query)
		if err != nil {
			t.Errorf("%s: %v", c.name, err)
			continue
		}
		scan, ok := plan.Root.(*rewrite.Scan)
		if !ok {
			t.Errorf("%s: not one SQL statement:\n%s", c.name, rewrite.Explain(plan))
			continue
		}
		if got := countTables(scan.Stmt); got != c.tables {
			t.Errorf("%s: %d table references, hand-written SQL has %d (%s)\n%s", c.name, got, c.tables, c.handWritten, scan.SQL)
		}
	}
}

func TestOneRowNeedsNoDistinct(t *testing.T) {
	// The rows of an R2RML view may repeat (it has no key), so its solutions
	// need DISTINCT, and a union over it a set UNION; but one row is a first
	// solution all the same, so LIMIT 1 and ASK need neither, and the
	// database can stop at the first row (SPARQL 1.1 §15.4, §15.5: DISTINCT
	// and LIMIT; a first row of the solutions is a first row of the rows).
	pl := demoPlanner(t)
	const p = "PREFIX wf: <https://vocab.veneer.example/windfarm#>\n"
	for _, c := range []struct {
		query string
		set   bool // DISTINCT or a set UNION in the SQL
	}{
		{p + "SELECT ?w WHERE { ?w a wf:OpenWorkOrder }", true},
		{p + "SELECT ?w WHERE { ?w a wf:OpenWorkOrder } LIMIT 1", false},
		{p + "SELECT ?w WHERE { ?w a wf:OpenWorkOrder } LIMIT 1 OFFSET 1", true},
		{p + "ASK { ?w a wf:OpenWorkOrder }", false},
		{p + "SELECT ?w ?c WHERE { ?w a ?c }", true},
		{p + "ASK { ?w a ?c }", false},
	} {
		plan, err := pl.Compile(c.query)
		if err != nil {
			t.Fatal(err)
		}
		text := rewrite.Explain(plan)
		set := strings.Contains(text, "DISTINCT") || strings.Contains(strings.ReplaceAll(text, "UNION ALL", ""), "UNION")
		if set != c.set {
			t.Errorf("%s: DISTINCT or set UNION %v, want %v\n%s", c.query, set, c.set, text)
		}
	}
}

// TestPrunedJoinTestsOnlyNullableKeys checks join elimination over a foreign
// key: a triple pattern whose object is the referenced row's IRI exists for a
// row exactly when its foreign key column is set (R2RML §11: no term, no
// triple), so the pruned SQL tests IS NOT NULL on a nullable column and
// nothing on a NOT NULL one. Demo schema: work_order.technician_id is
// nullable, work_order.turbine_id and inspection.turbine_id are NOT NULL.
func TestPrunedJoinTestsOnlyNullableKeys(t *testing.T) {
	pl := demoPlanner(t)
	const p = "PREFIX wf: <https://vocab.veneer.example/windfarm#>\n"
	for _, c := range []struct {
		query, want string
		nullTests   int
	}{
		{p + "SELECT ?w WHERE { ?w wf:assignedTo ?tech }", `"technician_id" IS NOT NULL`, 1},
		{p + "SELECT (COUNT(*) AS ?n) WHERE { ?s wf:onTurbine ?o }", "", 0},
	} {
		plan, err := pl.Compile(c.query)
		if err != nil {
			t.Fatal(err)
		}
		text := rewrite.Explain(plan)
		if got := strings.Count(text, "IS NOT NULL"); got != c.nullTests || !strings.Contains(text, c.want) {
			t.Errorf("%s: %d IS NOT NULL tests, want %d (%s)\n%s", c.query, got, c.nullTests, c.want, text)
		}
		if strings.Contains(text, "technician ") || strings.Contains(text, "FROM turbine") {
			t.Errorf("%s: the referenced table is still joined\n%s", c.query, text)
		}
	}
}

// countTables counts the base-table references in a statement's FROM clauses,
// sub-queries included.
func countTables(s sql.Stmt) int {
	n := 0
	var from func(f sql.From)
	var stmt func(s sql.Stmt)
	from = func(f sql.From) {
		switch f := f.(type) {
		case *sql.Table:
			n++
		case *sql.Derived:
			if f.Stmt != nil {
				stmt(f.Stmt)
			} else {
				n++ // an R2RML view counts as the one table the author wrote
			}
		case *sql.LeftJoin:
			from(f.Right)
		}
	}
	stmt = func(s sql.Stmt) {
		switch s := s.(type) {
		case *sql.Select:
			for _, f := range s.From {
				from(f)
			}
		case *sql.Union:
			for _, sel := range s.Selects {
				stmt(sel)
			}
		}
	}
	stmt(s)
	return n
}
