package main

import (
	"context"
	"database/sql"
	"encoding/json"
	"encoding/xml"
	"fmt"
	"io"
	"mime"
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
	"unicode/utf16"

	"veneer/catalog"
	"veneer/catalog/r2rml"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/cmd/veneer/demo"
	"veneer/conformance"
	"veneer/server/console"
)

// The W3C SPARQL 1.1 protocol and service-description tests, run over HTTP
// against a live veneer. The manifests describe each test's requests and
// expected responses in RDF (the ht: HTTP vocabulary); the harness reads them
// from the suite and never lists tests or answers of its own. Tests without
// ut:graphData run against the demo; those with it against a server over a
// throw-away SQLite table holding the test's graphs, mapped to named graphs
// by R2RML.

// Vocabularies of the protocol manifest.
const (
	mfNS  = "http://www.w3.org/2001/sw/DataAccess/tests/test-manifest#"
	htNS  = "http://www.w3.org/2011/http#"
	htsNS = "http://www.w3.org/2011/http-statusCodes#"
	cntNS = "http://www.w3.org/2011/content#"
	utNS  = "http://www.w3.org/2009/sparql/tests/test-update#"
	sdNS  = "http://www.w3.org/ns/sparql-service-description#"
)

// w3cDir returns the directory of the W3C suites: $VENEER_W3C, or
// ../shared/w3c beside the repository.
func w3cDir(t *testing.T) string {
	t.Helper()
	dir := os.Getenv("VENEER_W3C")
	if dir == "" {
		dir = filepath.Join("..", "..", "..", "shared", "w3c")
	}
	if _, err := os.Stat(dir); err != nil {
		if os.Getenv("CI") == "true" {
			t.Fatalf("the W3C suites are not at %s: %v", dir, err)
		}
		t.Skipf("no W3C suites: %v", err)
	}
	return dir
}

// startServer serves the catalog load builds over src and returns the
// endpoint URL; the server stops when the test ends.
func startServer(t *testing.T, src source.Source, load func(context.Context) (*catalog.Catalog, error), edit func(*config)) string {
	t.Helper()
	ctx, cancel := context.WithCancel(context.Background())
	cfg := defaultConfig()
	cfg.Listen = "127.0.0.1:0"
	cfg.Log.Level = "warn"
	if edit != nil {
		edit(&cfg)
	}
	addrc, done := make(chan string, 1), make(chan error, 1)
	go func() {
		done <- serve(ctx, &cfg, src, load, console.Options{}, testLog{t}, func(a string) { addrc <- a })
	}()
	t.Cleanup(func() {
		cancel()
		if err := <-done; err != nil {
			t.Errorf("server stopped with %v", err)
		}
	})
	select {
	case addr := <-addrc:
		return "http://" + addr + "/sparql"
	case err := <-done:
		t.Fatalf("server did not start: %v", err)
	case <-time.After(60 * time.Second):
		t.Fatal("server did not start within 60s")
	}
	return ""
}

// startDemo serves the demo database.
func startDemo(t *testing.T, edit func(*config)) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "windfarm.db")
	if err := demo.BuildSQLite(context.Background(), path); err != nil {
		t.Fatal(err)
	}
	src, err := source.Open(context.Background(), "sqlite:"+path)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { src.Close() })
	return startServer(t, src, demoCatalog, edit)
}

// quadMapping maps a table of quads (s, p, o, g: IRIs) to RDF, each row a
// triple in the named graph g.
const quadMapping = `@prefix rr: <http://www.w3.org/ns/r2rml#> .
<http://veneer.example/test/quads> rr:logicalTable [ rr:tableName "quads" ] ;
  rr:subjectMap [ rr:column "s" ; rr:graphMap [ rr:column "g" ] ] ;
  rr:predicateObjectMap [ rr:predicateMap [ rr:column "p" ] ; rr:objectMap [ rr:column "o" ; rr:termType rr:IRI ] ] .
`

