package server

import (
	"context"
	"errors"
	"net/url"
	"slices"
	"strings"
	"testing"
	"time"

	"veneer/catalog/rdf"
	"veneer/rewrite/exec"
)

func TestProtocolRequestForms(t *testing.T) {
	// SPARQL 1.1 Protocol §2.1.1–§2.1.3: query via GET, POST form-encoded and
	// POST directly; §2.1.4: default-graph-uri and named-graph-uri, any number
	// of each, in the URL (GET and direct POST) or in the form.
	const q = "SELECT ?x WHERE { ?x ?p ?o }"
	g1, g2, g3 := "http://example.org/g1", "http://example.org/g2", "http://example.org/g3"
	dataset := "default-graph-uri=" + url.QueryEscape(g1) + "&default-graph-uri=" + url.QueryEscape(g2) +
		"&named-graph-uri=" + url.QueryEscape(g3)
	cases := []struct {
		name, method, path, body string
		headers                  []string
		defaults, named          []rdf.IRI
	}{
		{name: "GET", method: "GET", path: "/sparql?query=" + url.QueryEscape(q)},
		{name: "GET with dataset", method: "GET", path: "/sparql?query=" + url.QueryEscape(q) + "&" + dataset,
			defaults: []rdf.IRI{rdf.IRI(g1), rdf.IRI(g2)}, named: []rdf.IRI{rdf.IRI(g3)}},
		{name: "POST form", method: "POST", path: "/sparql", body: "query=" + url.QueryEscape(q),
			headers: []string{"Content-Type", "application/x-www-form-urlencoded"}},
		{name: "POST form, dataset in body and URL", method: "POST",
			path: "/sparql?named-graph-uri=" + url.QueryEscape(g3),
			body: "query=" + url.QueryEscape(q) + "&default-graph-uri=" + url.QueryEscape(g1),
			// The charset parameter, when UTF-8, is fine.
			headers:  []string{"Content-Type", "application/x-www-form-urlencoded; charset=UTF-8"},
			defaults: []rdf.IRI{rdf.IRI(g1)}, named: []rdf.IRI{rdf.IRI(g3)}},
		{name: "POST direct", method: "POST", path: "/sparql", body: q,
			headers: []string{"Content-Type", "application/sparql-query"}},
		{name: "POST direct with dataset", method: "POST", path: "/sparql?" + dataset, body: q,
			headers:  []string{"Content-Type", "application/sparql-query; charset=utf-8"},
			defaults: []rdf.IRI{rdf.IRI(g1), rdf.IRI(g2)}, named: []rdf.IRI{rdf.IRI(g3)}},
	}
	e := &fakeEngine{answer: rowsAnswer(2, -1)}
	env := newEnv(t, DefaultConfig(), e)
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			r := env.do(t, c.method, c.path, c.body, c.headers...)
			if r.status != 200 {
				t.Fatalf("status %d: %s", r.status, r.body)
			}
			got := e.last()
			if got.Text != q {
				t.Errorf("engine got %q", got.Text)
			}
			if !slices.Equal(got.DefaultGraphs, c.defaults) || !slices.Equal(got.NamedGraphs, c.named) {
				t.Errorf("dataset %v / %v, want %v / %v", got.DefaultGraphs, got.NamedGraphs, c.defaults, c.named)
			}
			if want := env.ts.URL + "/sparql"; got.Base != want {
				t.Errorf("base %q, want %q", got.Base, want)
			}
			if !strings.Contains(r.body, `"vars":["x"]`) {
				t.Errorf("body %s", r.body)
			}
		})
	}
}

