package main

import (
	"context"
	"fmt"
	"io"
	"net/url"
	"os"
	"path/filepath"

	"veneer/catalog"
	"veneer/catalog/r2rml"
	"veneer/catalog/source"
	"veneer/cmd/veneer/demo"
	"veneer/server/console"
)

// demoQuery is the query the demo suggests first.
const demoQuery = `SELECT ?s ?p ?o WHERE { ?s ?p ?o } LIMIT 10`

func runDemo(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	c, rest, err := commandConfig("demo", args, false, stderr)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return fmt.Errorf("demo: unexpected argument %q", rest[0])
	}
	dir, err := os.MkdirTemp("", "veneer-demo-")
	if err != nil {
		return err
	}
	defer os.RemoveAll(dir)
	path := filepath.Join(dir, "windfarm.db")
	if err := demo.BuildSQLite(ctx, path); err != nil {
		return fmt.Errorf("building the demo database: %w", err)
	}
	src, err := source.Open(ctx, "sqlite:"+path)
	if err != nil {
		return err
	}
	defer src.Close()
	return serve(ctx, c, src, demoCatalog, demoPage(), stderr, func(addr string) {
		scheme := "http"
		if c.TLS.Cert != "" {
			scheme = "https"
		}
		endpoint := scheme + "://" + addr + "/sparql"
		fmt.Fprintf(stdout, "veneer demo: a wind-farm maintenance database, served as SPARQL at\n  %s\n", endpoint)
		fmt.Fprintf(stdout, "and with a query page at\n  %s://%s/\n\n", scheme, addr)
		fmt.Fprintf(stdout, "try:\n  curl -s '%s?query=%s'\n\n", endpoint, url.QueryEscape(demoQuery))
		fmt.Fprintln(stdout, "press Ctrl-C to stop")
	})
}

// demoCatalog loads the demo's embedded mapping.
func demoCatalog(context.Context) (*catalog.Catalog, error) {
	cat, err := r2rml.Load("demo/mapping.ttl", []byte(demo.Mapping()))
	if err != nil {
		return nil, fmt.Errorf("loading the demo mapping: %w", err)
	}
	return cat, nil
}

// demoPage offers the demo's example queries on the query page.
func demoPage() console.Options {
	o := console.Options{Title: "veneer · wind-farm demo"}
	for _, q := range demo.Queries() {
		o.Examples = append(o.Examples, console.Example{Name: q.Summary, Query: q.Text})
	}
	return o
}