// startGraphData serves the test's ut:graphData: each file's triples in the
// named graph its rdfs:label names.
func startGraphData(t *testing.T, m *conformance.Manifest, test rdf.Term) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), "graphs.db")
	db, err := sql.Open("sqlite", path)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	if _, err := db.Exec(`CREATE TABLE quads (s TEXT NOT NULL, p TEXT NOT NULL, o TEXT NOT NULL, g TEXT NOT NULL)`); err != nil {
		t.Fatal(err)
	}
	for _, gd := range m.Objects(test, utNS+"graphData") {
		file, err := m.File(gd, utNS+"graph")
		if err != nil {
			t.Fatal(err)
		}
		name, err := m.String(gd, rdf.RDFSNS+"label")
		if err != nil {
			t.Fatal(err)
		}
		src, err := os.ReadFile(file)
		if err != nil {
			t.Fatal(err)
		}
		doc, err := rdf.ParseNTriples(file, src)
		if err != nil {
			t.Fatal(err)
		}
		for _, st := range doc.Statements {
			if st.O.Kind() != rdf.KindIRI || st.S.Kind() != rdf.KindIRI {
				t.Fatalf("%s: the harness's quad table holds IRIs only, not %s", file, st.O)
			}
			if _, err := db.Exec(`INSERT INTO quads VALUES (?, ?, ?, ?)`, string(st.S.(rdf.IRI)), string(st.P.(rdf.IRI)), string(st.O.(rdf.IRI)), name); err != nil {
				t.Fatal(err)
			}
		}
	}
	src, err := source.Open(context.Background(), "sqlite:"+path)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { src.Close() })
	return startServer(t, src, func(context.Context) (*catalog.Catalog, error) {
		return r2rml.Load("quads.ttl", []byte(quadMapping))
	}, nil)
}

// protocolRequest is one ht:Request of a test, with its expected response.
type protocolRequest struct {
	method, path, body, encoding string
	headers                      [][2]string
	statuses                     []string // hts:StatusCode2xx and so on
	format                       string   // "boolean", "tabular", "RDF" or ""
	boolean                      *bool
}

func readRequests(m *conformance.Manifest, test rdf.Term) ([]protocolRequest, error) {
	action, err := m.Object(test, mfNS+"action")
	if err != nil || action == nil {
		return nil, m.Errorf(test, "no mf:action")
	}
	head, err := m.Object(action, htNS+"requests")
	if err != nil {
		return nil, err
	}
	nodes, err := m.List(head)
	if err != nil {
		return nil, err
	}
	var reqs []protocolRequest
	for _, n := range nodes {
		var r protocolRequest
		if r.method, err = m.String(n, htNS+"methodName"); err != nil {
			return nil, err
		}
		if r.path, err = m.String(n, htNS+"absolutePath"); err != nil {
			return nil, err
		}
		if body, _ := m.Object(n, htNS+"body"); body != nil {
			if r.body, err = m.String(body, cntNS+"chars"); err != nil {
				return nil, err
			}
			r.encoding, _ = m.String(body, cntNS+"characterEncoding")
		}
		if hs, _ := m.Object(n, htNS+"headers"); hs != nil {
			list, err := m.List(hs)
			if err != nil {
				return nil, err
			}
			for _, h := range list {
				name, err1 := m.String(h, htNS+"fieldName")
				value, err2 := m.String(h, htNS+"fieldValue")
				if err1 != nil || err2 != nil {
					return nil, m.Errorf(h, "a header without name or value")
				}
				r.headers = append(r.headers, [2]string{name, value})
			}
		}
		resp, _ := m.Object(n, htNS+"resp")
		if resp == nil {
			return nil, m.Errorf(n, "no ht:resp")
		}
		for _, s := range m.Objects(resp, mfNS+"expectedStatus") {
			r.statuses = append(r.statuses, strings.TrimPrefix(string(s.(rdf.IRI)), htsNS))
		}
		r.format, _ = m.String(resp, mfNS+"expectedFormat")
		if b, _ := m.Object(resp, mfNS+"expectedBoolean"); b != nil {
			v, err := m.Bool(resp, mfNS+"expectedBoolean")
			if err != nil {
				return nil, err
			}
			r.boolean = &v
		}
		reqs = append(reqs, r)
	}
	return reqs, nil
}

