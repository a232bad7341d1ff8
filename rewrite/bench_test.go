package rewrite_test

import (
	"context"
	"database/sql"
	"fmt"
	"path/filepath"
	"strings"
	"testing"

	"veneer/catalog"
	"veneer/catalog/r2rml"
	"veneer/catalog/source"
	"veneer/cmd/veneer-bench/mix"
	"veneer/cmd/veneer/demo"
	"veneer/rewrite"
)

// The benchmarks here time translation, parse + plan (Planner.Compile), the part
// of a query's latency that veneer adds before the database sees any SQL. They
// measure; they assert nothing about time. cmd/veneer-bench reports the same
// figure for its query mix.

// benchPlanner probes a mapping against an empty SQLite database built from
// schema and returns a planner writing PostgreSQL, the dialect the benchmark
// targets are set on.
func benchPlanner(b testing.TB, schema []string, mapping string) *rewrite.Planner {
	b.Helper()
	path := filepath.Join(b.TempDir(), "bench.db")
	db, err := sql.Open("sqlite", path)
	if err != nil {
		b.Fatal(err)
	}
	for _, stmt := range schema {
		if _, err := db.Exec(stmt); err != nil {
			b.Fatalf("%s: %v", stmt, err)
		}
	}
	db.Close()
	cat, err := r2rml.Load("bench.ttl", []byte(mapping))
	if err != nil {
		b.Fatal(err)
	}
	ctx := context.Background()
	src, err := source.Open(ctx, "sqlite:"+path)
	if err != nil {
		b.Fatal(err)
	}
	b.Cleanup(func() { src.Close() })
	cols, err := catalog.ProbeColumns(ctx, src, cat)
	if err != nil {
		b.Fatal(err)
	}
	return rewrite.NewPlanner(cat, cols, source.Postgres)
}

func benchCompile(b *testing.B, pl *rewrite.Planner, query string) {
	b.Helper()
	if _, err := pl.CompileFresh(query); err != nil {
		b.Fatalf("%v\n%s", err, query)
	}
	b.ReportAllocs()
	b.ResetTimer()
	for range b.N {
		if _, err := pl.CompileFresh(query); err != nil {
			b.Fatal(err)
		}
	}
}

// syntheticCatalog is a schema of n tables t0000…, each with a key, a name, a
// value and a foreign key to the table before it, and its mapping: one triples
// map per table with its own class and value property, and two properties all
// maps share (rdfs:label and ex:parent), which the planner has to prune by
// class and IRI template.
func syntheticCatalog(n int) (schema []string, mapping string) {
	var m strings.Builder
	m.WriteString(`@prefix rr: <http://www.w3.org/ns/r2rml#> .
@prefix rdfs: <http://www.w3.org/2000/01/rdf-schema#> .
@prefix ex: <https://vocab.veneer.example/synthetic#> .
@prefix map: <https://data.veneer.example/synthetic/mapping#> .
`)
	for i := range n {
		t := fmt.Sprintf("t%04d", i)
		ddl := fmt.Sprintf("CREATE TABLE %s (id INTEGER PRIMARY KEY, name VARCHAR(40) NOT NULL, val INTEGER, parent_id INTEGER", t)
		if i > 0 {
			ddl += fmt.Sprintf(" REFERENCES t%04d (id)", i-1)
		}
		schema = append(schema, ddl+")")
		fmt.Fprintf(&m, `
map:%[1]s a rr:TriplesMap ;
    rr:logicalTable [ rr:tableName "%[1]s" ] ;
    rr:subjectMap [ rr:template "https://data.veneer.example/synthetic/%[1]s/{id}" ; rr:class ex:C%[1]s ] ;
    rr:predicateObjectMap [ rr:predicate rdfs:label ; rr:objectMap [ rr:column "name" ] ] ;
    rr:predicateObjectMap [ rr:predicate ex:v%[1]s ; rr:objectMap [ rr:column "val" ] ] .
`, t)
		if i > 0 {
			fmt.Fprintf(&m, `map:%s rr:predicateObjectMap [ rr:predicate ex:parent ;
    rr:objectMap [ rr:parentTriplesMap map:t%04d ; rr:joinCondition [ rr:child "parent_id" ; rr:parent "id" ] ] ] .
`, t, i-1)
		}
	}
	return schema, m.String()
}

// BenchmarkCompileCatalogSize times the translation of one query over catalogs
// of 10, 100 and 1000 triples maps. The query names one class and one map's
// own property, and two properties every map has; the growth from size to size
// shows what pruning costs per map (the target: no worse than linear).
func BenchmarkCompileCatalogSize(b *testing.B) {
	const query = `PREFIX rdfs: <http://www.w3.org/2000/01/rdf-schema#>
PREFIX ex: <https://vocab.veneer.example/synthetic#>
SELECT ?x ?name ?v ?up ?upName WHERE {
  ?x a ex:Ct0005 ; rdfs:label ?name ; ex:vt0005 ?v ; ex:parent ?up .
  ?up rdfs:label ?upName .
}`
	for _, n := range []int{10, 100, 1000} {
		b.Run(fmt.Sprintf("maps=%d", n), func(b *testing.B) {
			schema, mapping := syntheticCatalog(n)
			benchCompile(b, benchPlanner(b, schema, mapping), query)
		})
	}
}

