package server

import (
	"context"
	"encoding/json"
	"encoding/xml"
	"net/url"
	"strconv"
	"strings"
	"testing"

	"veneer/catalog/rdf"
	"veneer/server/results"
)

// kindsAnswer answers by the query text: "ASK" a boolean true, "GRAPH" two
// triples, anything else three solutions.
func kindsAnswer(ctx context.Context, q Query) (*Answer, error) {
	switch q.Text {
	case "ASK":
		return &Answer{Kind: results.Boolean, Boolean: func() (bool, error) { return true, nil }}, nil
	case "GRAPH":
		ts := []rdf.Triple{
			{S: rdf.IRI("http://example.org/t1"), P: rdf.RDFType, O: rdf.IRI("http://example.org/Turbine")},
			{S: rdf.IRI("http://example.org/t1"), P: rdf.IRI("http://example.org/serial"), O: rdf.NewString("WT-1")},
		}
		return &Answer{Kind: results.Graph, Graph: &sliceTriples{ts: ts},
			Prefixes: []rdf.Prefix{{Name: "ex", IRI: "http://example.org/"}}}, nil
	}
	return rowsAnswer(3, -1)(ctx, q)
}

type sliceTriples struct {
	ts []rdf.Triple
	i  int
}

func (s *sliceTriples) Next() bool         { s.i++; return s.i <= len(s.ts) }
func (s *sliceTriples) Triple() rdf.Triple { return s.ts[s.i-1] }
func (s *sliceTriples) Err() error         { return nil }
func (s *sliceTriples) Close() error       { return nil }

func TestContentNegotiation(t *testing.T) {
	env := newEnv(t, DefaultConfig(), &fakeEngine{answer: kindsAnswer})
	browser := "text/html,application/xhtml+xml,application/xml;q=0.9,*/*;q=0.8"
	cases := []struct {
		query, accept, format string
		status                int
		ctype                 string
	}{
		// SELECT: the four result formats; JSON when there is no preference.
		{"SELECT", "", "", 200, "application/sparql-results+json"},
		{"SELECT", "*/*", "", 200, "application/sparql-results+json"},
		{"SELECT", browser, "", 200, "application/sparql-results+json"},
		{"SELECT", "application/sparql-results+xml", "", 200, "application/sparql-results+xml"},
		{"SELECT", "text/csv", "", 200, "text/csv; charset=utf-8"},
		{"SELECT", "text/tab-separated-values", "", 200, "text/tab-separated-values; charset=utf-8"},
		{"SELECT", "text/csv;q=0.5, application/sparql-results+xml;q=0.9", "", 200, "application/sparql-results+xml"},
		{"SELECT", "application/json", "", 200, "application/sparql-results+json"},
		{"SELECT", "text/turtle", "", 406, "text/plain; charset=utf-8"},
		// The format parameter wins over Accept.
		{"SELECT", "application/sparql-results+xml", "csv", 200, "text/csv; charset=utf-8"},
		{"SELECT", "", "text/tab-separated-values", 200, "text/tab-separated-values; charset=utf-8"},
		{"SELECT", "", "ttl", 400, "text/plain; charset=utf-8"},
		// ASK: JSON and XML only (SPARQL 1.1 CSV and TSV §1: tables of solutions).
		{"ASK", "", "", 200, "application/sparql-results+json"},
		{"ASK", "application/sparql-results+xml", "", 200, "application/sparql-results+xml"},
		{"ASK", "text/csv", "", 406, "text/plain; charset=utf-8"},
		// CONSTRUCT and DESCRIBE: Turtle by default, N-Triples, JSON-LD.
		{"GRAPH", "", "", 200, "text/turtle; charset=utf-8"},
		{"GRAPH", browser, "", 200, "text/turtle; charset=utf-8"},
		{"GRAPH", "application/n-triples", "", 200, "application/n-triples"},
		{"GRAPH", "application/ld+json", "", 200, "application/ld+json"},
		{"GRAPH", "", "jsonld", 200, "application/ld+json"},
		{"GRAPH", "application/sparql-results+json", "", 406, "text/plain; charset=utf-8"},
	}
	for _, c := range cases {
		path := "/sparql?query=" + url.QueryEscape(c.query)
		if c.format != "" {
			path += "&format=" + url.QueryEscape(c.format)
		}
		r := env.do(t, "GET", path, "", "Accept", c.accept)
		if r.status != c.status || r.header.Get("Content-Type") != c.ctype {
			t.Errorf("%s Accept %q format %q: %d %q, want %d %q; %s", c.query, c.accept, c.format,
				r.status, r.header.Get("Content-Type"), c.status, c.ctype, r.body)
		}
		if c.status == 200 && !strings.Contains(r.header.Get("Vary"), "Accept") {
			t.Errorf("%s Accept %q: no Vary: Accept", c.query, c.accept)
		}
	}
}

