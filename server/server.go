// Package server is veneer's HTTP interface: the SPARQL 1.1 Protocol on
// /sparql (with the service description and the query page on a GET without a
// query), an explain route, the query page at /, health and readiness probes,
// and Prometheus metrics. It guards the databases behind it with a time limit
// per query, a concurrency limit with a bounded queue, size limits on requests
// and answers, and optional bearer-token authentication.
package server

import (
	"context"
	"encoding/json"
	"errors"
	"io"
	"log/slog"
	"net/http"
	"strings"
	"sync/atomic"
	"time"

	"github.com/go-chi/chi/v5"
	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/promhttp"

	"veneer/catalog/source"
	"veneer/rewrite/exec"
	"veneer/server/console"
)

// Limits protect the sources. A zero value turns a limit off.
type Limits struct {
	// QueryTimeout bounds each query from when it is planned, the wait
	// for a query slot, the SQL and streaming included; a client may ask
	// for less with the timeout parameter, never for more.
	QueryTimeout time.Duration
	// MaxConcurrent is the number of queries that run at once.
	MaxConcurrent int
	// MaxQueued is the number of queries that may wait for one of the
	// MaxConcurrent slots; one more is refused at once with 503.
	MaxQueued int
	// QueueTimeout bounds the wait for a slot; past it (by at most a
	// sixteenth of it) the query is refused with 503.
	QueueTimeout time.Duration
	// MaxQueryBytes bounds the length of the query text.
	MaxQueryBytes int64
	// MaxBodyBytes bounds a request body.
	MaxBodyBytes int64
	// MaxRows bounds the solutions or triples of one answer. An answer over
	// it is refused, or aborted if its first part has been sent; it is never
	// cut short as though it were complete.
	MaxRows int64
}

// Config holds the server's settings.
type Config struct {
	Limits Limits
	// TrustForwarded makes the server take the scheme, host and path prefix
	// the client used from the X-Forwarded-Proto, X-Forwarded-Host and
	// X-Forwarded-Prefix headers, for the endpoint IRI it shows. Set it only
	// behind a proxy that sets them.
	TrustForwarded bool
	// CORSOrigins lists the origins whose pages may read answers; "*" is any.
	CORSOrigins []string
	// Tokens, when non-empty, are the bearer tokens the query and explain
	// routes require.
	Tokens *Tokens
	// SlowQuery is the duration from which a query is logged with its SQL; 0
	// logs none.
	SlowQuery time.Duration
	// DrainTimeout is how long Serve lets running requests finish when it
	// shuts down before it cancels them.
	DrainTimeout time.Duration
	// TLSCert and TLSKey are PEM files; with both, Serve speaks HTTPS.
	TLSCert, TLSKey string
	// Reload builds a new engine, from the sources and mappings as they are
	// now, for Reload; nil means the server cannot reload.
	Reload func(ctx context.Context) (Engine, error)
	// Console configures the query page; its endpoint URLs are set by the
	// server.
	Console console.Options
}

// DefaultConfig returns the settings veneer starts with.
func DefaultConfig() Config {
	return Config{
		Limits: Limits{
			QueryTimeout: 30 * time.Second,
			// As many as the default pool has connections: the admission
			// queue is then the only queue (README, "Sizing").
			MaxConcurrent: source.DefaultMaxConns,
			MaxQueued:     64,
			QueueTimeout:  10 * time.Second,
			MaxQueryBytes: 256 << 10,
			MaxBodyBytes:  1 << 20,
			MaxRows:       1_000_000,
		},
		SlowQuery:    2 * time.Second,
		DrainTimeout: 20 * time.Second,
	}
}

// Server serves one engine at a time; Reload swaps it.
type Server struct {
	cfg       Config
	engine    atomic.Pointer[engineBox]
	log       *slog.Logger
	metrics   *metrics
	gather    prometheus.Gatherer
	admission *admission
	auth      authenticator
	console   *console.Console
	draining  atomic.Bool
}