func TestProtocolErrors(t *testing.T) {
	syntax := &exec.Error{Kind: exec.BadQuery, Err: errors.New("line 1, column 9: expected a variable")}
	e := &fakeEngine{answer: func(ctx context.Context, q Query) (*Answer, error) {
		if q.Text == "SELECT" {
			return nil, syntax
		}
		return rowsAnswer(1, -1)(ctx, q)
	}}
	cfg := DefaultConfig()
	cfg.Limits.MaxQueryBytes = 100
	cfg.Limits.MaxBodyBytes = 200
	env := newEnv(t, cfg, e)
	form := []string{"Content-Type", "application/x-www-form-urlencoded"}
	direct := []string{"Content-Type", "application/sparql-query"}
	cases := []struct {
		name, method, path, body string
		headers                  []string
		status                   int
		want                     string // in the body
	}{
		{"syntax error from the engine", "GET", "/sparql?query=SELECT", "", nil, 400, "line 1, column 9"},
		// SPARQL 1.1 Protocol §2.1.4: exactly one query parameter.
		{"no query in the form", "POST", "/sparql", "other=1", form, 400, `no "query" parameter`},
		{"two queries", "GET", "/sparql?query=a&query=b", "", nil, 400, "exactly one"},
		{"form POST with the query in the URL", "POST", "/sparql?query=a", "default-graph-uri=http://e/", form, 400, "in its body"},
		{"direct POST with a query in the URL too", "POST", "/sparql?query=a", "SELECT", direct, 400, "query parameter too"},
		// §2.1.2, §2.1.3: the two POST media types; others are 415.
		{"unknown body type", "POST", "/sparql", "ASK {}", []string{"Content-Type", "text/plain"}, 415, "Content-Type text/plain"},
		{"no body type", "POST", "/sparql", "query=ASK%20%7B%7D", nil, 415, "Content-Type"},
		{"UTF-16", "POST", "/sparql", "ASK {}", []string{"Content-Type", "application/sparql-query; charset=UTF-16"}, 415, "UTF-8"},
		{"PUT", "PUT", "/sparql?query=ASK%7B%7D", "", nil, 405, "GET or POST"},
		{"DELETE on explain", "DELETE", "/explain?query=ASK%7B%7D", "", nil, 405, "GET or POST"},
		// §2.2: update operations; this endpoint is read-only.
		{"update by GET", "GET", "/sparql?update=CLEAR%20ALL", "", nil, 403, "read-only"},
		{"update by form", "POST", "/sparql", "update=CLEAR+ALL", form, 403, "read-only"},
		{"update direct", "POST", "/sparql", "CLEAR ALL", []string{"Content-Type", "application/sparql-update"}, 403, "read-only"},
		{"query not UTF-8", "POST", "/sparql", "ASK { \xff }", direct, 400, "not UTF-8"},
		{"graph IRI not absolute", "GET", "/sparql?query=ASK%7B%7D&default-graph-uri=g1", "", nil, 400, "not an absolute IRI"},
		{"graph IRI with a space", "GET", "/sparql?query=ASK%7B%7D&named-graph-uri=http://e/a%20b", "", nil, 400, "not an absolute IRI"},
		{"bad timeout", "GET", "/sparql?query=ASK%7B%7D&timeout=soon", "", nil, 400, "timeout"},
		{"negative timeout", "GET", "/sparql?query=ASK%7B%7D&timeout=-1", "", nil, 400, "positive"},
		{"query too long", "POST", "/sparql", strings.Repeat("#", 101), direct, 413, "at most 100"},
		{"body too big", "POST", "/sparql", strings.Repeat("#", 201), direct, 413, "over 200 bytes"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			r := env.do(t, c.method, c.path, c.body, c.headers...)
			if r.status != c.status || !strings.Contains(r.body, c.want) {
				t.Errorf("status %d body %q; want %d containing %q", r.status, r.body, c.status, c.want)
			}
			if ct := r.header.Get("Content-Type"); !strings.HasPrefix(ct, "text/plain") {
				t.Errorf("Content-Type %q; errors are plain text", ct)
			}
			if c.status == 405 && r.header.Get("Allow") != "GET, POST" {
				t.Errorf("405 without Allow: GET, POST (RFC 9110 §15.5.6)")
			}
		})
	}
}

func TestParseTimeout(t *testing.T) {
	cases := []struct {
		in   string
		want time.Duration
		ok   bool
	}{
		{"5", 5 * time.Second, true},
		{"0.25", 250 * time.Millisecond, true},
		{"500ms", 500 * time.Millisecond, true},
		{"2s", 2 * time.Second, true},
		{"1e400", 0, false},
		{"1e30", 1e9 * time.Second, true},
		{"0", 0, false},
		{"NaN", 0, false},
		{"", 0, false},
	}
	for _, c := range cases {
		got, err := parseTimeout(c.in)
		if (err == nil) != c.ok || c.ok && got != c.want {
			t.Errorf("parseTimeout(%q) = %v, %v; want %v, ok %v", c.in, got, err, c.want, c.ok)
		}
	}
}
