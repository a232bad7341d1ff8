package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"log/slog"
	"net"
	"net/http"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"

	"veneer/catalog"
	"veneer/catalog/r2rml"
	"veneer/catalog/source"
	"veneer/rewrite"
	"veneer/rewrite/exec"
	"veneer/server"
)

const defaultListen = "127.0.0.1:7531"

func runServe(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("serve", flag.ContinueOnError)
	fs.SetOutput(stderr)
	dsn := fs.String("db", "", "database DSN: postgres://…, mysql://… or sqlite:PATH")
	listen := fs.String("listen", defaultListen, "address to serve HTTP on")
	var mappings multiFlag
	fs.Var(&mappings, "mapping", "R2RML mapping file (repeatable)")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *dsn == "" {
		return errors.New("serve: --db is required")
	}
	if len(mappings) == 0 {
		return errors.New("serve: --mapping is required")
	}
	cat, err := r2rml.LoadFiles(mappings...)
	if err != nil {
		return err
	}
	src, err := source.Open(ctx, *dsn)
	if err != nil {
		return err
	}
	defer src.Close()
	return serve(ctx, src, cat, *listen, stdout, stderr, nil)
}

// serve probes the catalog against the source and serves it until ctx ends. ready,
// when set, is called with the listening address once the server accepts.
func serve(ctx context.Context, src source.Source, cat *catalog.Catalog, listen string, stdout, stderr io.Writer, ready func(addr string)) error {
	probeCtx, cancel := context.WithTimeout(ctx, 30*time.Second)
	cols, err := catalog.ProbeColumns(probeCtx, src, cat)
	cancel()
	if err != nil {
		return err
	}
	engine := &exec.Engine{Planner: rewrite.NewPlanner(cat, cols, src.Dialect()), Source: src}
	reg := prometheus.NewRegistry()
	reg.MustRegister(collectors.NewGoCollector(), collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}))
	log := slog.New(slog.NewTextHandler(stderr, nil))
	srv := server.New(server.DefaultConfig(), server.FromExec(engine), log, reg, reg)

	ln, err := net.Listen("tcp", listen)
	if err != nil {
		return fmt.Errorf("listening on %s: %w", listen, err)
	}
	hs := &http.Server{Handler: srv.Handler(), ReadHeaderTimeout: 10 * time.Second}
	errc := make(chan error, 1)
	go func() { errc <- hs.Serve(ln) }()
	addr := ln.Addr().String()
	log.Info("serving", "url", "http://"+addr+"/sparql", "maps", len(cat.Maps), "dialect", src.Dialect().String())
	if ready != nil {
		ready(addr)
	}
	select {
	case err := <-errc:
		return err
	case <-ctx.Done():
	}
	shutdownCtx, cancel := context.WithTimeout(context.Background(), 10*time.Second)
	defer cancel()
	return hs.Shutdown(shutdownCtx)
}
