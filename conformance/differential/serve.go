package differential

import (
	"context"
	"io"
	"log/slog"
	"net/http/httptest"
	"testing"

	"github.com/prometheus/client_golang/prometheus"

	"veneer/catalog"
	"veneer/catalog/source"
	"veneer/rewrite"
	"veneer/rewrite/exec"
	"veneer/server"
)

// Serve serves cat over src through veneer's HTTP server, wired as veneer
// serve wires it, with the default configuration, until the test ends, and
// returns the server's base URL (its SPARQL endpoint is base + "/sparql").
func Serve(tb testing.TB, cat *catalog.Catalog, src source.Source) string {
	tb.Helper()
	cols, err := catalog.ProbeColumns(context.Background(), src, cat)
	if err != nil {
		tb.Fatal(err)
	}
	e := &exec.Engine{Planner: rewrite.NewPlanner(cat, cols, src.Dialect()), Source: src}
	reg := prometheus.NewRegistry()
	srv, err := server.New(server.DefaultConfig(), server.FromExec(e), slog.New(slog.NewTextHandler(io.Discard, nil)), reg, reg)
	if err != nil {
		tb.Fatal(err)
	}
	ts := httptest.NewServer(srv.Handler())
	tb.Cleanup(ts.Close)
	return ts.URL
}