// run sends the request to the endpoint and checks the response against the
// expectations; the error says what differs.
func (r protocolRequest) run(endpoint string) error {
	// The manifest's paths start with /sparql/, "to be replaced with whatever
	// path prefix is appropriate for the endpoint being tested".
	rest, ok := strings.CutPrefix(r.path, "/sparql/")
	if !ok {
		return fmt.Errorf("path %q does not start with /sparql/", r.path)
	}
	body := []byte(r.body)
	if strings.EqualFold(r.encoding, "UTF-16") {
		// UTF-16 with a byte order mark (RFC 2781 §3.3), big-endian.
		body = []byte{0xfe, 0xff}
		for _, u := range utf16.Encode([]rune(r.body)) {
			body = append(body, byte(u>>8), byte(u))
		}
	}
	var rd io.Reader
	if r.body != "" {
		rd = strings.NewReader(string(body))
	}
	req, err := http.NewRequest(r.method, endpoint+rest, rd)
	if err != nil {
		return err
	}
	for _, h := range r.headers {
		req.Header.Add(h[0], h[1])
	}
	resp, err := http.DefaultClient.Do(req)
	if err != nil {
		return err
	}
	defer resp.Body.Close()
	got, err := io.ReadAll(resp.Body)
	if err != nil {
		return fmt.Errorf("reading the response: %w", err)
	}
	class := fmt.Sprintf("StatusCode%dxx", resp.StatusCode/100)
	if !contains(r.statuses, class) {
		return fmt.Errorf("status %d, want one of %v: %s", resp.StatusCode, r.statuses, firstLine(string(got)))
	}
	mt, _, _ := mime.ParseMediaType(resp.Header.Get("Content-Type"))
	formats := map[string][]string{
		"boolean": {"application/sparql-results+json", "application/sparql-results+xml"},
		"tabular": {"application/sparql-results+json", "application/sparql-results+xml", "text/csv", "text/tab-separated-values"},
		"RDF":     {"application/rdf+xml", "text/turtle", "application/n-triples", "application/xhtml+xml"},
	}
	if r.format != "" && !contains(formats[r.format], mt) {
		return fmt.Errorf("Content-Type %q is not a %s format", mt, r.format)
	}
	if r.boolean != nil {
		v, err := readBoolean(mt, got)
		if err != nil {
			return err
		}
		if v != *r.boolean {
			return fmt.Errorf("answer %v, want %v", v, *r.boolean)
		}
	}
	return nil
}

// readBoolean reads the answer of an ASK query in the JSON (SPARQL 1.1 Query
// Results JSON Format §3.3) or XML (SPARQL Query Results XML Format §2.4)
// results format.
func readBoolean(mt string, body []byte) (bool, error) {
	switch mt {
	case "application/sparql-results+json":
		var doc struct{ Boolean *bool }
		if err := json.Unmarshal(body, &doc); err != nil || doc.Boolean == nil {
			return false, fmt.Errorf("not a boolean JSON result: %v %.100s", err, body)
		}
		return *doc.Boolean, nil
	case "application/sparql-results+xml":
		var doc struct {
			Boolean *string `xml:"boolean"`
		}
		if err := xml.Unmarshal(body, &doc); err != nil || doc.Boolean == nil {
			return false, fmt.Errorf("not a boolean XML result: %v %.100s", err, body)
		}
		return strings.TrimSpace(*doc.Boolean) == "true", nil
	}
	return false, fmt.Errorf("Content-Type %q is not a boolean result format", mt)
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}

func firstLine(s string) string {
	s, _, _ = strings.Cut(s, "\n")
	if len(s) > 200 {
		s = s[:200] + "…"
	}
	return s
}

// readList reads a skip list of this package's testdata.
func readList(t *testing.T, name string) *conformance.SkipList {
	t.Helper()
	src, err := os.ReadFile(filepath.Join("testdata", name))
	if err != nil {
		t.Fatal(err)
	}
	l, err := conformance.ParseSkipList(name, src)
	if err != nil {
		t.Fatal(err)
	}
	return l
}

