// Package server is veneer's HTTP interface: the SPARQL 1.1 Protocol on /sparql,
// health and readiness probes, and Prometheus metrics.
package server

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"mime"
	"net/http"
	"strconv"
	"time"

	"github.com/go-chi/chi/v5"
	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/promhttp"

	"veneer/catalog/rdf"
	"veneer/rewrite/exec"
	"veneer/server/results"
)

// Solutions is a cursor over query solutions.
type Solutions interface {
	Vars() []string
	Next() bool
	Solution() []rdf.Term
	Err() error
	Close() error
}

// Engine answers query text; *exec.Engine is the one veneer uses.
type Engine interface {
	Query(ctx context.Context, text string) (Solutions, error)
	Ready(ctx context.Context) error
}

// Config holds the server's settings.
type Config struct {
	// QueryTimeout bounds each query, SQL included.
	QueryTimeout time.Duration
	// MaxBody bounds a request body in bytes.
	MaxBody int64
}

// DefaultConfig returns the settings veneer starts with.
func DefaultConfig() Config {
	return Config{QueryTimeout: 30 * time.Second, MaxBody: 1 << 20}
}

// Server serves one engine.
type Server struct {
	cfg     Config
	engine  Engine
	log     *slog.Logger
	metrics *metrics
	gather  prometheus.Gatherer
}

// New builds a server. Metrics are registered with reg; gather serves /metrics.
func New(cfg Config, engine Engine, log *slog.Logger, reg prometheus.Registerer, gather prometheus.Gatherer) *Server {
	return &Server{cfg: cfg, engine: engine, log: log, metrics: newMetrics(reg), gather: gather}
}

// Handler returns the HTTP routes.
func (s *Server) Handler() http.Handler {
	r := chi.NewRouter()
	r.Get("/sparql", s.instrument("sparql", s.sparql))
	r.Post("/sparql", s.instrument("sparql", s.sparql))
	r.Get("/healthz", func(w http.ResponseWriter, _ *http.Request) { io.WriteString(w, "ok\n") })
	r.Get("/readyz", s.ready)
	r.Handle("/metrics", promhttp.HandlerFor(s.gather, promhttp.HandlerOpts{}))
	return r
}

func (s *Server) ready(w http.ResponseWriter, r *http.Request) {
	ctx, cancel := context.WithTimeout(r.Context(), 2*time.Second)
	defer cancel()
	if err := s.engine.Ready(ctx); err != nil {
		http.Error(w, "source not ready", http.StatusServiceUnavailable)
		s.log.Warn("readiness check failed", "err", err)
		return
	}
	io.WriteString(w, "ready\n")
}

// queryText extracts the query from a SPARQL Protocol request (SPARQL 1.1
// Protocol §2.1: GET with ?query=, POST form-encoded, POST application/sparql-query).
func (s *Server) queryText(r *http.Request) (string, *httpError) {
	if r.Method == http.MethodGet {
		q := r.URL.Query()["query"]
		if len(q) != 1 {
			return "", &httpError{http.StatusBadRequest, "expected exactly one 'query' parameter"}
		}
		return q[0], nil
	}
	r.Body = http.MaxBytesReader(nil, r.Body, s.cfg.MaxBody)
	mt, _, err := mime.ParseMediaType(r.Header.Get("Content-Type"))
	if err != nil {
		return "", &httpError{http.StatusUnsupportedMediaType, "missing or malformed Content-Type"}
	}
	switch mt {
	case "application/x-www-form-urlencoded":
		if err := r.ParseForm(); err != nil {
			return "", &httpError{http.StatusBadRequest, "reading the form: " + err.Error()}
		}
		q := r.PostForm["query"]
		if len(q) != 1 {
			return "", &httpError{http.StatusBadRequest, "expected exactly one 'query' parameter"}
		}
		return q[0], nil
	case "application/sparql-query":
		b, err := io.ReadAll(r.Body)
		if err != nil {
			return "", &httpError{http.StatusRequestEntityTooLarge, "reading the body: " + err.Error()}
		}
		return string(b), nil
	}
	return "", &httpError{http.StatusUnsupportedMediaType, "unsupported Content-Type " + mt}
}

type httpError struct {
	status int
	msg    string
}

