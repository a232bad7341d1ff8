package server

import (
	"context"
	"errors"
	"fmt"
	"net/http"
	"sync"
	"sync/atomic"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"veneer/rewrite/exec"
)

// admission bounds how many queries run at once. A query beyond the limit
// waits in a queue of bounded length for at most a set time; a query that
// finds the queue full is turned away at once. Both refusals are 503 with
// Retry-After, so that a client under overload learns it in microseconds
// instead of piling onto the database.
type admission struct {
	slots    chan struct{} // one token per running query; nil: no limit
	maxQueue int64
	expiry   expiry // the queue timeout
	// running and queued count the queries admitted and waiting; their
	// gauges read them when scraped, so that a query updates no metric
	// on its way in and out.
	running, queued atomic.Int64
	m               *metrics
}

// newAdmission returns the admission for limits l, its gauges registered
// with reg.
func newAdmission(l Limits, m *metrics, reg prometheus.Registerer) *admission {
	a := &admission{maxQueue: int64(l.MaxQueued), expiry: expiry{wait: l.QueueTimeout}, m: m}
	if l.MaxConcurrent > 0 {
		a.slots = make(chan struct{}, l.MaxConcurrent)
	}
	reg.MustRegister(
		prometheus.NewGaugeFunc(prometheus.GaugeOpts{
			Name: "veneer_queries_in_flight",
			Help: "Queries running now.",
		}, func() float64 { return float64(a.running.Load()) }),
		prometheus.NewGaugeFunc(prometheus.GaugeOpts{
			Name: "veneer_queries_queued",
			Help: "Queries waiting for a query slot now.",
		}, func() float64 {
			// A query turned away at a full queue counts itself for a moment.
			return float64(min(a.queued.Load(), a.maxQueue))
		}),
	)
	return a
}

// retryAfter is what a refused client is told to wait: long enough for a
// query slot to turn over on a busy server, short enough for a dashboard
// (common practice, from no specification).
const retryAfter = time.Second

// acquire waits for a slot; a nil error means the caller has one and must
// give it back with release.
func (a *admission) acquire(ctx context.Context) error {
	if a.slots == nil {
		a.running.Add(1)
		return nil
	}
	select {
	case a.slots <- struct{}{}:
		a.running.Add(1)
		return nil
	default:
	}
	if a.queued.Add(1) > a.maxQueue {
		a.queued.Add(-1)
		a.m.rejected.WithLabelValues("queue_full").Inc()
		return &problem{status: http.StatusServiceUnavailable, retryAfter: retryAfter,
			msg: fmt.Sprintf("the server is at its limit of %d running and %d waiting queries; try again shortly", cap(a.slots), a.maxQueue)}
	}
	defer a.queued.Add(-1)
	var timeout <-chan struct{}
	if a.expiry.wait > 0 {
		timeout = a.expiry.after(time.Now())
	}
	select {
	case a.slots <- struct{}{}:
		a.running.Add(1)
		return nil
	case <-timeout:
		a.m.rejected.WithLabelValues("queue_timeout").Inc()
		return &problem{status: http.StatusServiceUnavailable, retryAfter: retryAfter,
			msg: fmt.Sprintf("the query waited %s for one of the %d query slots; try again shortly", a.expiry.wait, cap(a.slots))}
	case <-ctx.Done():
		if errors.Is(ctx.Err(), context.DeadlineExceeded) {
			return &exec.Error{Kind: exec.Timeout, Err: errors.New("the query's time limit ran out while it waited for a query slot")}
		}
		return &problem{status: statusCanceled, msg: "the request was canceled while it waited", err: ctx.Err()}
	}
}

// expiry hands out the channels that queued queries wait on for the queue
// timeout: one timer for all the queries that start waiting within the same
// sixteenth of the timeout, rather than a timer each, which under overload
// is thousands a second. A query so waits the timeout and at most a
// sixteenth more.
type expiry struct {
	wait time.Duration
	mu   sync.Mutex
	at   time.Time     // when done closes
	done chan struct{} // the channel handed out now
}

// after returns a channel that closes no sooner than the timeout after now.
func (e *expiry) after(now time.Time) <-chan struct{} {
	end := now.Add(e.wait)
	e.mu.Lock()
	defer e.mu.Unlock()
	if e.done == nil || e.at.Before(end) {
		done := make(chan struct{})
		e.at, e.done = end.Add(e.wait/16), done
		time.AfterFunc(e.at.Sub(now), func() { close(done) })
	}
	return e.done
}

// release gives back the slot of a query that acquire admitted.
func (a *admission) release() {
	a.running.Add(-1)
	if a.slots != nil {
		<-a.slots
	}
}

// held is a query's slot once it is admitted (admitted is set); release
// gives it back, once however often it is called, and does nothing before.
type held struct {
	a                  *admission
	admitted, released bool
}

func (h *held) release() {
	if h.admitted && !h.released {
		h.released = true
		h.a.release()
	}
}
