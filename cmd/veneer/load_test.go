package main

import (
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"os"
	"runtime"
	"slices"
	"sync"
	"testing"
	"time"

	"veneer/cmd/veneer/demo"
)

// TestLoad is the bounded load and overload check: clients on loopback send
// the demo's queries to a demo server for a few seconds per phase, first 64
// with room for all of them (running or queued), then 1, 2, 5 and 10 times as
// many as a small concurrency limit admits. With room, every answer must be a
// complete 200; beyond it, every refusal a 503 with Retry-After, and nothing
// else may go wrong: no transport error, no incomplete answer, the heap
// bounded, the goroutines back to where they were. It logs throughput, the
// admitted queries' p99 and the refusals' latency; it asserts no timing.
// Each phase lasts VENEER_LOAD_SECONDS (default 2, at most 15).
func TestLoad(t *testing.T) {
	secs := 2
	if s := os.Getenv("VENEER_LOAD_SECONDS"); s != "" {
		if _, err := fmt.Sscan(s, &secs); err != nil || secs < 1 || secs > 15 {
			t.Fatalf("VENEER_LOAD_SECONDS=%q: want 1 to 15", s)
		}
	}
	var queries []string
	// The dashboard-like examples that keep to basic graph patterns, FILTER
	// and LIMIT.
	for _, q := range demo.Queries()[:3] {
		queries = append(queries, q.Text)
	}
	const limit, queue = 4, 4
	phases := []struct {
		name                       string
		clients, concurrent, queue int
		refusalsAllowed            bool
	}{
		{"64 clients, room for all (16 running, 64 queued)", 64, 16, 64, false},
		{"1x the limit (4 clients, 4 running, 4 queued)", limit, limit, queue, false},
		{"2x the limit", 2 * limit, limit, queue, true},
		{"5x the limit", 5 * limit, limit, queue, true},
		{"10x the limit", 10 * limit, limit, queue, true},
	}
	goroutines := runtime.NumGoroutine()
	for _, ph := range phases {
		t.Run(ph.name, func(t *testing.T) {
			endpoint := startDemo(t, func(c *config) {
				c.Limits.MaxConcurrent, c.Limits.MaxQueued = ph.concurrent, ph.queue
				c.Log.Level = "error"
			})
			client := &http.Client{Transport: &http.Transport{MaxIdleConnsPerHost: ph.clients, MaxConnsPerHost: ph.clients}}
			defer client.CloseIdleConnections()
			var mu sync.Mutex
			var samples []sent
			stop := time.Now().Add(time.Duration(secs) * time.Second)
			var peakHeap uint64
			heapDone := make(chan struct{})
			go func() {
				defer close(heapDone)
				var ms runtime.MemStats
				for time.Now().Before(stop) {
					runtime.ReadMemStats(&ms)
					peakHeap = max(peakHeap, ms.HeapInuse)
					time.Sleep(100 * time.Millisecond)
				}
			}()
			var wg sync.WaitGroup
			for i := range ph.clients {
				wg.Add(1)
				go func() {
					defer wg.Done()
					for n := i; time.Now().Before(stop); n++ {
						s := send(client, endpoint, queries[n%len(queries)])
						mu.Lock()
						samples = append(samples, s)
						mu.Unlock()
					}
				}()
			}
			wg.Wait()
			<-heapDone
			elapsed := time.Duration(secs) * time.Second
			by := map[int][]time.Duration{}
			for _, s := range samples {
				switch {
				case s.err != nil:
					t.Errorf("request failed: %v", s.err)
				case s.status == 200, s.status == 503 && ph.refusalsAllowed:
					by[s.status] = append(by[s.status], s.d)
				default:
					t.Errorf("status %d", s.status)
				}
			}
			for _, status := range []int{200, 503} {
				ds := by[status]
				if len(ds) == 0 {
					continue
				}
				slices.Sort(ds)
				t.Logf("%s: %d × %d (%.0f/s), p50 %v, p99 %v, max %v", ph.name, len(ds), status,
					float64(len(ds))/elapsed.Seconds(), ds[len(ds)/2].Round(time.Microsecond),
					ds[len(ds)*99/100].Round(time.Microsecond), ds[len(ds)-1].Round(time.Microsecond))
			}
			t.Logf("%s: peak heap in use %.1f MiB", ph.name, float64(peakHeap)/(1<<20))
			if len(by[200]) == 0 {
				t.Errorf("no query answered")
			}
			// Refused requests hold nothing: however many clients, the heap
			// stays within a bound that a leak per request would pass.
			if peakHeap > 256<<20 {
				t.Errorf("peak heap %d MiB, more than 256 MiB", peakHeap>>20)
			}
		})
	}
	// Every phase's server, clients and connections are gone.
	for deadline := time.Now().Add(10 * time.Second); runtime.NumGoroutine() > goroutines+5; time.Sleep(50 * time.Millisecond) {
		if time.Now().After(deadline) {
			t.Errorf("%d goroutines after the load, %d before", runtime.NumGoroutine(), goroutines)
			break
		}
	}
}

type sent struct {
	status int
	d      time.Duration
	err    error
}

// send runs one query and checks that a 200 carries a whole JSON document
// and a 503 a Retry-After.
func send(client *http.Client, endpoint, query string) sent {
	start := time.Now()
	resp, err := client.Get(endpoint + "?query=" + url.QueryEscape(query))
	if err != nil {
		return sent{err: err}
	}
	body, err := io.ReadAll(resp.Body)
	resp.Body.Close()
	s := sent{status: resp.StatusCode, d: time.Since(start), err: err}
	switch {
	case err != nil:
	case resp.StatusCode == 200 && !json.Valid(body):
		s.err = fmt.Errorf("a 200 answer is not a whole JSON document (%d bytes)", len(body))
	case resp.StatusCode == 503 && resp.Header.Get("Retry-After") == "":
		s.err = fmt.Errorf("a 503 without Retry-After: %s", body)
	}
	return s
}
