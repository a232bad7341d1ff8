package main

import (
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"os"
	"slices"
	"sync"
	"testing"
	"time"

	"veneer/cmd/veneer/demo"
)

// TestLoad is the bounded load check: 64 clients on loopback send the demo's
// queries to a demo server for a while, first with room for all of them
// (running or queued), then with a limit far below them. With room, every
// answer must be a complete 200; beyond the limit, every refusal must be a
// 503 with Retry-After. It prints throughput and latency figures; it asserts
// no timing. It runs only with VENEER_LOAD=1, for VENEER_LOAD_SECONDS per
// phase (default 10, at most 15, so that the check stays within 30 s).
func TestLoad(t *testing.T) {
	if os.Getenv("VENEER_LOAD") != "1" {
		t.Skip("load check: set VENEER_LOAD=1 to run it")
	}
	secs := 10
	if s := os.Getenv("VENEER_LOAD_SECONDS"); s != "" {
		if _, err := fmt.Sscan(s, &secs); err != nil || secs < 1 || secs > 15 {
			t.Fatalf("VENEER_LOAD_SECONDS=%q: want 1 to 15", s)
		}
	}
	const clients = 64
	var queries []string
	// The dashboard-like examples that keep to basic graph patterns, FILTER
	// and LIMIT, which the engine answers today.
	for _, q := range demo.Queries()[:3] {
		queries = append(queries, q.Text)
	}
	phases := []struct {
		name               string
		concurrent, queued int
		refusalsAllowed    bool
	}{
		{"within the limit (16 running, 64 queued)", 16, 64, false},
		{"beyond the limit (4 running, 8 queued)", 4, 8, true},
	}
	for _, ph := range phases {
		t.Run(ph.name, func(t *testing.T) {
			endpoint := startDemo(t, func(c *config) {
				c.Limits.MaxConcurrent, c.Limits.MaxQueued = ph.concurrent, ph.queued
				c.Log.Level = "error"
			})
			client := &http.Client{Transport: &http.Transport{MaxIdleConnsPerHost: clients, MaxConnsPerHost: clients}}
			type sample struct {
				status int
				d      time.Duration
				err    error
			}
			var mu sync.Mutex
			var samples []sample
			stop := time.Now().Add(time.Duration(secs) * time.Second)
			var wg sync.WaitGroup
			for i := range clients {
				wg.Add(1)
				go func() {
					defer wg.Done()
					for n := i; time.Now().Before(stop); n++ {
						s := send(client, endpoint, queries[n%len(queries)])
						mu.Lock()
						samples = append(samples, sample{s.status, s.d, s.err})
						mu.Unlock()
					}
				}()
			}
			wg.Wait()
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
				t.Logf("%d clients, %s: %d × %d (%.0f/s), p50 %v, p99 %v, max %v", clients, ph.name, len(ds), status,
					float64(len(ds))/elapsed.Seconds(), ds[len(ds)/2].Round(time.Microsecond),
					ds[len(ds)*99/100].Round(time.Microsecond), ds[len(ds)-1].Round(time.Microsecond))
			}
			if len(by[200]) == 0 {
				t.Errorf("no query answered")
			}
		})
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