// engineBox lets an atomic.Pointer hold an interface value.
type engineBox struct{ Engine }

// New builds a server. Metrics are registered with reg; gather serves /metrics.
func New(cfg Config, engine Engine, log *slog.Logger, reg prometheus.Registerer, gather prometheus.Gatherer) (*Server, error) {
	s := &Server{cfg: cfg, log: log, metrics: newMetrics(reg), gather: gather}
	s.engine.Store(&engineBox{engine})
	s.admission = newAdmission(cfg.Limits, s.metrics, reg)
	s.auth.tokens.Store(cfg.Tokens)
	reg.MustRegister(newPoolCollector(s.currentEngine))
	co := cfg.Console
	co.Endpoint, co.Explain = "sparql", "explain"
	var err error
	if s.console, err = console.New(co); err != nil {
		return nil, err
	}
	return s, nil
}

func (s *Server) currentEngine() Engine { return s.engine.Load().Engine }

// Handler returns the HTTP routes.
func (s *Server) Handler() http.Handler {
	r := chi.NewRouter()
	r.Use(s.observe, cors(s.cfg.CORSOrigins))
	r.HandleFunc("/sparql", s.handle("sparql", s.sparql))
	r.HandleFunc("/explain", s.handle("explain", s.explain))
	r.Get("/", s.handle("console", func(w http.ResponseWriter, r *http.Request) error {
		s.console.ServePage(w, r)
		return nil
	}))
	r.Get("/"+console.AssetPrefix+"{name}", s.handle("console", func(w http.ResponseWriter, r *http.Request) error {
		s.console.ServeAsset(w, r, chi.URLParam(r, "name"))
		return nil
	}))
	r.Get("/healthz", s.handle("health", func(w http.ResponseWriter, _ *http.Request) error {
		w.Header().Set("Content-Type", "text/plain; charset=utf-8")
		w.Write([]byte("ok\n"))
		return nil
	}))
	r.Get("/readyz", s.handle("health", s.ready))
	metrics := promhttp.HandlerFor(s.gather, promhttp.HandlerOpts{})
	r.Get("/metrics", s.handle("metrics", func(w http.ResponseWriter, r *http.Request) error {
		metrics.ServeHTTP(w, r)
		return nil
	}))
	return r
}

// ready answers the readiness probe: 503 while the server drains or when the
// engine cannot answer. The cause goes to the log only.
func (s *Server) ready(w http.ResponseWriter, r *http.Request) error {
	if s.draining.Load() {
		return &problem{status: http.StatusServiceUnavailable, msg: "shutting down"}
	}
	ctx, cancel := context.WithTimeout(r.Context(), 2*time.Second)
	defer cancel()
	if err := s.currentEngine().Ready(ctx); err != nil {
		return &problem{status: http.StatusServiceUnavailable, msg: "not ready: a source does not answer", err: err}
	}
	w.Header().Set("Content-Type", "text/plain; charset=utf-8")
	w.Write([]byte("ready\n"))
	return nil
}

