package server

import (
	"strings"
	"testing"

	"veneer/catalog/rdf"
)

// sdObjects returns the objects of the triples with predicate p in a parsed
// service description.
func sdObjects(doc *rdf.Document, p rdf.IRI) []rdf.Term {
	var out []rdf.Term
	for _, st := range doc.Statements {
		if st.P == p {
			out = append(out, st.O)
		}
	}
	return out
}

func TestServiceDescription(t *testing.T) {
	plain := newEnv(t, DefaultConfig(), &fakeEngine{answer: kindsAnswer})
	trusting := newEnv(t, func() Config { c := DefaultConfig(); c.TrustForwarded = true; return c }(), &fakeEngine{answer: kindsAnswer})
	forwarded := []string{"X-Forwarded-Proto", "https", "X-Forwarded-Host", "sparql.windfarm.example, inner.proxy",
		"X-Forwarded-Prefix", "/maintenance"}
	cases := []struct {
		name     string
		env      *env
		headers  []string
		ctype    string
		parse    func(name string, src []byte) (*rdf.Document, error)
		endpoint string // "" for the test server's own URL
	}{
		{name: "no Accept: Turtle", env: plain, ctype: "text/turtle; charset=utf-8", parse: turtle},
		{name: "Turtle", env: plain, headers: []string{"Accept", "text/turtle"}, ctype: "text/turtle; charset=utf-8", parse: turtle},
		{name: "N-Triples", env: plain, headers: []string{"Accept", "application/n-triples"}, ctype: "application/n-triples", parse: rdf.ParseNTriples},
		{name: "N-Quads", env: plain, headers: []string{"Accept", "application/n-quads"}, ctype: "application/n-quads", parse: rdf.ParseNQuads},
		{name: "RDF client with weights", env: plain, headers: []string{"Accept", "text/turtle;q=0.5, application/n-triples;q=0.9, text/html;q=0.1"},
			ctype: "application/n-triples", parse: rdf.ParseNTriples},
		// sd:endpoint is the URL as requested: the Host header decides the authority.
		{name: "other host", env: plain, headers: []string{"Host", "veneer.internal:8080"}, ctype: "text/turtle; charset=utf-8", parse: turtle,
			endpoint: "http://veneer.internal:8080/sparql"},
		// X-Forwarded-* only count when the server is told to trust them.
		{name: "forwarded, not trusted", env: plain, headers: forwarded, ctype: "text/turtle; charset=utf-8", parse: turtle},
		{name: "forwarded, trusted", env: trusting, headers: forwarded, ctype: "text/turtle; charset=utf-8", parse: turtle,
			endpoint: "https://sparql.windfarm.example/maintenance/sparql"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			r := c.env.do(t, "GET", "/sparql", "", c.headers...)
			if r.status != 200 || r.header.Get("Content-Type") != c.ctype {
				t.Fatalf("%d %q, want 200 %q: %s", r.status, r.header.Get("Content-Type"), c.ctype, r.body)
			}
			doc, err := c.parse("sd", []byte(r.body))
			if err != nil {
				t.Fatalf("the description does not parse: %v\n%s", err, r.body)
			}
			want := c.endpoint
			if want == "" {
				want = c.env.ts.URL + "/sparql"
			}
			// SPARQL 1.1 Service Description test suite, has-endpoint-triple:
			// an sd:endpoint triple whose object is the endpoint's URL.
			if got := sdObjects(doc, sdNS+"endpoint"); len(got) != 1 || got[0] != rdf.IRI(want) {
				t.Errorf("sd:endpoint %v, want <%s>", got, want)
			}
			if got := sdObjects(doc, rdf.RDFType); !containsTerm(got, rdf.IRI(sdNS+"Service")) {
				t.Errorf("no sd:Service in %v", got)
			}
			if got := sdObjects(doc, sdNS+"supportedLanguage"); !containsTerm(got, rdf.IRI(sdNS+"SPARQL11Query")) {
				t.Errorf("supportedLanguage %v", got)
			}
			if got := sdObjects(doc, sdNS+"resultFormat"); len(got) != 7 || !containsTerm(got, rdf.IRI(formatsNS+"SPARQL_Results_JSON")) {
				t.Errorf("resultFormat %v", got)
			}
			if !strings.Contains(r.header.Get("Vary"), "Accept") {
				t.Errorf("no Vary: Accept")
			}
		})
	}
	t.Run("browser gets the query page", func(t *testing.T) {
		r := plain.do(t, "GET", "/sparql", "", "Accept", "text/html,application/xhtml+xml,application/xml;q=0.9,*/*;q=0.8")
		if r.status != 200 || r.header.Get("Content-Type") != "text/html; charset=utf-8" || !strings.Contains(r.body, "<textarea") {
			t.Errorf("%d %q", r.status, r.header.Get("Content-Type"))
		}
	})
	t.Run("nothing acceptable", func(t *testing.T) {
		if r := plain.do(t, "GET", "/sparql", "", "Accept", "image/png"); r.status != 406 {
			t.Errorf("status %d, want 406", r.status)
		}
	})
}

func turtle(name string, src []byte) (*rdf.Document, error) { return rdf.ParseTurtle(name, src, "") }

func containsTerm(ts []rdf.Term, x rdf.Term) bool {
	for _, t := range ts {
		if t == x {
			return true
		}
	}
	return false
}

func TestPreferredMedia(t *testing.T) {
	offers := []string{"text/turtle", "application/n-triples", "text/html"}
	cases := []struct {
		accept, want string
		ok           bool
	}{
		{"", "text/turtle", true},
		{"*/*", "text/turtle", true},
		{"garbage;;", "text/turtle", true},
		{"text/html", "text/html", true},
		{"text/*", "text/turtle", true},
		{"text/*;q=0.5, text/html", "text/html", true},
		// The most specific range decides (RFC 9110 §12.5.1): text/turtle;q=0
		// rules Turtle out even though text/* admits it.
		{"text/turtle;q=0, text/*", "text/html", true},
		{"application/n-triples;q=0.2, */*;q=0.1", "application/n-triples", true},
		{"image/png", "", false},
		{"*/*;q=0", "", false},
	}
	for _, c := range cases {
		got, ok := preferredMedia(c.accept, offers)
		if got != c.want || ok != c.ok {
			t.Errorf("preferredMedia(%q) = %q, %v; want %q, %v", c.accept, got, ok, c.want, c.ok)
		}
	}
}
