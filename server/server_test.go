package server

import (
	"context"
	"encoding/json"
	"errors"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"net/url"
	"strings"
	"testing"

	"github.com/prometheus/client_golang/prometheus"

	"veneer/catalog/rdf"
	"veneer/rewrite/exec"
)

// fakeEngine answers every query with n rows of one variable, failing after
// failAfter rows when failAfter >= 0, and records the query text it got.
type fakeEngine struct {
	n, failAfter int
	got          string
	ready        error
	queryErr     error
}

func (f *fakeEngine) Query(_ context.Context, text string) (Solutions, error) {
	f.got = text
	if f.queryErr != nil {
		return nil, f.queryErr
	}
	return &fakeCursor{n: f.n, failAfter: f.failAfter}, nil
}

func (f *fakeEngine) Ready(context.Context) error { return f.ready }

type fakeCursor struct {
	n, failAfter, i int
	err             error
}

func (c *fakeCursor) Vars() []string { return []string{"x"} }
func (c *fakeCursor) Next() bool {
	if c.failAfter >= 0 && c.i >= c.failAfter {
		c.err = errors.New("connection reset by database")
		return false
	}
	c.i++
	return c.i <= c.n
}
func (c *fakeCursor) Solution() []rdf.Term { return []rdf.Term{rdf.NewString("v")} }
func (c *fakeCursor) Err() error           { return c.err }
func (c *fakeCursor) Close() error         { return nil }

func newTestServer(t *testing.T, e Engine) *httptest.Server {
	reg := prometheus.NewRegistry()
	s := New(DefaultConfig(), e, slog.New(slog.NewTextHandler(io.Discard, nil)), reg, reg)
	ts := httptest.NewServer(s.Handler())
	t.Cleanup(ts.Close)
	return ts
}

func TestProtocolRequestForms(t *testing.T) {
	// SPARQL 1.1 Protocol §2.1.1–2.1.3: query via GET, POST form-encoded and POST
	// directly in the body.
	const q = "SELECT ?x WHERE { ?x ?p ?o }"
	e := &fakeEngine{n: 2, failAfter: -1}
	ts := newTestServer(t, e)
	requests := map[string]func() (*http.Response, error){
		"GET": func() (*http.Response, error) { return http.Get(ts.URL + "/sparql?query=" + url.QueryEscape(q)) },
		"POST form": func() (*http.Response, error) {
			return http.PostForm(ts.URL+"/sparql", url.Values{"query": {q}})
		},
		"POST direct": func() (*http.Response, error) {
			return http.Post(ts.URL+"/sparql", "application/sparql-query", strings.NewReader(q))
		},
	}
	for name, do := range requests {
		e.got = ""
		resp, err := do()
		if err != nil {
			t.Fatal(err)
		}
		body, _ := io.ReadAll(resp.Body)
		resp.Body.Close()
		if resp.StatusCode != 200 || e.got != q {
			t.Errorf("%s: status %d, engine got %q; body %s", name, resp.StatusCode, e.got, body)
		}
		if !strings.Contains(string(body), `"vars":["x"]`) {
			t.Errorf("%s: body %s", name, body)
		}
	}
}

func TestProtocolErrors(t *testing.T) {
	e := &fakeEngine{failAfter: -1, queryErr: &exec.Error{Kind: exec.BadQuery, Err: errors.New("line 1, column 9: expected a variable")}}
	ts := newTestServer(t, e)
	cases := []struct {
		name   string
		do     func() (*http.Response, error)
		status int
		body   string
	}{
		{"syntax error", func() (*http.Response, error) { return http.Get(ts.URL + "/sparql?query=SELECT") }, 400, "line 1, column 9"},
		{"no query", func() (*http.Response, error) { return http.Get(ts.URL + "/sparql?other=1") }, 400, "query"},
		// SPARQL 1.1 Protocol §2.1.4: two query parameters are an error.
		{"two queries", func() (*http.Response, error) { return http.Get(ts.URL + "/sparql?query=a&query=b") }, 400, "exactly one"},
		{"unknown body type", func() (*http.Response, error) {
			return http.Post(ts.URL+"/sparql", "text/plain", strings.NewReader("SELECT"))
		}, 415, "Content-Type"},
		{"PUT", func() (*http.Response, error) {
			req, _ := http.NewRequest(http.MethodPut, ts.URL+"/sparql", nil)
			return http.DefaultClient.Do(req)
		}, 405, ""},
	}
	for _, c := range cases {
		resp, err := c.do()
		if err != nil {
			t.Fatal(err)
		}
		body, _ := io.ReadAll(resp.Body)
		resp.Body.Close()
		if resp.StatusCode != c.status || !strings.Contains(string(body), c.body) {
			t.Errorf("%s: status %d body %q; want %d containing %q", c.name, resp.StatusCode, body, c.status, c.body)
		}
	}
}

func TestFailureAfterStreamingAbortsTheBody(t *testing.T) {
	// 5000 rows flush part of the document before the cursor fails: the client must
	// see a broken transfer, never a well-formed but truncated result.
	ts := newTestServer(t, &fakeEngine{n: 10000, failAfter: 5000})
	resp, err := http.Get(ts.URL + "/sparql?query=x")
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	body, err := io.ReadAll(resp.Body)
	if err == nil {
		t.Fatalf("read %d bytes without error; the body should have been aborted", len(body))
	}
	if json.Valid(body) {
		t.Errorf("aborted body is a complete JSON document")
	}
	m, _ := http.Get(ts.URL + "/metrics")
	mb, _ := io.ReadAll(m.Body)
	m.Body.Close()
	if !strings.Contains(string(mb), "veneer_stream_failures_total 1") {
		t.Errorf("stream failure not counted:\n%s", mb)
	}
}

func TestHealthAndReadiness(t *testing.T) {
	e := &fakeEngine{failAfter: -1}
	ts := newTestServer(t, e)
	for path, want := range map[string]int{"/healthz": 200, "/readyz": 200} {
		resp, err := http.Get(ts.URL + path)
		if err != nil {
			t.Fatal(err)
		}
		resp.Body.Close()
		if resp.StatusCode != want {
			t.Errorf("%s: %d, want %d", path, resp.StatusCode, want)
		}
	}
	e.ready = errors.New("dial tcp: connection refused")
	resp, err := http.Get(ts.URL + "/readyz")
	if err != nil {
		t.Fatal(err)
	}
	body, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	if resp.StatusCode != 503 || strings.Contains(string(body), "refused") {
		t.Errorf("/readyz with a failing source: %d %q; want 503 without the internal reason", resp.StatusCode, body)
	}
}