// TestW3CProtocol runs the SPARQL 1.1 Protocol tests of
// sparql11/protocol/manifest.ttl. testdata/protocol-skip.txt leaves out the
// tests veneer does not take part in (updates, which it refuses by design),
// and testdata/protocol-known-failures.txt lists those the engine cannot pass
// yet, with the missing capability; a listed test that passes fails the run,
// so the list cannot go stale.
func TestW3CProtocol(t *testing.T) {
	dir := w3cDir(t)
	m, err := conformance.ReadManifest(filepath.Join(dir, "rdf-tests", "sparql", "sparql11", "protocol", "manifest.ttl"))
	if err != nil {
		t.Fatal(err)
	}
	skip, known := readList(t, "protocol-skip.txt"), readList(t, "protocol-known-failures.txt")
	manifests := m.OfType(mfNS + "Manifest")
	if len(manifests) != 1 {
		t.Fatalf("%d manifests in the file", len(manifests))
	}
	head, err := m.Object(manifests[0], mfNS+"entries")
	if err != nil {
		t.Fatal(err)
	}
	tests, err := m.List(head)
	if err != nil {
		t.Fatal(err)
	}
	demo := startDemo(t, nil)
	var passed, failed, skipped, expected int
	for _, test := range tests {
		id := string(test.(rdf.IRI))
		id = id[strings.LastIndexByte(id, '#')+1:]
		t.Run(id, func(t *testing.T) {
			if reason, ok := skip.Reason(id, "sqlite"); ok {
				skipped++
				t.Skip(reason)
			}
			reqs, err := readRequests(m, test)
			if err != nil {
				t.Fatal(err)
			}
			endpoint := demo
			if len(m.Objects(test, utNS+"graphData")) > 0 {
				endpoint = startGraphData(t, m, test)
			}
			var fail error
			for i, r := range reqs {
				if err := r.run(endpoint); err != nil {
					fail = fmt.Errorf("request %d: %w", i+1, err)
					break
				}
			}
			reason, isKnown := known.Reason(id, "sqlite")
			switch {
			case fail == nil && isKnown:
				failed++
				t.Errorf("passes now: remove it from testdata/protocol-known-failures.txt (%s)", reason)
			case fail == nil:
				passed++
			case isKnown:
				expected++
				t.Logf("known failure (%s): %v", reason, fail)
			default:
				failed++
				t.Error(fail)
			}
		})
	}
	// The runner's summary line, with known failures counted as failures.
	t.Logf("protocol sqlite: %d passed, %d failed, %d skipped", passed, failed+expected, skipped)
}

