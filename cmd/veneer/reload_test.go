package main

import (
	"context"
	"io"
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"syscall"
	"testing"
	"time"

	"veneer/catalog"
	"veneer/catalog/source"
	"veneer/cmd/veneer/demo"
)

// siteNames maps only the site table, with a predicate the demo mapping does
// not use, so that a query tells which catalog answers.
const siteNames = `@prefix rr: <http://www.w3.org/ns/r2rml#> .
<http://veneer.example/test/sites> rr:logicalTable [ rr:tableName "site" ] ;
  rr:subjectMap [ rr:template "http://veneer.example/test/site/{code}" ] ;
  rr:predicateObjectMap [ rr:predicate <http://veneer.example/test/name> ; rr:objectMap [ rr:column "%s" ] ] .
`

func TestSIGHUPReloadsTheCatalog(t *testing.T) {
	dir := t.TempDir()
	dbPath, mapping := filepath.Join(dir, "windfarm.db"), filepath.Join(dir, "mapping.ttl")
	if err := demo.BuildSQLite(context.Background(), dbPath); err != nil {
		t.Fatal(err)
	}
	write := func(text string) {
		if err := os.WriteFile(mapping, []byte(text), 0o600); err != nil {
			t.Fatal(err)
		}
	}
	write(demo.Mapping())
	src, err := source.Open(context.Background(), "sqlite:"+dbPath)
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	endpoint := startServer(t, src, func(ctx context.Context) (*catalog.Catalog, error) {
		return loadCatalog(ctx, src, []string{mapping}, "")
	}, nil)
	names := func() int {
		t.Helper()
		_, rows := sparqlJSON(t, endpoint, `SELECT ?n WHERE { ?s <http://veneer.example/test/name> ?n }`)
		return len(rows)
	}
	reloads := func(result string) string {
		resp, err := http.Get(strings.TrimSuffix(endpoint, "/sparql") + "/metrics")
		if err != nil {
			t.Fatal(err)
		}
		defer resp.Body.Close()
		b, _ := io.ReadAll(resp.Body)
		for _, l := range strings.Split(string(b), "\n") {
			if strings.HasPrefix(l, `veneer_catalog_reloads_total{result="`+result+`"}`) {
				return l[strings.LastIndexByte(l, ' ')+1:]
			}
		}
		return "0"
	}
	hup := func(result, want string) {
		t.Helper()
		if err := syscall.Kill(os.Getpid(), syscall.SIGHUP); err != nil {
			t.Fatal(err)
		}
		for deadline := time.Now().Add(30 * time.Second); reloads(result) != want; time.Sleep(10 * time.Millisecond) {
			if time.Now().After(deadline) {
				t.Fatalf("no %s reload counted after SIGHUP", result)
			}
		}
	}
	if n := names(); n != 0 {
		t.Fatalf("the demo mapping has no test:name triples, got %d", n)
	}
	// A mapping that is valid R2RML but names a column the table lacks: the
	// catalog in service stays.
	write(strings.Replace(siteNames, "%s", "nmae", 1))
	hup("failed", "1")
	if _, rows := sparqlJSON(t, endpoint, `SELECT ?s WHERE { ?s <https://vocab.veneer.example/windfarm#siteCode> ?c }`); len(rows) == 0 {
		t.Errorf("after a failed reload the old catalog should still answer")
	}
	// A Turtle syntax error: the same.
	write("@prefix rr: <http://www.w3.org/ns/r2rml#> .\n<x> rr:logicalTable [ ")
	hup("failed", "2")
	// A good mapping takes over.
	write(strings.Replace(siteNames, "%s", "name", 1))
	hup("ok", "1")
	if n := names(); n == 0 {
		t.Errorf("after the reload the new mapping's triples are not served")
	}
}
