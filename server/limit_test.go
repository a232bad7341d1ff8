package server

import (
	"context"
	"errors"
	"net/http"
	"net/http/httptest"
	"strings"
	"sync"
	"testing"
	"time"

	"veneer/rewrite/exec"
)

func TestConcurrencyLimitAndQueue(t *testing.T) {
	// Two slots and a queue of one: two queries run, a third waits, a fourth
	// is refused at once with 503 and Retry-After.
	started, release := make(chan struct{}, 8), make(chan struct{})
	cfg := DefaultConfig()
	cfg.Limits.MaxConcurrent, cfg.Limits.MaxQueued, cfg.Limits.QueueTimeout = 2, 1, time.Minute
	env := newEnv(t, cfg, &fakeEngine{answer: blockingAnswer(started, release)})
	var wg sync.WaitGroup
	statuses := make([]int, 3)
	for i := range statuses {
		wg.Add(1)
		go func() {
			defer wg.Done()
			statuses[i] = env.status("/sparql?query=q")
		}()
	}
	<-started
	<-started
	waitFor(t, func() bool { return env.metric(t, "veneer_queries_queued") == "veneer_queries_queued 1" })
	if m := env.metric(t, "veneer_queries_in_flight"); m != "veneer_queries_in_flight 2" {
		t.Errorf("in flight: %q", m)
	}
	start := time.Now()
	r := env.do(t, "GET", "/sparql?query=q", "")
	if r.status != http.StatusServiceUnavailable || r.header.Get("Retry-After") != "1" || !strings.Contains(r.body, "limit of 2 running and 1 waiting") {
		t.Errorf("fourth query: %d Retry-After %q %q", r.status, r.header.Get("Retry-After"), r.body)
	}
	// Not a timed assertion: the refusal must not have waited for a slot,
	// which the blocked queries hold until release.
	if d := time.Since(start); d > 30*time.Second {
		t.Errorf("the refusal took %v", d)
	}
	close(release)
	wg.Wait()
	for i, s := range statuses {
		if s != 200 {
			t.Errorf("query %d: status %d, want 200 (it ran or waited its turn)", i, s)
		}
	}
	if m := env.metric(t, `veneer_queries_rejected_total{reason="queue_full"}`); !strings.HasSuffix(m, " 1") {
		t.Errorf("rejection not counted: %q", m)
	}
}

// withSlotHeld starts a server with cfg and e and has the query "hold" take
// one of its slots, and keep it until the test ends; e answers the others
// (with one solution when it has no answer function).
func withSlotHeld(t *testing.T, cfg Config, e *fakeEngine) *env {
	t.Helper()
	started, release := make(chan struct{}, 1), make(chan struct{})
	hold, other := blockingAnswer(started, release), e.answer
	if other == nil {
		other = rowsAnswer(1, -1)
	}
	e.answer = func(ctx context.Context, q Query) (*Answer, error) {
		if q.Text == "hold" {
			return hold(ctx, q)
		}
		return other(ctx, q)
	}
	env := newEnv(t, cfg, e)
	t.Cleanup(func() { close(release) }) // before the server's own clean-up waits for it
	go env.status("/sparql?query=hold")
	<-started
	return env
}

func TestQueueTimeout(t *testing.T) {
	cfg := DefaultConfig()
	cfg.Limits.MaxConcurrent, cfg.Limits.MaxQueued, cfg.Limits.QueueTimeout = 1, 4, 50*time.Millisecond
	env := withSlotHeld(t, cfg, &fakeEngine{})
	r := env.do(t, "GET", "/sparql?query=q", "")
	if r.status != http.StatusServiceUnavailable || r.header.Get("Retry-After") == "" || !strings.Contains(r.body, "waited 50ms") {
		t.Errorf("queued query: %d %q", r.status, r.body)
	}
	if m := env.metric(t, `veneer_queries_rejected_total{reason="queue_timeout"}`); !strings.HasSuffix(m, " 1") {
		t.Errorf("rejection not counted: %q", m)
	}
}

