package differential

import (
	"context"
	"database/sql"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"veneer/catalog/rdf"
	"veneer/cmd/veneer/demo"
)

// demoGraph materialises the demo database on SQLite.
func demoGraph(t *testing.T) *Graph {
	t.Helper()
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "windfarm.db")
	if err := demo.BuildSQLite(ctx, path); err != nil {
		t.Fatal(err)
	}
	db := openSQLite(t, path)
	g, err := Materialise(ctx, Database{DB: db, Dialect: "sqlite"}, demoCatalog(t))
	if err != nil {
		t.Fatal(err)
	}
	return g
}

func openSQLite(t *testing.T, path string) *sql.DB {
	t.Helper()
	db, err := sql.Open("sqlite", "file:"+path+"?mode=ro")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { db.Close() })
	return db
}

func TestMaterialiseDemo(t *testing.T) {
	g := demoGraph(t)
	has := map[string]bool{}
	for _, tr := range g.Triples {
		has[ntriple(tr)] = true
	}
	const res, wf = "https://data.veneer.example/windfarm/", "https://vocab.veneer.example/windfarm#"
	// Facts of the demo data (cmd/veneer/demo/generate.go, siteSpecs and the
	// part catalogue) under the rules of R2RML §7.3, §8, §10.2 and §11.
	for _, tr := range []rdf.Triple{
		{S: rdf.IRI(res + "site/RKF"), P: rdf.RDFType, O: rdf.IRI(wf + "Site")},
		{S: rdf.IRI(res + "site/RKF"), P: rdf.IRI(rdf.RDFSNS + "label"), O: rdf.NewString("Ringkøbing Fjord")},
		{S: rdf.IRI(res + "site/RKF"), P: rdf.IRI(wf + "latitude"), O: lit("56.01234", "decimal")},
		{S: rdf.IRI(res + "site/SDV"), P: rdf.IRI(wf + "longitude"), O: lit("-1.0123", "decimal")},
		{S: rdf.IRI(res + "site/OPL"), P: rdf.IRI(wf + "offshore"), O: lit("true", "boolean")},
		{S: rdf.IRI(res + "site/OPL"), P: rdf.IRI(wf + "commissionedOn"), O: lit("2019-05-02", "date")},
		{S: rdf.IRI(res + "site/OPL"), P: rdf.IRI(wf + "operatedBy"), O: rdf.IRI(res + "operator")},
		{S: rdf.IRI(res + "turbine/WF36-2013-7106"), P: rdf.IRI(wf + "locatedAt"), O: rdf.IRI(res + "site/RKF")},
		{S: rdf.IRI(res + "turbine/WF36-2013-7106"), P: rdf.IRI(wf + "hubHeightM"), O: lit("119.5", "decimal")},
		{S: rdf.IRI(res + "turbine/WF36-2013-7106"), P: rdf.IRI(wf + "firmwareDigest"), O: lit("484C11D7C920DAEAF907ED2FB8736A4C", "hexBinary")},
		{S: rdf.IRI(res + "work-order/WO-2021-00001"), P: rdf.IRI(wf + "openedAt"), O: lit("2021-01-05T13:05:00", "dateTime")},
		{S: rdf.IRI(res + "work-order/WO-2021-00001"), P: rdf.IRI(wf + "description"),
			O: rdf.NewLangString("Follow-up to inspection: leading-edge erosion on blade C", "en")},
		{S: rdf.IRI(res + "part-usage/10-17"), P: rdf.IRI(wf + "part"), O: rdf.IRI(res + "part/MBG-3613")},
		{S: rdf.IRI(res + "inspection/1"), P: rdf.IRI(wf + "vibration"), O: lit("1.98E0", "double")},
	} {
		if !has[ntriple(tr)] {
			t.Errorf("missing %s", strings.TrimSpace(ntriple(tr)))
		}
	}
	count := func(p, o string) (n int) {
		for _, tr := range g.Triples {
			if string(tr.P.(rdf.IRI)) == p && (o == "" || tr.O.String() == o) {
				n++
			}
		}
		return n
	}
	// WO-2021-00001 is unassigned: a NULL foreign key gives no triple (§11), so
	// fewer work orders are assigned than there are.
	for _, tr := range g.Triples {
		if tr.S == rdf.IRI(res+"work-order/WO-2021-00001") && tr.P == rdf.IRI(wf+"assignedTo") {
			t.Errorf("the unassigned work order WO-2021-00001 has a wf:assignedTo triple")
		}
	}
	orders := count(rdf.RDFNS+"type", "<"+wf+"WorkOrder>")
	if orders != 2000 || count(wf+"assignedTo", "") >= orders || count(wf+"closedAt", "") >= orders {
		t.Errorf("%d work orders, %d assigned, %d closed: want 2000, and fewer assigned and closed",
			orders, count(wf+"assignedTo", ""), count(wf+"closedAt", ""))
	}
	// The view: one open work order for each work order without a closing time.
	if open, closed := count(rdf.RDFNS+"type", "<"+wf+"OpenWorkOrder>"), count(wf+"closedAt", ""); open+closed != orders {
		t.Errorf("%d open and %d closed work orders, want %d in all", open, closed, orders)
	}
	// IRI-safe part numbers: "/" is percent-encoded (§7.3).
	if count(wf+"part", "<"+res+"part/GNB-2352%2FC3>") == 0 {
		t.Errorf("no usage of the part GNB-2352/C3, percent-encoded")
	}
}