func TestAnswerBodies(t *testing.T) {
	env := newEnv(t, DefaultConfig(), &fakeEngine{answer: kindsAnswer})
	get := func(q, accept string) string {
		t.Helper()
		r := env.do(t, "GET", "/sparql?query="+url.QueryEscape(q), "", "Accept", accept)
		if r.status != 200 {
			t.Fatalf("%s %s: %d %s", q, accept, r.status, r.body)
		}
		return r.body
	}
	// SPARQL 1.1 Query Results JSON Format §3.3: an ASK answer.
	var ask struct {
		Boolean *bool `json:"boolean"`
	}
	if err := json.Unmarshal([]byte(get("ASK", "application/sparql-results+json")), &ask); err != nil || ask.Boolean == nil || !*ask.Boolean {
		t.Errorf("ASK JSON: %v %v", err, ask.Boolean)
	}
	// SPARQL Query Results XML Format §2.4: <boolean>true</boolean>.
	var askXML struct {
		Boolean string `xml:"boolean"`
	}
	if err := xml.Unmarshal([]byte(get("ASK", "application/sparql-results+xml")), &askXML); err != nil || askXML.Boolean != "true" {
		t.Errorf("ASK XML: %v %q", err, askXML.Boolean)
	}
	// The graph answer reads back as the same two triples in each format.
	for _, accept := range []string{"text/turtle", "application/n-triples"} {
		body := get("GRAPH", accept)
		doc, err := rdf.ParseTurtle("answer", []byte(body), "")
		if err != nil {
			t.Errorf("%s answer does not parse: %v\n%s", accept, err, body)
			continue
		}
		if len(doc.Statements) != 2 || doc.Statements[1].O != rdf.NewString("WT-1") {
			t.Errorf("%s answer: %v", accept, doc.Statements)
		}
	}
	var nodes []map[string]any
	if err := json.Unmarshal([]byte(get("GRAPH", "application/ld+json")), &nodes); err != nil || len(nodes) != 1 || nodes[0]["@id"] != "http://example.org/t1" {
		t.Errorf("JSON-LD answer: %v %v", err, nodes)
	}
	// CSV: header and three rows, CRLF line ends (SPARQL 1.1 CSV and TSV §2).
	if got := get("SELECT", "text/csv"); got != "x\r\nv1\r\nv2\r\nv3\r\n" {
		t.Errorf("CSV answer %q", got)
	}
}

func TestFailureAfterStreamingAbortsTheBody(t *testing.T) {
	// 5000 rows flush part of the document before the cursor fails: the client
	// must see a broken transfer, never a well-formed but truncated result.
	env := newEnv(t, DefaultConfig(), &fakeEngine{answer: rowsAnswer(10000, 5000)})
	r := env.do(t, "GET", "/sparql?query=x", "")
	if r.err == nil {
		t.Fatalf("read %d bytes without error; the body should have been aborted", len(r.body))
	}
	if r.status != 200 || json.Valid([]byte(r.body)) || !strings.Contains(r.body, `"v4000"`) {
		t.Errorf("status %d, %d bytes; want 200 and a part of the document, not all of it", r.status, len(r.body))
	}
	if m := env.metric(t, "veneer_stream_failures_total"); m != "veneer_stream_failures_total 1" {
		t.Errorf("stream failure not counted: %q", m)
	}
	if m := env.metric(t, `veneer_http_requests_total{format="json",route="sparql",status="0"}`); !strings.HasSuffix(m, " 1") {
		t.Errorf("aborted request not counted with status 0: %q", m)
	}
	if !strings.Contains(env.logs(), "connection reset by database") {
		t.Errorf("the failure is not in the log:\n%s", env.logs())
	}
}