func TestQueryThatDoesNotPrepareTakesNoSlot(t *testing.T) {
	// One slot, held, and no queue: a well-formed query is refused with 503,
	// while one its engine cannot prepare is told why with 400 at once,
	// since it would never read a source.
	cfg := DefaultConfig()
	cfg.Limits.MaxConcurrent, cfg.Limits.MaxQueued = 1, 0
	env := withSlotHeld(t, cfg, &fakeEngine{prepare: func(q Query) error {
		if q.Text == "bad" {
			return &exec.Error{Kind: exec.BadQuery, Err: errors.New("syntax error at 1:1")}
		}
		return nil
	}})
	if r := env.do(t, "GET", "/sparql?query=bad", ""); r.status != http.StatusBadRequest || !strings.Contains(r.body, "syntax error at 1:1") {
		t.Errorf("a query that does not prepare: %d %q", r.status, r.body)
	}
	if r := env.do(t, "GET", "/sparql?query=q", ""); r.status != http.StatusServiceUnavailable {
		t.Errorf("a query beyond the limit: %d %q", r.status, r.body)
	}
}

func TestQueueExpiryIsShared(t *testing.T) {
	// Queries that start waiting within a sixteenth of the timeout share one
	// channel, which closes no sooner than the timeout after the last of
	// them; a later one gets a channel of its own.
	e := expiry{wait: time.Hour}
	now := time.Now()
	first := e.after(now)
	if e.after(now.Add(3*time.Minute)) != first {
		t.Errorf("a query 3 minutes later, within the sixteenth, got a channel of its own")
	}
	if e.at.Before(now.Add(3*time.Minute + time.Hour)) {
		t.Errorf("the shared channel closes at %v, before the later query's timeout", e.at.Sub(now))
	}
	if e.after(now.Add(5*time.Minute)) == first {
		t.Errorf("a query 5 minutes later, past the sixteenth, got the earlier channel")
	}
	// A short timeout: the channel closes, and not before the timeout.
	short := expiry{wait: 20 * time.Millisecond}
	start := time.Now()
	<-short.after(start)
	if d := time.Since(start); d < 20*time.Millisecond {
		t.Errorf("closed after %v, before the 20ms timeout", d)
	}
}

func TestRefusedQueryCountsItsPlanLookup(t *testing.T) {
	// A query refused by the concurrency limit was planned all the same: its
	// plan cache lookup counts; nothing of it ran, so no SQL time does.
	cfg := DefaultConfig()
	cfg.Limits.MaxConcurrent, cfg.Limits.MaxQueued = 1, 0
	env := withSlotHeld(t, cfg, &fakeEngine{answer: func(ctx context.Context, q Query) (*Answer, error) {
		a, err := rowsAnswer(1, -1)(ctx, q)
		a.Stats = func() Stats { return Stats{PlanCached: true, SQLDuration: time.Second} }
		return a, err
	}})
	if r := env.do(t, "GET", "/sparql?query=q", ""); r.status != http.StatusServiceUnavailable {
		t.Fatalf("a query beyond the limit: %d %q", r.status, r.body)
	}
	if m := env.metric(t, `veneer_plan_cache_lookups_total{result="hit"}`); !strings.HasSuffix(m, " 1") {
		t.Errorf("the refused query's lookup: %q", m)
	}
	if m := env.metric(t, "veneer_sql_duration_seconds_count"); m != "veneer_sql_duration_seconds_count 0" {
		t.Errorf("SQL time of a query that did not run: %q", m)
	}
}

func TestTimeLimitRunsOutInTheQueue(t *testing.T) {
	// One slot, held. A query whose client allows 50 ms waits in the queue
	// (whose own timeout is a minute) and is stopped at its time limit,
	// which counts from when it was planned: a timeout, not a queue refusal.
	cfg := DefaultConfig()
	cfg.Limits.MaxConcurrent, cfg.Limits.MaxQueued, cfg.Limits.QueueTimeout = 1, 4, time.Minute
	env := withSlotHeld(t, cfg, &fakeEngine{})
	r := env.do(t, "GET", "/sparql?query=q&timeout=0.05", "")
	if r.status != http.StatusServiceUnavailable || !strings.Contains(r.body, "time limit") {
		t.Errorf("status %d %q; want 503 naming the time limit", r.status, r.body)
	}
	if m := env.metric(t, "veneer_query_timeouts_total"); m != "veneer_query_timeouts_total 1" {
		t.Errorf("timeout not counted: %q", m)
	}
	if m := env.metric(t, `veneer_queries_rejected_total{reason="queue_timeout"}`); m != "" {
		t.Errorf("counted as a queue refusal: %q", m)
	}
}

