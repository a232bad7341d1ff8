package console

import (
	"net/http/httptest"
	"strings"
	"testing"
)

func TestPage(t *testing.T) {
	c, err := New(Options{Title: "Wind farm", Endpoint: "sparql", Explain: "explain",
		Examples: []Example{{Name: "Large turbines", Query: "SELECT ?t { ?t ?p \"<b>\" }"}}})
	if err != nil {
		t.Fatal(err)
	}
	w := httptest.NewRecorder()
	c.ServePage(w, httptest.NewRequest("GET", "/", nil))
	body := w.Body.String()
	for _, want := range []string{"<title>Wind farm · SPARQL</title>", `data-endpoint="sparql"`, `data-explain="explain"`,
		`href="console/app.css"`, `"name":"Large turbines"`, `\u003cb\u003e`} {
		if !strings.Contains(body, want) {
			t.Errorf("page lacks %q", want)
		}
	}
	if csp := w.Header().Get("Content-Security-Policy"); !strings.Contains(csp, "script-src 'self'") {
		t.Errorf("Content-Security-Policy %q", csp)
	}
	w = httptest.NewRecorder()
	c.ServePage(w, httptest.NewRequest("HEAD", "/", nil))
	if w.Body.Len() != 0 || w.Header().Get("Content-Length") == "" {
		t.Errorf("HEAD: %d bytes, Content-Length %q", w.Body.Len(), w.Header().Get("Content-Length"))
	}
}

func TestAssets(t *testing.T) {
	c, err := New(Options{})
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name   string
		status int
		ctype  string
	}{
		{"app.js", 200, "text/javascript; charset=utf-8"},
		{"app.css", 200, "text/css; charset=utf-8"},
		{"index.html", 404, "text/plain; charset=utf-8"},
		{"../console.go", 404, "text/plain; charset=utf-8"},
	}
	for _, cs := range cases {
		w := httptest.NewRecorder()
		c.ServeAsset(w, httptest.NewRequest("GET", "/console/"+cs.name, nil), cs.name)
		if w.Code != cs.status || w.Header().Get("Content-Type") != cs.ctype {
			t.Errorf("%s: %d %q", cs.name, w.Code, w.Header().Get("Content-Type"))
		}
	}
	// Without examples the page offers a first query of its own.
	w := httptest.NewRecorder()
	c.ServePage(w, httptest.NewRequest("GET", "/", nil))
	if !strings.Contains(w.Body.String(), "LIMIT 10") {
		t.Errorf("no default example")
	}
}
