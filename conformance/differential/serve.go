package differential

import (
	"context"
	"errors"
	"io"
	"log/slog"
	"net/http/httptest"
	"os"
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

// RequireReference stops a test whose reference engine could not be
// installed (err from InstallReference): without node or npm it skips with a
// "no node:" message, or fails under CI=true, where no such test may be
// skipped; any other error fails it.
func RequireReference(tb testing.TB, err error) {
	tb.Helper()
	switch {
	case errors.Is(err, ErrNoNode):
		msg := "no node: " + err.Error()
		if os.Getenv("CI") == "true" {
			tb.Fatal(msg + " (CI=true: the test may not be skipped)")
		}
		tb.Skip(msg)
	case err != nil:
		tb.Fatal(err)
	}
}
