package main

import (
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"net/http/httptest"
	"net/url"
	"regexp"
	"slices"
	"strings"
	"sync"
	"testing"
	"time"
)

// fakeEndpoint is a SPARQL endpoint on loopback that answers every query with
// canned vendor names for turbine IRIs. It reads the VALUES rows veneer sends
// (lines "(<iri> n)") and answers each row whose IRI it knows, with the row's
// number, as SPARQL 1.1 Query Results JSON (W3C Recommendation 2013, §3).
type fakeEndpoint struct {
	vendors map[string]string // by turbine IRI
	mu      sync.Mutex
	queries []string
}

var valuesRow = regexp.MustCompile(`\(<([^>]*)> (\d+)\)`)

func (f *fakeEndpoint) ServeHTTP(w http.ResponseWriter, r *http.Request) {
	// What veneer must send: SPARQL 1.1 Protocol §2.1.2 (query via URL-encoded
	// POST) and the JSON results media type.
	if r.Method != http.MethodPost || r.Header.Get("Content-Type") != "application/x-www-form-urlencoded" ||
		r.Header.Get("Accept") != "application/sparql-results+json" {
		http.Error(w, "unexpected request", http.StatusBadRequest)
		return
	}
	q := r.FormValue("query")
	f.mu.Lock()
	f.queries = append(f.queries, q)
	f.mu.Unlock()
	var rows []string
	for _, m := range valuesRow.FindAllStringSubmatch(q, -1) {
		if v, ok := f.vendors[m[1]]; ok {
			rows = append(rows, fmt.Sprintf(`{"t":{"type":"uri","value":%q},"vendor":{"type":"literal","value":%q,"xml:lang":"en"},"veneer_row":{"type":"literal","value":%q,"datatype":"http://www.w3.org/2001/XMLSchema#integer"}}`, m[1], v, m[2]))
		}
	}
	w.Header().Set("Content-Type", "application/sparql-results+json")
	fmt.Fprintf(w, `{"head":{"vars":["t","vendor","veneer_row"]},"results":{"bindings":[%s]}}`, strings.Join(rows, ","))
}

// postQuery sends a query to veneer and returns the status and body.
func postQuery(t *testing.T, endpoint, query string) (int, []byte) {
	t.Helper()
	resp, err := http.PostForm(endpoint, url.Values{"query": {query}})
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	body, _ := io.ReadAll(resp.Body)
	return resp.StatusCode, body
}

// allow lets veneer call the given endpoints, with optional limits.
func allow(timeout time.Duration, maxBytes int64, iris ...string) func(*config) {
	return func(c *config) {
		c.Service.Allow = iris
		if timeout > 0 {
			c.Service.Timeout = timeout
		}
		if maxBytes > 0 {
			c.Service.MaxBytes = maxBytes
		}
	}
}

const vendorQuery = prefixes + `SELECT ?s ?vendor WHERE {
	?t wf:serialNumber ?s .
	SERVICE <%s> { ?t <https://vocab.veneer.example/supply#vendor> ?vendor } }`

// TestServiceJoin joins local turbines with vendor names a remote endpoint
// answers; the expected rows are the canned ones (common practice for a bind
// join test, no external source).
func TestServiceJoin(t *testing.T) {
	fake := &fakeEndpoint{vendors: map[string]string{}}
	remote := httptest.NewServer(fake)
	defer remote.Close()
	endpoint := startDemo(t, allow(0, 0, remote.URL))
	_, turbines := sparqlJSON(t, endpoint, prefixes+`SELECT ?t ?s WHERE { ?t wf:serialNumber ?s } ORDER BY ?s`)
	if len(turbines) < 3 {
		t.Fatalf("the demo has %d turbines; the check needs 3", len(turbines))
	}
	var want []string
	for i, tb := range turbines[:2] {
		v := fmt.Sprintf("vendor %d", i)
		fake.vendors[tb["t"].Value] = v
		want = append(want, tb["s"].Value+" "+v+"@en")
	}
	_, got := sparqlJSON(t, endpoint, fmt.Sprintf(vendorQuery, remote.URL))
	var rows []string
	for _, b := range got {
		rows = append(rows, b["s"].Value+" "+b["vendor"].Value+"@"+b["vendor"].Lang)
	}
	slices.Sort(rows)
	if !slices.Equal(rows, want) {
		t.Errorf("got %q, want %q", rows, want)
	}
	// Every turbine went along as a VALUES row, 64 rows a call at most.
	calls := (len(turbines) + serviceBatchForTest - 1) / serviceBatchForTest
	if len(fake.queries) != calls {
		t.Errorf("%d calls for %d turbines, want %d", len(fake.queries), len(turbines), calls)
	}
	sent := 0
	for _, q := range fake.queries {
		sent += len(valuesRow.FindAllString(q, -1))
	}
	if sent != len(turbines) {
		t.Errorf("%d VALUES rows sent, want %d", sent, len(turbines))
	}
}

// serviceBatchForTest is the batch size of SERVICE calls in rewrite/exec.
const serviceBatchForTest = 64