func TestQueryTimeout(t *testing.T) {
	// The client asks for 50 ms; the engine blocks until its context ends.
	var deadline time.Time
	e := &fakeEngine{answer: func(ctx context.Context, q Query) (*Answer, error) {
		deadline, _ = ctx.Deadline()
		return blockingAnswer(nil, nil)(ctx, q)
	}}
	cfg := DefaultConfig()
	cfg.Limits.QueryTimeout = time.Minute
	env := newEnv(t, cfg, e)
	r := env.do(t, "GET", "/sparql?query=q&timeout=0.05", "")
	if r.status != http.StatusServiceUnavailable || !strings.Contains(r.body, "time limit") {
		t.Errorf("status %d %q; want 503 naming the time limit", r.status, r.body)
	}
	if m := env.metric(t, "veneer_query_timeouts_total"); m != "veneer_query_timeouts_total 1" {
		t.Errorf("timeout not counted: %q", m)
	}
	// A client cannot ask for more than the server's limit.
	release := make(chan struct{})
	close(release)
	e.answer = func(ctx context.Context, q Query) (*Answer, error) {
		deadline, _ = ctx.Deadline()
		return blockingAnswer(nil, release)(ctx, q)
	}
	before := time.Now()
	if r := env.do(t, "GET", "/sparql?query=q&timeout=3600", ""); r.status != 200 {
		t.Fatalf("status %d", r.status)
	}
	// The client's hour would put the deadline an hour away; the server's
	// limit puts it one minute (and the time to get there) away.
	if d := deadline.Sub(before); d < time.Minute || d > 2*time.Minute {
		t.Errorf("deadline %v after the request; want the server's one-minute limit", d)
	}
}

func TestClientGoneCancelsTheQuery(t *testing.T) {
	canceled := make(chan error, 1)
	started := make(chan struct{}, 1)
	e := &fakeEngine{answer: func(ctx context.Context, q Query) (*Answer, error) {
		started <- struct{}{}
		<-ctx.Done()
		canceled <- ctx.Err()
		return nil, ctx.Err()
	}}
	env := newEnv(t, DefaultConfig(), e)
	ctx, cancel := context.WithCancel(context.Background())
	req, _ := http.NewRequestWithContext(ctx, "GET", env.ts.URL+"/sparql?query=q", nil)
	go func() {
		<-started
		cancel()
	}()
	if _, err := env.ts.Client().Do(req); err == nil {
		t.Fatal("the request succeeded")
	}
	select {
	case err := <-canceled:
		if err != context.Canceled {
			t.Errorf("the engine's context ended with %v, want context.Canceled", err)
		}
	case <-time.After(30 * time.Second):
		t.Fatal("the engine's context was not canceled when the client went away")
	}
}

// waitFor polls cond until it holds, failing the test after 30 s.
func waitFor(t *testing.T, cond func() bool) {
	t.Helper()
	for deadline := time.Now().Add(30 * time.Second); !cond(); time.Sleep(5 * time.Millisecond) {
		if time.Now().After(deadline) {
			t.Fatal("condition not reached in 30s")
		}
	}
}

// sendGate is a ResponseWriter whose first Write waits until the test lets
// it go, like a client that reads its answer slowly.
type sendGate struct {
	header  http.Header
	status  int
	writing chan struct{} // closed when the first Write begins
	proceed chan struct{}
	once    sync.Once
}

func (g *sendGate) Header() http.Header { return g.header }
func (g *sendGate) WriteHeader(code int) {
	if g.status == 0 {
		g.status = code
	}
}
func (g *sendGate) Write(b []byte) (int, error) {
	g.WriteHeader(http.StatusOK)
	g.once.Do(func() { close(g.writing) })
	<-g.proceed
	return len(b), nil
}

func TestSlotFreeWhileTheAnswerIsSent(t *testing.T) {
	// One slot and no queue: while the first answer, read to its end, is on
	// its way to a slow client, a second query is admitted, not refused.
	cfg := DefaultConfig()
	cfg.Limits.MaxConcurrent, cfg.Limits.MaxQueued = 1, 0
	env := newEnv(t, cfg, &fakeEngine{answer: rowsAnswer(3, -1)})
	h := env.srv.Handler()
	gate := &sendGate{header: http.Header{}, writing: make(chan struct{}), proceed: make(chan struct{})}
	done := make(chan struct{})
	go func() {
		defer close(done)
		h.ServeHTTP(gate, httptest.NewRequest(http.MethodGet, "/sparql?query=q", nil))
	}()
	<-gate.writing
	second := env.do(t, "GET", "/sparql?query=q", "")
	close(gate.proceed)
	<-done
	if second.status != http.StatusOK {
		t.Errorf("the second query while the first answer was sent: %d %s", second.status, second.body)
	}
	if gate.status != http.StatusOK {
		t.Errorf("the first query: status %d", gate.status)
	}
}
