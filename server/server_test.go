package server

import (
	"bytes"
	"context"
	"database/sql"
	"errors"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"veneer/catalog/rdf"
	"veneer/server/results"
)

// fakeEngine answers with what its answer function returns, and records the
// queries it was given.
type fakeEngine struct {
	mu     sync.Mutex
	got    []Query
	answer func(ctx context.Context, q Query) (*Answer, error)
	// prepare, when set, fails the queries it returns an error for.
	prepare func(q Query) error
	ready   error
}

func (f *fakeEngine) Prepare(q Query) (Prepared, error) {
	f.mu.Lock()
	f.got = append(f.got, q)
	f.mu.Unlock()
	if f.prepare != nil {
		if err := f.prepare(q); err != nil {
			return nil, err
		}
	}
	return fakePrepared{f, q}, nil
}

// fakePrepared answers its query with its engine's answer function.
type fakePrepared struct {
	f *fakeEngine
	q Query
}

func (p fakePrepared) Start(ctx context.Context) (*Answer, error) { return p.f.answer(ctx, p.q) }

func (f *fakeEngine) Ready(context.Context) error { return f.ready }

// last returns the last query the engine got.
func (f *fakeEngine) last() Query {
	f.mu.Lock()
	defer f.mu.Unlock()
	if len(f.got) == 0 {
		return Query{}
	}
	return f.got[len(f.got)-1]
}

// explainingEngine is a fakeEngine that can explain and report pool stats.
type explainingEngine struct{ *fakeEngine }

func (explainingEngine) Explain(_ context.Context, q Query) (*Explanation, error) {
	return &Explanation{Algebra: "(bgp " + q.Text + ")", Plan: "sql: SELECT 1\nin-process: nothing\n"}, nil
}

func (explainingEngine) PoolStats() map[string]sql.DBStats {
	return map[string]sql.DBStats{"main": {MaxOpenConnections: 8, OpenConnections: 3, InUse: 1, Idle: 2, WaitCount: 5}}
}

// rowsAnswer answers n solutions of one variable ?x, "v1", "v2", …; after
// failAfter solutions (when failAfter >= 0) the cursor fails. The cursor
// stops with the context's error when the context ends.
func rowsAnswer(n, failAfter int) func(ctx context.Context, q Query) (*Answer, error) {
	return func(ctx context.Context, q Query) (*Answer, error) {
		return &Answer{Kind: results.Solutions, Solutions: &fakeCursor{ctx: ctx, n: n, failAfter: failAfter}}, nil
	}
}

type fakeCursor struct {
	ctx             context.Context
	n, failAfter, i int
	delay           time.Duration // before each solution
	err             error
	sol             []rdf.View
	buf             []byte
}

func (c *fakeCursor) Vars() []string { return []string{"x"} }

func (c *fakeCursor) Next() bool {
	if c.err != nil {
		return false
	}
	if c.delay > 0 {
		select {
		case <-time.After(c.delay):
		case <-c.ctx.Done():
		}
	}
	if err := c.ctx.Err(); err != nil {
		c.err = err
		return false
	}
	if c.failAfter >= 0 && c.i >= c.failAfter {
		c.err = errors.New("connection reset by database at 10.1.2.3:5432")
		return false
	}
	if c.i >= c.n {
		return false
	}
	c.i++
	// The same slice every time, as database/sql-style cursors do.
	if c.sol == nil {
		c.sol = make([]rdf.View, 1)
	}
	c.buf = strconv.AppendInt(append(c.buf[:0], 'v'), int64(c.i), 10)
	c.sol[0] = rdf.View{Kind: rdf.KindLiteral, Text: c.buf, Datatype: rdf.XSDString}
	return true
}

func (c *fakeCursor) Views() []rdf.View { return c.sol }
func (c *fakeCursor) Err() error        { return c.err }
func (c *fakeCursor) Close() error      { return nil }

// blockingAnswer answers one solution, which its cursor reads (as a real
// engine reads its sources) only once release is closed; until then Next
// waits, or fails when the context ends.
func blockingAnswer(started chan<- struct{}, release <-chan struct{}) func(ctx context.Context, q Query) (*Answer, error) {
	return func(ctx context.Context, q Query) (*Answer, error) {
		return &Answer{Kind: results.Solutions, Solutions: &blockingCursor{
			fakeCursor: fakeCursor{ctx: ctx, n: 1, failAfter: -1}, started: started, release: release}}, nil
	}
}