// sparql is the SPARQL 1.1 Protocol route. A GET without a query gets the
// service description (or the query page), which needs no token: it tells
// nothing about the data.
func (s *Server) sparql(w http.ResponseWriter, r *http.Request) error {
	endpoint := s.endpointURL(r)
	params, err := urlParams(r)
	if err != nil {
		return err
	}
	if (r.Method == http.MethodGet || r.Method == http.MethodHead) && !isQueryRequest(params) {
		return s.describe(w, r, endpoint)
	}
	if params.Has("explain") {
		// /sparql?explain&query=…: how the query would be answered, not the answer.
		return s.explain(w, r)
	}
	if err := s.auth.check(r); err != nil {
		return err
	}
	op, err := s.readOperation(w, r, params, endpoint)
	if err != nil {
		return err
	}
	prep, err := s.currentEngine().Prepare(op.query)
	if err != nil {
		return s.failed(r.Context(), r.Context(), err)
	}
	ctx, cancel := s.queryContext(r.Context(), op)
	defer cancel()
	a, err := prep.Start(ctx)
	if err != nil {
		return s.failed(r.Context(), ctx, err)
	}
	f, err := format(op, r, a.Kind)
	if err != nil {
		a.Close()
		return err
	}
	// Everything before the answer is first read is done without a slot,
	// so that a slot is held only while the sources are read. It goes back
	// once the answer is read, before the last of it is sent: a query that
	// only waits on the client's network holds no slot.
	slot := &held{a: s.admission}
	defer slot.release()
	var start time.Time
	admit := func() error {
		if err := s.admission.acquire(ctx); err != nil {
			return err
		}
		slot.admitted, start = true, time.Now()
		infoOf(w).format = f.Name()
		return nil
	}
	n, err := s.writeAnswer(w, a, f, admit, slot.release)
	a.Close()
	var st Stats
	if a.Stats != nil {
		// The query was planned whether or not it was admitted.
		st = a.Stats()
		s.metrics.translation.Observe(st.Translation.Seconds())
		if st.PlanCached {
			s.metrics.planHit.Inc()
		} else {
			s.metrics.planMiss.Inc()
		}
	}
	if !slot.admitted {
		return s.failed(r.Context(), ctx, err)
	}
	d := time.Since(start)
	km := s.metrics.ofKind(a.Kind)
	km.duration.Observe(d.Seconds())
	km.rows.Add(float64(n))
	if a.Stats != nil {
		s.metrics.sqlDuration.Observe(st.SQLDuration.Seconds())
		s.metrics.residual.Add(float64(st.ResidualEvaluations))
	}
	if s.cfg.SlowQuery > 0 && d >= s.cfg.SlowQuery {
		s.logSlow(r.Context(), infoOf(w).id, op, a, d, n, err)
	}
	return s.failed(r.Context(), ctx, err)
}

// queryContext bounds a query by the server's time limit or the client's
// shorter one.
func (s *Server) queryContext(ctx context.Context, op *operation) (context.Context, context.CancelFunc) {
	limit := s.cfg.Limits.QueryTimeout
	if op.timeout > 0 && (limit <= 0 || op.timeout < limit) {
		limit = op.timeout
	}
	if limit <= 0 {
		return context.WithCancel(ctx)
	}
	return context.WithTimeout(ctx, limit)
}

// failed gives a query failure its kind from the state of the request's and
// the query's contexts, when the engine did not give it one, and counts
// timeouts.
func (s *Server) failed(reqCtx, queryCtx context.Context, err error) error {
	if err == nil {
		return nil
	}
	var p *problem
	if !errors.As(err, &p) && exec.KindOf(err) == exec.Internal {
		switch {
		case reqCtx.Err() != nil:
			err = &exec.Error{Kind: exec.Canceled, Err: err}
		case errors.Is(queryCtx.Err(), context.DeadlineExceeded):
			err = &exec.Error{Kind: exec.Timeout, Err: err}
		}
	}
	if exec.KindOf(err) == exec.Timeout {
		s.metrics.timeouts.Inc()
	}
	return err
}

// Bounds on what the slow-query log copies of a query and its SQL.
const slowLogText = 8 << 10

// logSlow writes the slow-query log line: the query, the SQL it ran (with
// placeholders, never the values), and what it cost.
func (s *Server) logSlow(ctx context.Context, id string, op *operation, a *Answer, d time.Duration, rows int64, err error) {
	attrs := []slog.Attr{
		slog.String("request_id", id),
		slog.Int64("duration_us", d.Microseconds()),
		slog.Int64("rows", rows),
		slog.String("kind", a.Kind.String()),
		slog.String("query", clip(op.query.Text)),
	}
	if a.SQL != nil {
		var stmts []string
		for _, q := range a.SQL() {
			stmts = append(stmts, clip(q))
		}
		attrs = append(attrs, slog.Any("sql", stmts))
	}
	if err != nil {
		attrs = append(attrs, slog.String("err", oneLine(err.Error())))
	}
	s.log.LogAttrs(ctx, slog.LevelWarn, "slow query", attrs...)
}

