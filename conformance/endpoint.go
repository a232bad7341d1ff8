package conformance

import (
	"context"
	"fmt"
	"log/slog"
	"net"

	"github.com/prometheus/client_golang/prometheus"

	"veneer/rewrite/exec"
	"veneer/server"
)

// newServer builds veneer's HTTP server over an engine, with the settings
// veneer serve starts with; its log is discarded and its metrics go to a
// registry of its own.
func newServer(e *exec.Engine) (*server.Server, error) {
	reg := prometheus.NewRegistry()
	return server.New(server.DefaultConfig(), server.FromExec(e), slog.New(slog.DiscardHandler), reg, reg)
}

// serveEngine serves e through veneer's server on a loopback port of its own
// until the scratch database is closed, and returns the URL of its SPARQL
// endpoint.
func serveEngine(sc *Scratch, e *exec.Engine) (string, error) {
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		return "", fmt.Errorf("listening for the test server: %w", err)
	}
	if err := serveOn(sc, e, ln); err != nil {
		ln.Close()
		return "", err
	}
	return "http://" + ln.Addr().String() + "/sparql", nil
}

// serveOn serves e through veneer's server on ln until the scratch database
// is closed.
func serveOn(sc *Scratch, e *exec.Engine, ln net.Listener) error {
	srv, err := newServer(e)
	if err != nil {
		return err
	}
	ctx, stop := context.WithCancel(context.Background())
	done := make(chan error, 1)
	go func() { done <- srv.Serve(ctx, ln) }()
	sc.atClose(func() error {
		stop()
		if err := <-done; err != nil {
			return fmt.Errorf("the test server stopped with: %w", err)
		}
		return nil
	})
	return nil
}