// blockingCursor is a fakeCursor whose first Next waits for release.
type blockingCursor struct {
	fakeCursor
	started chan<- struct{}
	release <-chan struct{}
	waited  bool
}

func (c *blockingCursor) Next() bool {
	if !c.waited {
		c.waited = true
		if c.started != nil {
			c.started <- struct{}{}
		}
		select {
		case <-c.release:
		case <-c.ctx.Done():
			c.err = c.ctx.Err()
			return false
		}
	}
	return c.fakeCursor.Next()
}

// env is a server under test with the places it writes to. busy counts the
// handlers running: a client has a whole answer (sent with its length) before
// the handler has logged and counted it.
type env struct {
	srv  *Server
	ts   *httptest.Server
	reg  *prometheus.Registry
	log  *bytes.Buffer
	mu   *sync.Mutex
	busy atomic.Int64
}

// settle waits, for a second at most, until no handler runs.
func (e *env) settle() {
	for deadline := time.Now().Add(time.Second); e.busy.Load() > 0 && time.Now().Before(deadline); {
		time.Sleep(time.Millisecond)
	}
}

// logs returns what the server logged so far, once the handlers are done.
func (e *env) logs() string {
	e.settle()
	e.mu.Lock()
	defer e.mu.Unlock()
	return e.log.String()
}

// lockedBuffer lets the handlers' goroutines log into one buffer.
type lockedBuffer struct {
	mu  *sync.Mutex
	buf *bytes.Buffer
}

func (b lockedBuffer) Write(p []byte) (int, error) {
	b.mu.Lock()
	defer b.mu.Unlock()
	return b.buf.Write(p)
}

func newEnv(t *testing.T, cfg Config, e Engine) *env {
	t.Helper()
	reg := prometheus.NewRegistry()
	buf, mu := &bytes.Buffer{}, &sync.Mutex{}
	log := slog.New(slog.NewJSONHandler(lockedBuffer{mu, buf}, &slog.HandlerOptions{Level: slog.LevelDebug}))
	s, err := New(cfg, e, log, reg, reg)
	if err != nil {
		t.Fatal(err)
	}
	en := &env{srv: s, reg: reg, log: buf, mu: mu}
	h := s.Handler()
	en.ts = httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		en.busy.Add(1)
		defer en.busy.Add(-1)
		h.ServeHTTP(w, r)
	}))
	t.Cleanup(en.ts.Close)
	return en
}

// response is what a test request got.
type response struct {
	status int
	header http.Header
	body   string
	err    error // reading the body
}

// do sends a request; headers alternate names and values.
func (e *env) do(t *testing.T, method, path, body string, headers ...string) response {
	t.Helper()
	var rd io.Reader
	if body != "" {
		rd = strings.NewReader(body)
	}
	req, err := http.NewRequest(method, e.ts.URL+path, rd)
	if err != nil {
		t.Fatal(err)
	}
	for i := 0; i+1 < len(headers); i += 2 {
		if strings.EqualFold(headers[i], "Host") {
			req.Host = headers[i+1]
			continue
		}
		req.Header.Add(headers[i], headers[i+1])
	}
	resp, err := e.ts.Client().Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	b, rerr := io.ReadAll(resp.Body)
	return response{status: resp.StatusCode, header: resp.Header, body: string(b), err: rerr}
}

// metric returns the exposition lines of the metrics whose name starts with
// name.
func (e *env) metric(t *testing.T, name string) string {
	t.Helper()
	e.settle()
	r := e.do(t, "GET", "/metrics", "")
	var lines []string
	for _, l := range strings.Split(r.body, "\n") {
		if strings.HasPrefix(l, name) {
			lines = append(lines, l)
		}
	}
	return strings.Join(lines, "\n")
}

// status GETs path and returns the status, or -1; unlike do it may be called
// from any goroutine.
func (e *env) status(path string) int {
	resp, err := e.ts.Client().Get(e.ts.URL + path)
	if err != nil {
		return -1
	}
	io.Copy(io.Discard, resp.Body)
	resp.Body.Close()
	return resp.StatusCode
}
