package server

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"net/url"
	"path/filepath"
	"regexp"
	"strings"
	"sync"
	"sync/atomic"
	"testing"

	"github.com/go-chi/chi/v5"
	"github.com/prometheus/client_golang/prometheus"

	"veneer/cmd/veneer/demo"
	"veneer/rewrite"
	"veneer/rewrite/exec"
	"veneer/server/console"
)

// countingEngine counts the calls that reach the engine: Prepare and
// Explain.
type countingEngine struct {
	Engine
	reached atomic.Int64
}

func (c *countingEngine) Prepare(q Query) (Prepared, error) {
	c.reached.Add(1)
	return c.Engine.Prepare(q)
}

func (c *countingEngine) Explain(ctx context.Context, q Query) (*Explanation, error) {
	c.reached.Add(1)
	return c.Engine.(Explainer).Explain(ctx, q)
}

// labelsQuery asks for every rdfs:label of the demo graph.
const labelsQuery = "SELECT ?l WHERE { ?s <http://www.w3.org/2000/01/rdf-schema#label> ?l }"

// TestEveryRouteAndToken tries each route the router registers (read from it
// with chi.Walk, so that a new route is tried too) with every method it takes,
// without a token, with a wrong one and with the right one, over the demo
// database. Only the right token may reach the engine (query and explain); no
// answer without it, and no answer of the health and metrics routes, may hold
// the token or a value of the data. The bearer scheme is RFC 6750's.
func TestEveryRouteAndToken(t *testing.T) {
	const token = "Rotor-7f3a.b9~Qz+token/x=="
	ctx := context.Background()
	d, err := demo.OpenSQLite(ctx, filepath.Join(t.TempDir(), "demo.db"))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { d.Source.Close() })
	engine := &countingEngine{Engine: FromExec(&exec.Engine{Planner: rewrite.NewPlanner(d.Catalog, d.Columns, d.Source.Dialect()), Source: d.Source})}
	cfg := DefaultConfig()
	cfg.Tokens = NewTokens(token)
	reg := prometheus.NewRegistry()
	logs := lockedBuffer{mu: new(sync.Mutex), buf: new(bytes.Buffer)}
	s, err := New(cfg, engine, slog.New(slog.NewJSONHandler(logs, nil)), reg, reg)
	if err != nil {
		t.Fatal(err)
	}
	handler := s.Handler()
	ts := httptest.NewServer(handler)
	t.Cleanup(ts.Close)

	send := func(method, target, auth string) (int, string, http.Header) {
		t.Helper()
		var body io.Reader
		u := ts.URL + target
		form := url.Values{"query": {labelsQuery}}.Encode()
		if method == http.MethodPost || method == http.MethodPut || method == http.MethodPatch {
			body = strings.NewReader(form)
		} else {
			u += "?" + form
		}
		req, err := http.NewRequest(method, u, body)
		if err != nil {
			t.Fatal(err)
		}
		if body != nil {
			req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
		}
		if auth != "" {
			req.Header.Set("Authorization", auth)
		}
		resp, err := ts.Client().Do(req)
		if err != nil {
			t.Fatal(err)
		}
		defer resp.Body.Close()
		b, _ := io.ReadAll(resp.Body)
		return resp.StatusCode, string(b), resp.Header
	}

	// The data: every label, as the right token gets them. Labels of eight
	// characters or more are distinctive enough to look for in other bodies.
	status, body, _ := send(http.MethodGet, "/sparql", "Bearer "+token)
	if status != http.StatusOK {
		t.Fatalf("the labels query with the right token: %d %s", status, body)
	}
	var labels []string
	for _, m := range regexp.MustCompile(`"value":"([^"]{8,})"`).FindAllStringSubmatch(body, -1) {
		labels = append(labels, m[1])
	}
	if len(labels) < 50 {
		t.Fatalf("only %d labels in the demo data: %.300s", len(labels), body)
	}
	leaks := func(body string) string {
		if strings.Contains(body, token) {
			return "the token"
		}
		for _, l := range labels {
			if strings.Contains(body, l) {
				return fmt.Sprintf("the data value %q", l)
			}
		}
		return ""
	}

	routes, ok := handler.(chi.Routes)
	if !ok {
		t.Fatalf("the handler is a %T, not a chi router", handler)
	}
	type route struct{ method, pattern string }
	var all []route
	err = chi.Walk(routes, func(method, pattern string, _ http.Handler, _ ...func(http.Handler) http.Handler) error {
		all = append(all, route{method, pattern})
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	assets := regexp.MustCompile(regexp.QuoteMeta(console.AssetPrefix) + `([A-Za-z0-9._-]+)`)
	_, page, _ := send(http.MethodGet, "/", "")
	asset := "missing.js"
	if m := assets.FindStringSubmatch(page); m != nil {
		asset = m[1]
	}

	auths := []struct{ name, header string }{
		{"no token", ""},
		{"wrong token", "Bearer " + strings.ToUpper(token)},
		{"right token", "Bearer " + token},
	}
	reachedBy := map[string]bool{}
	tried := 0
	for _, r := range all {
		target := strings.ReplaceAll(r.pattern, "{name}", asset)
		if strings.Contains(target, "{") || strings.Contains(target, "*") {
			t.Errorf("route %s %s has a parameter this test does not fill in", r.method, r.pattern)
			continue
		}
		for _, a := range auths {
			before := engine.reached.Load()
			status, body, header := send(r.method, target, a.header)
			tried++
			reached := engine.reached.Load() > before
			where := fmt.Sprintf("%s %s with %s: %d", r.method, target, a.name, status)
			switch {
			case reached && a.name != "right token":
				t.Errorf("%s reached the engine", where)
			case reached:
				reachedBy[target] = true
			}
			if a.name != "right token" || strings.HasSuffix(target, "z") || target == "/metrics" {
				if what := leaks(body); what != "" {
					t.Errorf("%s: the body holds %s", where, what)
				}
			} else if strings.Contains(body, token) {
				t.Errorf("%s: the body holds the token", where)
			}
			if reached || a.name == "right token" {
				continue
			}
			// Refused for want of the right token (RFC 6750 §3: 401 with a
			// challenge), or a route that needs none.
			if status == http.StatusUnauthorized && !strings.HasPrefix(header.Get("WWW-Authenticate"), "Bearer ") {
				t.Errorf("%s: no Bearer challenge: %q", where, header.Get("WWW-Authenticate"))
			}
			if status == http.StatusUnauthorized && r.method != http.MethodHead && !strings.Contains(body, "bearer token") {
				t.Errorf("%s: the refusal does not say a bearer token is needed: %q", where, body)
			}
		}
	}
	for _, target := range []string{"/sparql", "/explain"} {
		if !reachedBy[target] {
			t.Errorf("%s was not reached with the right token by any method", target)
		}
	}
	// The metrics, now that queries ran, and the log.
	for _, target := range []string{"/metrics", "/healthz", "/readyz"} {
		if _, body, _ := send(http.MethodGet, target, ""); leaks(body) != "" {
			t.Errorf("GET %s after the queries holds %s", target, leaks(body))
		}
	}
	ts.Close() // waits for every handler, and so for every line it logs
	logs.mu.Lock()
	logged := logs.buf.String()
	logs.mu.Unlock()
	if strings.Contains(logged, token) {
		t.Errorf("the log holds the token")
	}
	t.Logf("%d routes (method and pattern), %d requests; the right token reached the engine on %v", len(all), tried, reachedBy)
}