// TestW3CServiceDescription runs the tests of
// sparql11/service-description/manifest.ttl, whose manifest gives each test a
// name only; the checks are those the names state, on the description a GET
// of the endpoint returns.
func TestW3CServiceDescription(t *testing.T) {
	dir := w3cDir(t)
	m, err := conformance.ReadManifest(filepath.Join(dir, "rdf-tests", "sparql", "sparql11", "service-description", "manifest.ttl"))
	if err != nil {
		t.Fatal(err)
	}
	endpoint := startDemo(t, nil)
	get := func(accept string) (string, []byte) {
		req, _ := http.NewRequest("GET", endpoint, nil)
		if accept != "" {
			req.Header.Set("Accept", accept)
		}
		resp, err := http.DefaultClient.Do(req)
		if err != nil {
			t.Fatal(err)
		}
		defer resp.Body.Close()
		body, _ := io.ReadAll(resp.Body)
		mt, _, _ := mime.ParseMediaType(resp.Header.Get("Content-Type"))
		if resp.StatusCode != 200 {
			t.Fatalf("GET %s: %d %s", endpoint, resp.StatusCode, body)
		}
		return mt, body
	}
	parse := func(mt string, body []byte) []rdf.Statement {
		var doc *rdf.Document
		var err error
		switch mt {
		case "text/turtle":
			doc, err = rdf.ParseTurtle("sd", body, endpoint)
		case "application/n-triples":
			doc, err = rdf.ParseNTriples("sd", body)
		default:
			t.Fatalf("Content-Type %q is not RDF", mt)
		}
		if err != nil {
			t.Fatalf("the description does not parse: %v", err)
		}
		return doc.Statements
	}
	checks := map[string]func(t *testing.T){
		// "GET on endpoint returns RDF": with no Accept, and with Accept naming RDF.
		"returns-rdf": func(t *testing.T) {
			for _, accept := range []string{"", "text/turtle", "application/n-triples", "application/rdf+xml;q=0.5, text/turtle;q=0.4"} {
				if st := parse(get(accept)); len(st) == 0 {
					t.Errorf("Accept %q: an empty description", accept)
				}
			}
		},
		// "Service description contains a matching sd:endpoint triple": an
		// sd:endpoint whose object is the URL the request went to.
		"has-endpoint-triple": func(t *testing.T) {
			var found bool
			for _, st := range parse(get("")) {
				found = found || st.P == rdf.IRI(sdNS+"endpoint") && st.O == rdf.IRI(endpoint)
			}
			if !found {
				t.Errorf("no sd:endpoint <%s>", endpoint)
			}
		},
		// "Service description conforms to schema": every term in the sd:
		// namespace is one the vocabulary defines (SPARQL 1.1 Service
		// Description §3, from memory of the Recommendation), each
		// sd:endpoint is on an sd:Service, and the properties have their
		// ranges' kinds of terms.
		"conforms-to-schema": func(t *testing.T) {
			known := map[string]bool{}
			for _, n := range strings.Fields(`Service Dataset Graph NamedGraph GraphCollection Language Feature Function
				Aggregate EntailmentRegime EntailmentProfile endpoint supportedLanguage resultFormat inputFormat feature
				defaultEntailmentRegime defaultSupportedEntailmentProfile extensionFunction extensionAggregate
				languageExtension propertyFeature defaultDataset availableGraphs defaultGraph namedGraph name graph
				entailmentRegime supportedEntailmentProfile SPARQL10Query SPARQL11Query SPARQL11Update
				DereferencesURIs UnionDefaultGraph RequiresDataset EmptyGraphs BasicFederatedQuery`) {
				known[sdNS+n] = true
			}
			sts := parse(get(""))
			types := map[rdf.Term][]rdf.Term{}
			for _, st := range sts {
				if st.P == rdf.RDFType {
					types[st.S] = append(types[st.S], st.O)
				}
			}
			for _, st := range sts {
				for _, term := range []rdf.Term{st.P, st.O} {
					if iri, ok := term.(rdf.IRI); ok && strings.HasPrefix(string(iri), sdNS) && !known[string(iri)] {
						t.Errorf("%s is not in the vocabulary", iri)
					}
				}
				switch st.P {
				case rdf.IRI(sdNS + "endpoint"):
					if st.O.Kind() != rdf.KindIRI || !containsTerm(types[st.S], rdf.IRI(sdNS+"Service")) {
						t.Errorf("sd:endpoint %s on a subject that is not an sd:Service", st.O)
					}
				case rdf.IRI(sdNS + "resultFormat"), rdf.IRI(sdNS + "supportedLanguage"), rdf.IRI(sdNS + "defaultEntailmentRegime"):
					if st.O.Kind() != rdf.KindIRI {
						t.Errorf("%s has a non-IRI object %s", st.P, st.O)
					}
				}
			}
		},
	}
	for _, test := range m.OfType(mfNS + "ServiceDescriptionTest") {
		id := string(test.(rdf.IRI))
		id = id[strings.LastIndexByte(id, '#')+1:]
		check, ok := checks[id]
		t.Run(id, func(t *testing.T) {
			if !ok {
				t.Fatalf("no check for test %s", id)
			}
			check(t)
		})
	}
}

func containsTerm(ts []rdf.Term, x rdf.Term) bool {
	for _, t := range ts {
		if t == x {
			return true
		}
	}
	return false
}
