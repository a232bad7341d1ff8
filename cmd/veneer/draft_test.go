package main

import (
	"bytes"
	"context"
	"fmt"
	"path/filepath"
	"strings"
	"testing"

	"veneer/catalog"
	"veneer/catalog/r2rml"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
)

// TestDraftDemo drafts a mapping of the demo database and compares the text
// with testdata/draft-demo.golden.ttl; loaded back, the draft must give the
// graph of the Direct Mapping (both read whole through the query engine),
// which must have as many triples as the W3C Direct Mapping defines for the
// rows: one rdf:type per row, one per non-NULL value, one per non-NULL
// foreign key ("A Direct Mapping of Relational Data to RDF", §2-§4).
func TestDraftDemo(t *testing.T) {
	dsn, src := demoSource(t)
	var out, errOut bytes.Buffer
	if err := runDraft(context.Background(), []string{"--db", dsn}, &out, &errOut); err != nil {
		t.Fatal(err)
	}
	golden(t, filepath.Join("testdata", "draft-demo.golden.ttl"), out.String())
	drafted, err := r2rml.Load("draft.ttl", out.Bytes())
	if err != nil {
		t.Fatalf("the draft does not load: %v", err)
	}
	direct, err := loadCatalog(context.Background(), src, nil, defaultBase)
	if err != nil {
		t.Fatal(err)
	}
	got, want := graph(t, src, drafted), graph(t, src, direct)
	if n := directSize(t, src); len(want) != n {
		t.Errorf("the Direct Mapping has %d triples, the rows make %d", len(want), n)
	}
	t.Logf("the drafted mapping gives %d triples, the Direct Mapping %d", len(got), len(want))
	if !rdf.Isomorphic(got, want) {
		t.Errorf("the drafted mapping gives %d triples, the Direct Mapping %d, and they differ", len(got), len(want))
	}
}

// TestDraftUsage checks the arguments draft refuses.
func TestDraftUsage(t *testing.T) {
	t.Setenv("VENEER_DB", "")
	t.Setenv("VENEER_MAPPINGS", "")
	t.Setenv("VENEER_CONFIG", "")
	dsn, _ := demoSource(t)
	for _, tt := range []struct {
		args []string
		want string
	}{
		{nil, "a database is required"},
		{[]string{"--db", dsn, "--mapping", "m.ttl"}, "--mapping does not apply"},
		{[]string{"--db", dsn, "extra"}, `unexpected argument "extra"`},
		{[]string{"--db", dsn, "--base", "relative/"}, `base "relative/" is not an absolute IRI`},
	} {
		var out, errOut bytes.Buffer
		err := runDraft(context.Background(), tt.args, &out, &errOut)
		if err == nil || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("draft %v: got %v, want an error with %q", tt.args, err, tt.want)
		}
	}
}

// TestServeDirectMapping serves the demo database without a mapping, as serve
// does without --mapping, and asks for the code of every site over HTTP.
func TestServeDirectMapping(t *testing.T) {
	_, src := demoSource(t)
	endpoint := startServer(t, src, func(ctx context.Context) (*catalog.Catalog, error) {
		return loadCatalog(ctx, src, nil, "")
	}, nil)
	_, rows := sparqlJSON(t, endpoint, `SELECT ?code WHERE {
		?site a <`+defaultBase+`site> ; <`+defaultBase+`site#code> ?code }`)
	if n := count1(t, src, `SELECT COUNT(*) FROM site`); len(rows) != n || n == 0 {
		t.Errorf("got %d site codes, the table has %d sites", len(rows), n)
	}
	for _, r := range rows {
		if r["code"].Type != "literal" || r["code"].Value == "" {
			t.Errorf("a site code is %+v, want a literal", r["code"])
		}
	}
}

// graph reads the whole default graph a catalog gives over src.
func graph(t *testing.T, src source.Source, cat *catalog.Catalog) []rdf.Quad {
	t.Helper()
	e, err := newEngine(context.Background(), src, cat)
	if err != nil {
		t.Fatal(err)
	}
	cur, err := e.Query(context.Background(), `SELECT ?s ?p ?o WHERE { ?s ?p ?o }`)
	if err != nil {
		t.Fatal(err)
	}
	defer cur.Close()
	var quads []rdf.Quad
	for cur.Next() {
		s := cur.Solution()
		quads = append(quads, rdf.Quad{S: s[0], P: s[1], O: s[2]})
	}
	if err := cur.Err(); err != nil {
		t.Fatal(err)
	}
	return quads
}

// directSize counts in SQL the triples the Direct Mapping of src's schema has:
// for each table its rows, its non-NULL values and its rows whose foreign key
// columns are all non-NULL (the database enforces the keys, so each of those
// rows references a row). It assumes, as holds for the demo, that every table
// has a primary key, so no two rows share a subject.
func directSize(t *testing.T, src source.Source) int {
	t.Helper()
	schema, err := source.Introspect(context.Background(), src, "")
	if err != nil {
		t.Fatal(err)
	}
	q := src.Dialect().QuoteIdent
	n := 0
	for _, tbl := range schema.Tables {
		if len(tbl.PrimaryKey) == 0 {
			t.Fatalf("table %s has no primary key", tbl.Name)
		}
		n += count1(t, src, "SELECT COUNT(*) FROM "+q(tbl.Name))
		for _, c := range tbl.Columns {
			n += count1(t, src, fmt.Sprintf("SELECT COUNT(%s) FROM %s", q(c.Name), q(tbl.Name)))
		}
		for _, fk := range tbl.ForeignKeys {
			var notNull []string
			for _, c := range fk.Columns {
				notNull = append(notNull, q(c)+" IS NOT NULL")
			}
			n += count1(t, src, "SELECT COUNT(*) FROM "+q(tbl.Name)+" WHERE "+strings.Join(notNull, " AND "))
		}
	}
	return n
}

// count1 runs a query whose result is one integer.
func count1(t *testing.T, src source.Source, query string) int {
	t.Helper()
	rows, err := src.Query(context.Background(), query)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	if !rows.Next() {
		t.Fatalf("%s: no row (%v)", query, rows.Err())
	}
	n, ok := rows.Values()[0].(int64)
	if !ok {
		t.Fatalf("%s: %v is not an integer", query, rows.Values()[0])
	}
	return int(n)
}
