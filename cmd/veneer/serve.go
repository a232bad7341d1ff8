package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"net"
	"os"
	"os/signal"
	"syscall"
	"time"

	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"

	"veneer/catalog"
	"veneer/catalog/direct"
	"veneer/catalog/r2rml"
	"veneer/catalog/source"
	"veneer/rewrite"
	"veneer/rewrite/exec"
	"veneer/server"
	"veneer/server/console"
)

const defaultListen = "127.0.0.1:7531"

// defaultBase is the base IRI of the Direct Mapping when none is given.
const defaultBase = "http://veneer.example/db/"

func runServe(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	c, rest, err := commandConfig("serve", args, true, stderr)
	if err != nil {
		return err
	}
	if len(rest) > 0 {
		return fmt.Errorf("serve: unexpected argument %q", rest[0])
	}
	sc := c.source()
	if sc.DB == "" {
		return errNoDatabase("serve")
	}
	src, err := openSource(ctx, sc, source.OnMemberChange(logMemberChange(newLogger(c, stderr))))
	if err != nil {
		return err
	}
	defer src.Close()
	load := func(ctx context.Context) (*catalog.Catalog, error) { return loadCatalog(ctx, src, sc.Mappings, c.Base) }
	return serve(ctx, c, src, load, console.Options{}, stderr, nil)
}

// openSource opens the configured database, or the group of it and its
// replicas when it has some; opts are added to those the configuration sets.
func openSource(ctx context.Context, sc *sourceConf, opts ...source.Option) (source.Source, error) {
	if sc.MaxConns > 0 {
		opts = append(opts, source.MaxConns(sc.MaxConns))
	}
	if len(sc.Replicas) == 0 {
		return source.Open(ctx, sc.DB, opts...)
	}
	opts = append(opts, source.RetryBackoff(sc.MemberRetry.First, sc.MemberRetry.Max))
	return source.OpenGroup(ctx, sc.members(), opts...)
}

// logMemberChange logs the members of a replicated source going out of
// service and coming back.
func logMemberChange(log *slog.Logger) func(source.MemberChange) {
	return func(m source.MemberChange) {
		if m.Up {
			log.Info("database back in service", "member", m.Name)
		} else {
			log.Warn("database taken out of service; it is tried again later", "member", m.Name, "err", m.Err)
		}
	}
}

// loadCatalog reads the R2RML mappings, or builds the Direct Mapping of the
// source's schema when there are none.
func loadCatalog(ctx context.Context, src source.Source, mappings []string, base string) (*catalog.Catalog, error) {
	if len(mappings) > 0 {
		return r2rml.LoadFiles(mappings...)
	}
	if base == "" {
		base = defaultBase
	}
	schema, err := source.Introspect(ctx, src, "")
	if err != nil {
		return nil, fmt.Errorf("reading the schema for the Direct Mapping: %w", err)
	}
	return direct.Map(schema, base)
}

// newEngine checks the catalog against the source's columns and builds the
// query engine over them.
func newEngine(ctx context.Context, src source.Source, cat *catalog.Catalog) (*exec.Engine, error) {
	probeCtx, cancel := context.WithTimeout(ctx, 30*time.Second)
	defer cancel()
	cols, err := catalog.ProbeColumns(probeCtx, src, cat)
	if err != nil {
		return nil, err
	}
	return &exec.Engine{Planner: rewrite.NewPlanner(cat, cols, src.Dialect()), Source: src}, nil
}

// newLogger makes the structured logger the configuration asks for.
func newLogger(c *config, w io.Writer) *slog.Logger {
	level, _ := c.level() // checked by loadConfig
	opts := &slog.HandlerOptions{Level: level}
	if c.Log.Format == "text" {
		return slog.New(slog.NewTextHandler(w, opts))
	}
	return slog.New(slog.NewJSONHandler(w, opts))
}

// serverConfig turns the configuration into the server's settings.
func (c *config) serverConfig() server.Config {
	return server.Config{
		Limits: server.Limits{
			QueryTimeout:  c.Limits.QueryTimeout,
			MaxConcurrent: c.Limits.MaxConcurrent,
			MaxQueued:     c.Limits.MaxQueued,
			QueueTimeout:  c.Limits.QueueTimeout,
			MaxQueryBytes: c.Limits.MaxQueryBytes,
			MaxBodyBytes:  c.Limits.MaxBodyBytes,
			MaxRows:       c.Limits.MaxRows,
		},
		TrustForwarded: c.TrustForwarded,
		CORSOrigins:    c.CORS.Origins,
		SlowQuery:      c.Log.SlowQuery,
		DrainTimeout:   c.DrainTimeout,
		TLSCert:        c.TLS.Cert,
		TLSKey:         c.TLS.Key,
	}
}

// serve builds the engine from the catalog load returns and serves it until
// ctx ends. On SIGHUP it reloads the catalog (keeping the one in service if
// the new one is invalid) and the tokens. ready, when set, is called with the
// listening address once the server accepts.
func serve(ctx context.Context, c *config, src source.Source, load func(context.Context) (*catalog.Catalog, error),
	page console.Options, stderr io.Writer, ready func(addr string)) error {
	log := newLogger(c, stderr)
	engineOf := func(ctx context.Context) (server.Engine, *catalog.Catalog, error) {
		cat, err := load(ctx)
		if err != nil {
			return nil, nil, err
		}
		e, err := newEngine(ctx, src, cat)
		if err != nil {
			return nil, nil, err
		}
		e.Planner.SetLimits(c.plannerLimits())
		e.Options = c.execOptions()
		return server.FromExec(e), cat, nil
	}
	build := func(ctx context.Context) (server.Engine, error) {
		e, _, err := engineOf(ctx)
		return e, err
	}
	engine, cat, err := engineOf(ctx)
	if err != nil {
		// Every problem of the mapping, each with its position, before the one
		// line main prints.
		var problems catalog.ErrorList
		if errors.As(err, &problems) && len(problems) > 1 {
			for _, p := range problems {
				fmt.Fprintln(stderr, p)
			}
		}
		return err
	}
	tokens, err := c.tokens(os.Getenv)
	if err != nil {
		return err
	}
	scfg := c.serverConfig()
	scfg.Tokens, scfg.Reload, scfg.Console = tokens, build, page
	reg := prometheus.NewRegistry()
	reg.MustRegister(collectors.NewGoCollector(), collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}))
	if g, ok := src.(*source.Group); ok {
		reg.MustRegister(g.Collector("default"))
	}
	srv, err := server.New(scfg, engine, log, reg, reg)
	if err != nil {
		return err
	}
	ln, err := net.Listen("tcp", c.Listen)
	if err != nil {
		return fmt.Errorf("listening on %s: %w", c.Listen, err)
	}
	hup := make(chan os.Signal, 1)
	signal.Notify(hup, syscall.SIGHUP)
	defer signal.Stop(hup)
	go func() {
		for {
			select {
			case <-hup:
				srv.Reload(ctx) // logs and counts its own failure
				if toks, err := c.tokens(os.Getenv); err != nil {
					log.Error("reloading the tokens failed; the tokens in force stay", "err", err)
				} else {
					srv.SetTokens(toks)
				}
			case <-ctx.Done():
				return
			}
		}
	}()
	scheme := "http"
	if c.TLS.Cert != "" {
		scheme = "https"
	}
	addr := ln.Addr().String()
	log.Info("serving", "url", scheme+"://"+addr+"/sparql", "maps", len(cat.Maps), "dialect", src.Dialect().String(),
		"auth", tokens.Len() > 0)
	if ready != nil {
		ready(addr)
	}
	return srv.Serve(ctx, ln)
}