// TestServiceRefused checks the errors of SERVICE veneer will not call.
func TestServiceRefused(t *testing.T) {
	remote := httptest.NewServer(&fakeEndpoint{})
	defer remote.Close()
	off := startDemo(t, nil)
	on := startDemo(t, allow(0, 0, remote.URL+"/other"))
	for _, c := range []struct {
		name, endpoint, query string
		want                  []string
	}{
		{"off by default", off, fmt.Sprintf(vendorQuery, remote.URL), []string{remote.URL, "service.allow", "--service-allow", "VENEER_SERVICE_ALLOW"}},
		// The allowlist compares whole IRIs: a prefix of a listed one is not listed.
		{"not listed", on, fmt.Sprintf(vendorQuery, remote.URL), []string{remote.URL, "not listed"}},
		{"variable endpoint", on, prefixes + `SELECT * WHERE { ?t wf:serialNumber ?s . SERVICE ?e { ?t ?p ?o } }`, []string{"SERVICE with a variable endpoint"}},
	} {
		status, body := postQuery(t, c.endpoint, c.query)
		if status != http.StatusBadRequest {
			t.Errorf("%s: status %d, want 400: %s", c.name, status, body)
		}
		for _, w := range c.want {
			if !strings.Contains(string(body), w) {
				t.Errorf("%s: the error %q does not name %q", c.name, body, w)
			}
		}
	}
}

// TestServiceFailures checks calls that fail, with and without SILENT.
func TestServiceFailures(t *testing.T) {
	var hitsElsewhere int
	var mu sync.Mutex
	elsewhere := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		mu.Lock()
		hitsElsewhere++
		mu.Unlock()
		(&fakeEndpoint{}).ServeHTTP(w, r)
	}))
	defer elsewhere.Close()
	mux := http.NewServeMux()
	mux.HandleFunc("/error", func(w http.ResponseWriter, r *http.Request) { http.Error(w, "broken", http.StatusInternalServerError) })
	mux.HandleFunc("/redirect", func(w http.ResponseWriter, r *http.Request) {
		http.Redirect(w, r, elsewhere.URL, http.StatusTemporaryRedirect)
	})
	mux.HandleFunc("/large", func(w http.ResponseWriter, r *http.Request) {
		fmt.Fprintf(w, `{"head":{"vars":[]},"results":{"bindings":[%s{}]}}`, strings.Repeat("{},", 1000))
	})
	mux.HandleFunc("/malformed", func(w http.ResponseWriter, r *http.Request) { fmt.Fprint(w, `{"head":`) })
	mux.HandleFunc("/slow", func(w http.ResponseWriter, r *http.Request) {
		io.Copy(io.Discard, r.Body) // so that the server sees the client hang up
		select {
		case <-r.Context().Done():
		case <-time.After(2 * time.Second):
		}
	})
	remote := httptest.NewServer(mux)
	defer remote.Close()
	var iris []string
	for _, p := range []string{"/error", "/redirect", "/large", "/malformed", "/slow"} {
		iris = append(iris, remote.URL+p)
	}
	endpoint := startDemo(t, allow(300*time.Millisecond, 1000, iris...))
	_, turbines := sparqlJSON(t, endpoint, prefixes+`SELECT ?t WHERE { ?t wf:serialNumber ?s }`)
	for _, c := range []struct {
		path   string
		status int
		want   string
	}{
		{"/error", http.StatusBadGateway, "status 500"},
		// No redirect is followed, to another host or at all.
		{"/redirect", http.StatusBadGateway, "redirect"},
		{"/large", http.StatusRequestEntityTooLarge, "larger than 1000 bytes"},
		{"/malformed", http.StatusBadGateway, "malformed"},
		{"/slow", http.StatusBadGateway, "did not answer within 300ms"},
	} {
		status, body := postQuery(t, endpoint, fmt.Sprintf(vendorQuery, remote.URL+c.path))
		if status != c.status || !strings.Contains(string(body), c.want) {
			t.Errorf("%s: status %d %s, want %d and %q", c.path, status, body, c.status, c.want)
		}
		// SPARQL 1.1 Federated Query §4: with SILENT, a failed call is
		// ignored and SERVICE answers the single empty solution, so every
		// local solution stays, without ?vendor.
		silent := strings.Replace(fmt.Sprintf(vendorQuery, remote.URL+c.path), "SERVICE", "SERVICE SILENT", 1)
		status, body = postQuery(t, endpoint, silent)
		var doc struct {
			Results struct {
				Bindings []map[string]binding `json:"bindings"`
			} `json:"results"`
		}
		if status != http.StatusOK || json.Unmarshal(body, &doc) != nil {
			t.Errorf("%s SILENT: status %d %s", c.path, status, body)
			continue
		}
		if len(doc.Results.Bindings) != len(turbines) {
			t.Errorf("%s SILENT: %d solutions, want the %d local ones", c.path, len(doc.Results.Bindings), len(turbines))
		}
		for _, b := range doc.Results.Bindings {
			if _, bound := b["vendor"]; bound {
				t.Errorf("%s SILENT: ?vendor is bound: %v", c.path, b)
				break
			}
		}
	}
	if hitsElsewhere != 0 {
		t.Errorf("the redirect target was called %d times", hitsElsewhere)
	}
}