func TestGenerate(t *testing.T) {
	g := demoGraph(t)
	a, b := Generate(g, defaultSeed, defaultCount), Generate(g, defaultSeed, defaultCount)
	if len(a) != defaultCount {
		t.Fatalf("Generate made %d queries, want %d", len(a), defaultCount)
	}
	for i := range a {
		if a[i].Text != b[i].Text || a[i].Mode != b[i].Mode {
			t.Fatalf("query %d differs between two runs with one seed:\n%s\n%s", i+1, a[i].Text, b[i].Text)
		}
	}
	if c := Generate(g, defaultSeed+1, defaultCount); slices.EqualFunc(a, c, func(x, y Query) bool { return x.Text == y.Text }) {
		t.Errorf("two seeds give the same queries")
	}
	// Every family and every comparison mode, and the parts of SPARQL the
	// differential test is meant to cover, appear among the queries of the
	// default run.
	families := map[string]int{}
	modes := map[Mode]int{}
	text := ""
	for _, q := range a {
		families[q.Family]++
		modes[q.Mode]++
		text += q.Text
	}
	for _, f := range []string{"star", "chain", "optional", "union", "minus", "filter", "bind", "aggregate",
		"order-limit", "distinct", "path", "ask", "construct", "subquery", "exists"} {
		if families[f] == 0 {
			t.Errorf("no query of the family %s", f)
		}
	}
	for _, m := range []Mode{Bag, Ordered, Limited} {
		if modes[m] == 0 {
			t.Errorf("no query compared as %s", m)
		}
	}
	for _, kw := range []string{"OPTIONAL", "UNION", "MINUS", "FILTER", "BIND", "VALUES", "GROUP BY", "HAVING",
		"COUNT(", "SUM(", "MIN(", "MAX(", "AVG(", "GROUP_CONCAT(", "ORDER BY", "DESC(", "LIMIT", "OFFSET",
		"DISTINCT", " IN (", "BOUND(", "REGEX(", "STRSTARTS(", "UCASE(", "STRLEN(", "EXISTS", "ASK", "CONSTRUCT",
		")+ ", ")* ", "? ?", "^wf:", "|", "!(rdf:type"} {
		if !strings.Contains(text, kw) {
			t.Errorf("no query uses %q", kw)
		}
	}
}