// demoPatterns are thirty triple patterns over the demo mapping, each joined to
// the ones before it: a work order, its turbine and site, and its technician.
var demoPatterns = []string{
	"?wo a wf:WorkOrder",
	"?wo wf:orderNumber ?number",
	"?wo wf:openedAt ?opened",
	"?wo wf:priority ?priority",
	"?wo wf:status ?status",
	"?wo wf:category ?category",
	"?wo wf:description ?description",
	"?wo wf:closedAt ?closed",
	"?wo wf:onTurbine ?t",
	"?t wf:serialNumber ?serial",
	"?t wf:model ?model",
	"?t wf:ratedPowerKW ?power",
	"?t wf:hubHeightM ?height",
	"?t wf:commissionedOn ?tCommissioned",
	"?t wf:status ?tStatus",
	"?t wf:firmwareDigest ?digest",
	"?t wf:locatedAt ?site",
	"?site rdfs:label ?siteName",
	"?site wf:siteCode ?code",
	"?site wf:country ?country",
	"?site wf:region ?region",
	"?site wf:commissionedOn ?sCommissioned",
	"?site wf:latitude ?lat",
	"?site wf:longitude ?long",
	"?site wf:offshore ?offshore",
	"?wo wf:assignedTo ?tech",
	"?tech rdfs:label ?techName",
	"?tech wf:employer ?employer",
	"?tech wf:certificationLevel ?level",
	"?tech wf:hiredOn ?hired",
}

func demoPlanner(b testing.TB) *rewrite.Planner {
	schema, err := demo.Schema("sqlite")
	if err != nil {
		b.Fatal(err)
	}
	return benchPlanner(b, schema, demo.Mapping())
}

// BenchmarkCompileQuerySize times the translation of basic graph patterns of 1
// to 30 triple patterns over the demo mapping.
func BenchmarkCompileQuerySize(b *testing.B) {
	pl := demoPlanner(b)
	for _, n := range []int{1, 2, 5, 10, 15, 20, 25, 30} {
		b.Run(fmt.Sprintf("patterns=%d", n), func(b *testing.B) {
			query := "PREFIX wf: <https://vocab.veneer.example/windfarm#>\n" +
				"PREFIX rdfs: <http://www.w3.org/2000/01/rdf-schema#>\n" +
				"SELECT * WHERE {\n  " + strings.Join(demoPatterns[:n], " .\n  ") + " .\n}"
			benchCompile(b, pl, query)
		})
	}
}

// BenchmarkCompileMix times the translation of each query of veneer-bench's
// mix, with resources of the SF 1 database.
func BenchmarkCompileMix(b *testing.B) {
	pl := demoPlanner(b)
	params := mix.Params{
		WorkOrder: "WO-2023-0005001", Turbine: "WF36-2016-000201", Site: "SDV0002", Technician: 101,
		Turbines: []string{"WF23-2012-000001", "WF36-2016-000031", "WF80-2019-000061", "WF42-2017-000091"},
	}
	for _, q := range mix.Queries(params, source.Postgres) {
		b.Run(q.Name, func(b *testing.B) { benchCompile(b, pl, q.SPARQL) })
	}
}

// BenchmarkCompileShape times the translation of federation sub-queries that
// differ only in the 16 rows of their VALUES block: planned one by one
// (fresh), and through the plan cache, which from a shape's second query on
// binds each query's data into the shape's plan (shape).
func BenchmarkCompileShape(b *testing.B) {
	pl := demoPlanner(b)
	query := func(i int) string {
		var rows strings.Builder
		for r := range 16 {
			fmt.Fprintf(&rows, `(<https://data.veneer.example/windfarm/work-order/WO-2023-%07d> "%d"^^xsd:string) `, i*16+r, r)
		}
		return `PREFIX wf: <https://vocab.veneer.example/windfarm#>
PREFIX xsd: <http://www.w3.org/2001/XMLSchema#>
SELECT ?wo ?tag ?status WHERE { VALUES (?wo ?tag) { ` + rows.String() + `} { ?wo wf:status ?status . FILTER(?status != "closed") } }`
	}
	b.Run("fresh", func(b *testing.B) {
		b.ReportAllocs()
		i := 0
		for b.Loop() {
			i++
			if _, err := pl.CompileFresh(query(i)); err != nil {
				b.Fatal(err)
			}
		}
	})
	b.Run("shape", func(b *testing.B) {
		b.ReportAllocs()
		i := 0
		for b.Loop() {
			i++
			if _, err := pl.Compile(query(i)); err != nil {
				b.Fatal(err)
			}
		}
	})
}