func TestFailureBeforeStreamingIsAProperError(t *testing.T) {
	// A failure within the rows held back gets a status and a message, and the
	// message keeps the internals (an address) out.
	env := newEnv(t, DefaultConfig(), &fakeEngine{answer: rowsAnswer(100, 10)})
	r := env.do(t, "GET", "/sparql?query=x", "")
	if r.status != 500 || strings.Contains(r.body, "10.1.2.3") || !strings.Contains(r.body, "internal error") {
		t.Errorf("status %d body %q; want 500 without the cause", r.status, r.body)
	}
	if !strings.Contains(env.logs(), "10.1.2.3") {
		t.Errorf("the cause is not in the log")
	}
}

func TestRowLimit(t *testing.T) {
	cases := []struct {
		name      string
		max, rows int
		status    int
		complete  bool
	}{
		{"under", 100, 99, 200, true},
		{"exactly", 100, 100, 200, true},
		// Over the limit within the held-back rows: refused before any byte.
		{"over, early", 100, 101, 413, false},
		// Over the limit after streaming began: the body is aborted.
		{"over, late", 1000, 1001, 200, false},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			cfg := DefaultConfig()
			cfg.Limits.MaxRows = int64(c.max)
			env := newEnv(t, cfg, &fakeEngine{answer: rowsAnswer(c.rows, -1)})
			r := env.do(t, "GET", "/sparql?query=x", "")
			if r.status != c.status {
				t.Fatalf("status %d, want %d: %.200s", r.status, c.status, r.body)
			}
			if c.complete {
				var doc struct {
					Results struct{ Bindings []any }
				}
				if err := json.Unmarshal([]byte(r.body), &doc); err != nil || len(doc.Results.Bindings) != c.rows {
					t.Errorf("want all %d rows: %v, %d", c.rows, err, len(doc.Results.Bindings))
				}
				return
			}
			if c.status == 413 && !strings.Contains(r.body, "more than 100 solutions") {
				t.Errorf("message %q does not explain the limit", r.body)
			}
			if c.status == 200 && (r.err == nil || json.Valid([]byte(r.body))) {
				t.Errorf("an answer over the limit read as complete (read error %v)", r.err)
			}
			if m := env.metric(t, "veneer_row_limit_exceeded_total"); m != "veneer_row_limit_exceeded_total 1" {
				t.Errorf("not counted: %q", m)
			}
		})
	}
}

// TestWholeAnswersCarryTheirLength checks that an answer whole within the
// rows the server holds back goes out with its Content-Length (one write the
// client has at once), and that a longer one streams without it.
func TestWholeAnswersCarryTheirLength(t *testing.T) {
	for _, c := range []struct {
		rows   int
		length bool
	}{{3, true}, {holdRows + 1, false}} {
		env := newEnv(t, DefaultConfig(), &fakeEngine{answer: rowsAnswer(c.rows, -1)})
		r := env.do(t, "GET", "/sparql?query=q", "", "Accept", "text/csv")
		got := r.header.Get("Content-Length")
		switch {
		case r.status != 200:
			t.Errorf("%d rows: status %d", c.rows, r.status)
		case c.length && got != strconv.Itoa(len(r.body)):
			t.Errorf("%d rows: Content-Length %q for a body of %d bytes", c.rows, got, len(r.body))
		case !c.length && got != "":
			t.Errorf("%d rows: Content-Length %q on a streamed answer", c.rows, got)
		}
		if n := strings.Count(r.body, "\n"); n != c.rows+1 {
			t.Errorf("%d rows: %d lines in the CSV body, want %d", c.rows, n, c.rows+1)
		}
	}
}
