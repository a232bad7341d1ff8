package main

import (
	"context"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"veneer/catalog"
	"veneer/catalog/source"
	"veneer/cmd/veneer/demo"
	"veneer/conformance"
	"veneer/server/console"
)

// The tests' servers: veneer serve's wiring (serve) on a loopback port, over
// the demo database or a catalog of the test's own.

// startServer serves the catalog load builds over src and returns the
// endpoint URL; the server stops when the test ends.
func startServer(t *testing.T, src source.Source, load func(context.Context) (*catalog.Catalog, error), edit func(*config)) string {
	t.Helper()
	ctx, cancel := context.WithCancel(context.Background())
	cfg := defaultConfig()
	cfg.Listen = "127.0.0.1:0"
	cfg.Log.Level = "warn"
	if edit != nil {
		edit(&cfg)
	}
	addrc, done := make(chan string, 1), make(chan error, 1)
	go func() {
		done <- serve(ctx, &cfg, src, load, console.Options{}, testLog{t}, func(a string) { addrc <- a })
	}()
	t.Cleanup(func() {
		cancel()
		if err := <-done; err != nil {
			t.Errorf("server stopped with %v", err)
		}
	})
	select {
	case addr := <-addrc:
		return "http://" + addr + "/sparql"
	case err := <-done:
		t.Fatalf("server did not start: %v", err)
	case <-time.After(60 * time.Second):
		t.Fatal("server did not start within 60s")
	}
	return ""
}

// startDemo serves the demo database.
func startDemo(t *testing.T, edit func(*config)) string {
	t.Helper()
	_, src := demoSource(t)
	return startServer(t, src, demoCatalog, edit)
}

// demoSource builds the demo database in a temporary file and opens it.
func demoSource(t *testing.T) (string, source.Source) {
	t.Helper()
	path := filepath.Join(t.TempDir(), "windfarm.db")
	if err := demo.BuildSQLite(context.Background(), path); err != nil {
		t.Fatal(err)
	}
	src, err := source.Open(context.Background(), "sqlite:"+path)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { src.Close() })
	return "sqlite:" + path, src
}

// readBoolean reads the answer of an ASK query in the SPARQL 1.1 Query
// Results JSON Format (§3.3).
func readBoolean(body []byte) (bool, error) {
	var doc struct{ Boolean *bool }
	if err := json.Unmarshal(body, &doc); err != nil || doc.Boolean == nil {
		return false, fmt.Errorf("not a boolean JSON result: %v %.100s", err, body)
	}
	return *doc.Boolean, nil
}

// firstLine is the first line of a response body, cut to 200 bytes, for a
// message.
func firstLine(s string) string {
	s, _, _ = strings.Cut(s, "\n")
	if len(s) > 200 {
		s = s[:200] + "…"
	}
	return s
}

// readList reads a skip list of this package's testdata.
func readList(t *testing.T, name string) *conformance.SkipList {
	t.Helper()
	src, err := os.ReadFile(filepath.Join("testdata", name))
	if err != nil {
		t.Fatal(err)
	}
	l, err := conformance.ParseSkipList(name, src)
	if err != nil {
		t.Fatal(err)
	}
	return l
}