func clip(s string) string {
	if len(s) <= slowLogText {
		return s
	}
	return s[:slowLogText] + "…"
}

// explain answers the explain route: how the engine would answer the query,
// as JSON (an Explanation) or as plain text.
func (s *Server) explain(w http.ResponseWriter, r *http.Request) error {
	if err := s.auth.check(r); err != nil {
		return err
	}
	params, err := urlParams(r)
	if err != nil {
		return err
	}
	op, err := s.readOperation(w, r, params, s.endpointURL(r))
	if err != nil {
		return err
	}
	ex, ok := s.currentEngine().(Explainer)
	if !ok {
		return &problem{status: http.StatusNotImplemented, msg: "this engine cannot explain queries"}
	}
	mt, ok := preferredMedia(strings.Join(r.Header.Values("Accept"), ","), []string{"application/json", "text/plain"})
	if !ok {
		return &problem{status: http.StatusNotAcceptable, msg: "an explanation is available as application/json or text/plain"}
	}
	ctx, cancel := s.queryContext(r.Context(), op)
	defer cancel()
	e, err := ex.Explain(ctx, op.query)
	if err != nil {
		return s.failed(r.Context(), ctx, err)
	}
	w.Header().Add("Vary", "Accept")
	if mt == "text/plain" {
		w.Header().Set("Content-Type", "text/plain; charset=utf-8")
		_, err = io.WriteString(w, e.Text())
		return err
	}
	w.Header().Set("Content-Type", "application/json")
	return json.NewEncoder(w).Encode(e)
}

// endpointURL is the URL the client asked for, without its query string: the
// IRI the service description gives as sd:endpoint and the base IRI of
// queries. Behind a trusted proxy the scheme, host and a path prefix come from
// the X-Forwarded-* headers (the first value of each, which the proxy nearest
// the client set).
func (s *Server) endpointURL(r *http.Request) string {
	scheme, host, prefix := "http", r.Host, ""
	if r.TLS != nil {
		scheme = "https"
	}
	if s.cfg.TrustForwarded {
		first := func(name string) string {
			v, _, _ := strings.Cut(r.Header.Get(name), ",")
			return strings.TrimSpace(v)
		}
		if p := strings.ToLower(first("X-Forwarded-Proto")); p == "http" || p == "https" {
			scheme = p
		}
		if h := first("X-Forwarded-Host"); h != "" {
			host = h
		}
		prefix = strings.TrimRight(first("X-Forwarded-Prefix"), "/")
		if prefix != "" && !strings.HasPrefix(prefix, "/") {
			prefix = "/" + prefix
		}
	}
	return scheme + "://" + host + prefix + r.URL.EscapedPath()
}

// Reload builds a new engine with Config.Reload and serves it from the next
// query on; queries running on the old engine finish on it. When the build
// fails the engine in service stays, and the error is logged, counted and
// returned.
func (s *Server) Reload(ctx context.Context) error {
	if s.cfg.Reload == nil {
		return errors.New("server: reloading is not configured")
	}
	e, err := s.cfg.Reload(ctx)
	if err != nil {
		s.metrics.reloads.WithLabelValues("failed").Inc()
		s.log.Error("reload failed; the catalog in service stays", "err", err)
		return err
	}
	s.engine.Store(&engineBox{e})
	s.metrics.reloads.WithLabelValues("ok").Inc()
	s.log.Info("reloaded the catalog")
	return nil
}

// SetTokens replaces the bearer tokens; an empty set turns authentication off.
func (s *Server) SetTokens(t *Tokens) { s.auth.tokens.Store(t) }