// statusOf maps an engine failure to an HTTP status.
func statusOf(err error) int {
	switch exec.KindOf(err) {
	case exec.BadQuery:
		return http.StatusBadRequest
	case exec.Timeout, exec.Unavailable:
		return http.StatusServiceUnavailable
	case exec.TooLarge:
		return http.StatusRequestEntityTooLarge
	case exec.Canceled:
		return 499 // the client went away; nobody reads it, the logs do
	}
	return http.StatusInternalServerError
}

func (s *Server) sparql(w http.ResponseWriter, r *http.Request) {
	text, herr := s.queryText(r)
	if herr != nil {
		http.Error(w, herr.msg, herr.status)
		return
	}
	ctx, cancel := context.WithTimeout(r.Context(), s.cfg.QueryTimeout)
	defer cancel()
	cur, err := s.engine.Query(ctx, text)
	if err != nil {
		status := statusOf(err)
		if status >= 500 {
			s.log.Error("query failed", "err", err)
			http.Error(w, "the query could not be answered: "+publicReason(err), status)
			return
		}
		http.Error(w, err.Error(), status)
		return
	}
	defer cur.Close()
	w.Header().Set("Content-Type", "application/sparql-results+json")
	out := results.NewJSON(w)
	if err := stream(out, cur); err != nil {
		s.metrics.streamFailures.Inc()
		s.log.Error("query failed while streaming its results", "err", err)
		// Abort the chunked body so that the client cannot take a cut-off result
		// for a complete one.
		panic(http.ErrAbortHandler)
	}
}

// publicReason describes a server-side failure without details that may carry
// internals (SQL text, addresses, credentials).
func publicReason(err error) string {
	switch exec.KindOf(err) {
	case exec.Timeout:
		return "it ran past its time limit"
	case exec.Unavailable:
		return "the database is unavailable"
	}
	return "internal error"
}

func stream(out results.SelectWriter, cur Solutions) error {
	if err := out.Begin(cur.Vars()); err != nil {
		return err
	}
	for cur.Next() {
		if err := out.Row(cur.Solution()); err != nil {
			return err
		}
	}
	if err := cur.Err(); err != nil {
		return err
	}
	return out.End()
}

// statusRecorder remembers the status a handler wrote.
type statusRecorder struct {
	http.ResponseWriter
	status int
}

func (w *statusRecorder) WriteHeader(code int) {
	if w.status == 0 {
		w.status = code
	}
	w.ResponseWriter.WriteHeader(code)
}

func (w *statusRecorder) Write(b []byte) (int, error) {
	if w.status == 0 {
		w.status = http.StatusOK
	}
	return w.ResponseWriter.Write(b)
}

// Flush keeps streaming working through the wrapper.
func (w *statusRecorder) Flush() {
	if f, ok := w.ResponseWriter.(http.Flusher); ok {
		f.Flush()
	}
}

// Unwrap lets http.ResponseController reach the underlying writer.
func (w *statusRecorder) Unwrap() http.ResponseWriter { return w.ResponseWriter }

func (s *Server) instrument(route string, h http.HandlerFunc) http.HandlerFunc {
	return func(w http.ResponseWriter, r *http.Request) {
		start := time.Now()
		rec := &statusRecorder{ResponseWriter: w}
		defer func() {
			status := rec.status
			if v := recover(); v != nil {
				if !errors.Is(asError(v), http.ErrAbortHandler) {
					s.log.Error("handler panic", "panic", fmt.Sprint(v))
				}
				status = 0
				defer panic(http.ErrAbortHandler)
			}
			s.metrics.requests.WithLabelValues(route, strconv.Itoa(status)).Inc()
			s.metrics.duration.WithLabelValues(route).Observe(time.Since(start).Seconds())
		}()
		h(rec, r)
	}
}

func asError(v any) error {
	if err, ok := v.(error); ok {
		return err
	}
	return nil
}

// FromExec adapts the query engine to the server's interface.
func FromExec(e *exec.Engine) Engine { return execEngine{e} }

type execEngine struct{ e *exec.Engine }

func (x execEngine) Query(ctx context.Context, text string) (Solutions, error) {
	c, err := x.e.Query(ctx, text)
	if err != nil {
		return nil, err // not a nil *Cursor inside a non-nil interface
	}
	return c, nil
}

func (x execEngine) Ready(ctx context.Context) error { return x.e.Ready(ctx) }
