package main

import (
	"context"
	"flag"
	"fmt"
	"io"
	"net/url"
	"os"
	"path/filepath"

	"veneer/catalog/r2rml"
	"veneer/catalog/source"
	"veneer/cmd/veneer/demo"
)

// demoQuery is the query the demo suggests first.
const demoQuery = `SELECT ?s ?p ?o WHERE { ?s ?p ?o } LIMIT 10`

func runDemo(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("demo", flag.ContinueOnError)
	fs.SetOutput(stderr)
	listen := fs.String("listen", defaultListen, "address to serve HTTP on")
	if err := fs.Parse(args); err != nil {
		return err
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
	cat, err := r2rml.Load("demo/mapping.ttl", []byte(demo.Mapping()))
	if err != nil {
		return fmt.Errorf("loading the demo mapping: %w", err)
	}
	src, err := source.Open(ctx, "sqlite:"+path)
	if err != nil {
		return err
	}
	defer src.Close()
	return serve(ctx, src, cat, *listen, stdout, stderr, func(addr string) {
		endpoint := "http://" + addr + "/sparql"
		fmt.Fprintf(stdout, "veneer demo: a wind-farm maintenance database, served as SPARQL at\n  %s\n\n", endpoint)
		fmt.Fprintf(stdout, "try:\n  curl -s '%s?query=%s'\n\n", endpoint, url.QueryEscape(demoQuery))
		fmt.Fprintln(stdout, "press Ctrl-C to stop")
	})
}
