package conformance

import (
	"context"
	"errors"
	"fmt"
	"io"
	"mime"
	"net/http"
	"path/filepath"
	"slices"
	"sort"
	"strings"
	"unicode/utf16"

	"veneer/catalog"
	"veneer/catalog/r2rml"
	"veneer/catalog/rdf"
	"veneer/cmd/veneer/demo"
)

// The protocol suite. sparql11/protocol/manifest.ttl describes each test's
// HTTP requests and the responses they expect in RDF: an mf:action of type
// ht:Connection lists its ht:requests, each with ht:methodName,
// ht:absolutePath, ht:headers and an ht:body (cnt:chars in
// cnt:characterEncoding), and ht:resp gives the mf:expectedStatus (an hts:
// status code class), mf:expectedFormat and mf:expectedBoolean. A test with
// ut:graphData needs those documents as named graphs of the dataset.
// sparql11/service-description/manifest.ttl gives each of its tests a name
// only.
const (
	htNS  = "http://www.w3.org/2011/http#"
	htsNS = "http://www.w3.org/2011/http-statusCodes#"
	cntNS = "http://www.w3.org/2011/content#"
	utNS  = "http://www.w3.org/2009/sparql/tests/test-update#"
	sdNS  = "http://www.w3.org/ns/sparql-service-description#"

	htRequests        = rdf.IRI(htNS + "requests")
	htMethod          = rdf.IRI(htNS + "methodName")
	htPath            = rdf.IRI(htNS + "absolutePath")
	htBody            = rdf.IRI(htNS + "body")
	htHeaders         = rdf.IRI(htNS + "headers")
	htFieldName       = rdf.IRI(htNS + "fieldName")
	htFieldValue      = rdf.IRI(htNS + "fieldValue")
	htResp            = rdf.IRI(htNS + "resp")
	cntChars          = rdf.IRI(cntNS + "chars")
	cntEncoding       = rdf.IRI(cntNS + "characterEncoding")
	mfStatus          = rdf.IRI(testManifestNS + "expectedStatus")
	mfFormat          = rdf.IRI(testManifestNS + "expectedFormat")
	mfBoolean         = rdf.IRI(testManifestNS + "expectedBoolean")
	mfServiceDescTest = rdf.IRI(testManifestNS + "ServiceDescriptionTest")
	utGraphData       = rdf.IRI(utNS + "graphData")
	utGraph           = rdf.IRI(utNS + "graph")
	sdEndpoint        = rdf.IRI(sdNS + "endpoint")
	sdService         = rdf.IRI(sdNS + "Service")
)

// Protocol is the suite "protocol": the W3C SPARQL 1.1 Protocol tests
// (sparql11/protocol) and service description tests
// (sparql11/service-description), sent over HTTP to veneer's server on a
// loopback port, as their manifests describe them. The tests without
// ut:graphData, and the service description tests, ask the demo database
// (veneer/cmd/veneer/demo, built on the scratch database and served through
// its R2RML mapping); the tests with the same ut:graphData ask a server over
// those documents, each in the named graph its rdfs:label names, stored in
// triple tables as for sparql-eval. A test's identifier is its folder and its
// name in the manifest (the fragment of its IRI), such as
// "sparql11/protocol/query_post_form".
func Protocol() Suite { return protocolSuite{} }

type protocolSuite struct{}

func (protocolSuite) Name() string        { return "protocol" }
func (protocolSuite) NeedsDatabase() bool { return true }

func (protocolSuite) Load(dir string) ([]*Group, error) {
	root := filepath.Join(dir, "rdf-tests", "sparql")
	onDemo := &endpointGroup{}
	onDemo.group = &Group{Name: "demo database", Setup: onDemo.setUpDemo}
	groups := []*Group{onDemo.group}
	byData := map[string]*endpointGroup{}

	m, err := ReadManifest(filepath.Join(root, "sparql11", "protocol", "manifest.ttl"))
	if err != nil {
		return nil, err
	}
	_, entries, err := m.Entries()
	if err != nil {
		return nil, err
	}
	for _, e := range entries {
		name, err := m.Name(e)
		if err != nil {
			return nil, err
		}
		reqs, err := readRequests(m, e)
		if err != nil {
			return nil, err
		}
		graphs, err := readGraphData(m, e)
		if err != nil {
			return nil, err
		}
		eg := onDemo
		if len(graphs) > 0 {
			key := graphsKey(graphs)
			if eg = byData[key]; eg == nil {
				eg = &endpointGroup{graphs: graphs}
				eg.group = &Group{Name: "sparql11/protocol " + key, Setup: eg.setUpGraphs}
				byData[key] = eg
				groups = append(groups, eg.group)
			}
		}
		eg.group.Tests = append(eg.group.Tests, Test{ID: "sparql11/protocol/" + name, Run: eg.runRequests(reqs)})
	}

	m, err = ReadManifest(filepath.Join(root, "sparql11", "service-description", "manifest.ttl"))
	if err != nil {
		return nil, err
	}
	for _, e := range m.OfType(mfServiceDescTest) {
		name, err := m.Name(e)
		if err != nil {
			return nil, err
		}
		check := serviceDescriptionChecks[name]
		run := func(ctx context.Context, _ *Scratch) error {
			if check == nil {
				return fmt.Errorf("the harness has no check for the test %s", name)
			}
			return check(ctx, onDemo.url)
		}
		onDemo.group.Tests = append(onDemo.group.Tests, Test{ID: "sparql11/service-description/" + name, Run: run})
	}
	return groups, nil
}

// endpointGroup is a group of tests that ask one server; its URL is known once
// the group is set up.
type endpointGroup struct {
	group *Group
	// graphs is the ut:graphData the server holds; empty for the demo.
	graphs []graphLoad
	url    string
}

// setUpDemo builds the demo database on the scratch database, in one
// transaction, and serves it through the demo's mapping.
func (g *endpointGroup) setUpDemo(ctx context.Context, sc *Scratch) error {
	tx, err := sc.db.BeginTx(ctx, nil)
	if err != nil {
		return fmt.Errorf("building the demo database: %w", scrub(err, sc.DSN))
	}
	exec := func(ctx context.Context, query string, args ...any) error {
		_, err := tx.ExecContext(ctx, query, args...)
		return scrub(err, sc.DSN)
	}
	if err := demo.Build(ctx, exec, sc.Dialect.String()); err != nil {
		return errors.Join(err, tx.Rollback())
	}
	if err := tx.Commit(); err != nil {
		return fmt.Errorf("building the demo database: %w", scrub(err, sc.DSN))
	}
	cat, err := r2rml.Load("demo/mapping.ttl", []byte(demo.Mapping()))
	if err != nil {
		return &StageError{Stage: "loading the demo mapping", Err: err}
	}
	return g.serve(ctx, sc, cat)
}

// setUpGraphs stores the group's documents, each in its named graph, and
// serves them.
func (g *endpointGroup) setUpGraphs(ctx context.Context, sc *Scratch) error {
	cat, err := storeDataset(ctx, sc, g.graphs)
	if err != nil {
		return err
	}
	return g.serve(ctx, sc, cat)
}

// serve starts veneer's server over cat on the scratch database.
func (g *endpointGroup) serve(ctx context.Context, sc *Scratch, cat *catalog.Catalog) error {
	src, err := sc.Source(ctx)
	if err != nil {
		return err
	}
	e, err := newEngine(ctx, src, cat)
	if err != nil {
		return err
	}
	g.url, err = serveEngine(sc, e)
	return err
}

// runRequests returns the Run of a protocol test: its requests in order, each
// response checked against what the manifest expects.
func (g *endpointGroup) runRequests(reqs []protocolRequest) func(context.Context, *Scratch) error {
	return func(ctx context.Context, _ *Scratch) error {
		for i, r := range reqs {
			if err := r.run(ctx, g.url); err != nil {
				return fmt.Errorf("request %d: %w", i+1, err)
			}
		}
		return nil
	}
}

// readGraphData reads a test's ut:graphData: each a ut:graph document and the
// name of its graph, the rdfs:label.
func readGraphData(m *Manifest, test rdf.Term) ([]graphLoad, error) {
	var out []graphLoad
	for _, gd := range m.Objects(test, utGraphData) {
		file, err := m.File(gd, utGraph)
		if err != nil {
			return nil, err
		}
		name, err := m.String(gd, rdf.RDFSNS+"label")
		if err != nil {
			return nil, err
		}
		out = append(out, graphLoad{file: file, graph: rdf.IRI(name)})
	}
	return out, nil
}

// graphsKey names a set of graph documents the same whatever their order.
func graphsKey(graphs []graphLoad) string {
	var parts []string
	for _, l := range graphs {
		parts = append(parts, filepath.Base(l.file)+" as <"+string(l.graph)+">")
	}
	sort.Strings(parts)
	return strings.Join(parts, ", ")
}

// protocolRequest is one ht:Request of a test, with the response it expects.
type protocolRequest struct {
	method, path, body, encoding string
	headers                      [][2]string
	// statuses are the acceptable status code classes, such as "StatusCode2xx".
	statuses []string
	// format is "boolean", "tabular", "RDF" or "" (any).
	format  string
	boolean *bool
}

// readRequests reads the ht:requests of a test's mf:action.
func readRequests(m *Manifest, test rdf.Term) ([]protocolRequest, error) {
	action, err := m.Object(test, mfAction)
	if err != nil {
		return nil, err
	}
	if action == nil {
		return nil, m.Errorf(test, "has no mf:action")
	}
	head, err := m.Object(action, htRequests)
	if err != nil {
		return nil, err
	}
	if head == nil {
		return nil, m.Errorf(action, "has no ht:requests")
	}
	nodes, err := m.List(head)
	if err != nil {
		return nil, err
	}
	var reqs []protocolRequest
	for _, n := range nodes {
		r, err := readRequest(m, n)
		if err != nil {
			return nil, err
		}
		reqs = append(reqs, r)
	}
	return reqs, nil
}

// readRequest reads one ht:Request.
func readRequest(m *Manifest, n rdf.Term) (protocolRequest, error) {
	var r protocolRequest
	var err error
	if r.method, err = m.String(n, htMethod); err != nil {
		return r, err
	}
	if r.path, err = m.String(n, htPath); err != nil {
		return r, err
	}
	if body, err := m.Object(n, htBody); err != nil {
		return r, err
	} else if body != nil {
		if r.body, err = m.String(body, cntChars); err != nil {
			return r, err
		}
		if len(m.Objects(body, cntEncoding)) > 0 {
			if r.encoding, err = m.String(body, cntEncoding); err != nil {
				return r, err
			}
		}
	}
	if hs, err := m.Object(n, htHeaders); err != nil {
		return r, err
	} else if hs != nil {
		list, err := m.List(hs)
		if err != nil {
			return r, err
		}
		for _, h := range list {
			name, err := m.String(h, htFieldName)
			if err != nil {
				return r, err
			}
			value, err := m.String(h, htFieldValue)
			if err != nil {
				return r, err
			}
			r.headers = append(r.headers, [2]string{name, value})
		}
	}
	resp, err := m.Object(n, htResp)
	if err != nil {
		return r, err
	}
	if resp == nil {
		return r, m.Errorf(n, "has no ht:resp")
	}
	for _, s := range m.Objects(resp, mfStatus) {
		iri, _ := s.(rdf.IRI)
		class, ok := strings.CutPrefix(string(iri), htsNS)
		if !ok {
			return r, m.Errorf(resp, "mf:expectedStatus %s is not an hts: status code", s)
		}
		r.statuses = append(r.statuses, class)
	}
	if len(m.Objects(resp, mfFormat)) > 0 {
		if r.format, err = m.String(resp, mfFormat); err != nil {
			return r, err
		}
		if _, known := resultFormats[r.format]; !known {
			return r, m.Errorf(resp, "mf:expectedFormat %q is none of boolean, tabular and RDF", r.format)
		}
	}
	if len(m.Objects(resp, mfBoolean)) > 0 {
		v, err := m.Bool(resp, mfBoolean)
		if err != nil {
			return r, err
		}
		r.boolean = &v
	}
	return r, nil
}

// resultFormats are the media types of each mf:expectedFormat: the SPARQL
// results formats (JSON, XML, CSV and TSV; CSV and TSV cannot carry a
// boolean) and the RDF syntaxes a graph may come in (the manifest's comments
// on the query_construct tests name RDF/XML, Turtle, N-Triples and RDFa).
var resultFormats = map[string][]string{
	"boolean": {"application/sparql-results+json", "application/sparql-results+xml"},
	"tabular": {"application/sparql-results+json", "application/sparql-results+xml", "text/csv", "text/tab-separated-values"},
	"RDF":     {"application/rdf+xml", "text/turtle", "application/n-triples", "application/xhtml+xml"},
}

// run sends the request to the endpoint and checks the response; the error
// says what differs.
func (r protocolRequest) run(ctx context.Context, endpoint string) error {
	// The manifest's paths start with /sparql/, "to be replaced with whatever
	// path prefix is appropriate for the endpoint being tested".
	rest, ok := strings.CutPrefix(r.path, "/sparql/")
	if !ok {
		return fmt.Errorf("path %q does not start with /sparql/", r.path)
	}
	var body io.Reader
	if r.body != "" {
		b := []byte(r.body)
		if strings.EqualFold(r.encoding, "UTF-16") {
			// UTF-16 with a byte order mark, big-endian (RFC 2781 §3.3).
			b = []byte{0xfe, 0xff}
			for _, u := range utf16.Encode([]rune(r.body)) {
				b = append(b, byte(u>>8), byte(u))
			}
		}
		body = strings.NewReader(string(b))
	}
	req, err := http.NewRequestWithContext(ctx, r.method, endpoint+rest, body)
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
	if class := fmt.Sprintf("StatusCode%dxx", resp.StatusCode/100); !slices.Contains(r.statuses, class) {
		return fmt.Errorf("status %d, want one of %v: %s", resp.StatusCode, r.statuses, firstLine(string(got)))
	}
	mt, _, _ := mime.ParseMediaType(resp.Header.Get("Content-Type"))
	if r.format != "" && !slices.Contains(resultFormats[r.format], mt) {
		return fmt.Errorf("Content-Type %q is not a %s format", mt, r.format)
	}
	if r.boolean == nil {
		return nil
	}
	var a *answer
	switch mt {
	case "application/sparql-results+json":
		a, err = readSRJ(got)
	case "application/sparql-results+xml":
		a, err = readSRX(got)
	default:
		return fmt.Errorf("Content-Type %q is not a boolean results format", mt)
	}
	switch {
	case err != nil:
		return fmt.Errorf("reading the answer: %w", err)
	case a.boolean == nil:
		return fmt.Errorf("the answer is not a boolean: %s", firstLine(string(got)))
	case *a.boolean != *r.boolean:
		return fmt.Errorf("answer %v, want %v", *a.boolean, *r.boolean)
	}
	return nil
}

// firstLine is the first line of a response body, cut to 200 bytes, for a
// reason.
func firstLine(s string) string {
	s, _, _ = strings.Cut(s, "\n")
	if len(s) > 200 {
		s = s[:200] + "…"
	}
	return s
}

// serviceDescriptionChecks are the checks of the service description tests,
// by test name: the manifest names the tests and says nothing else, so each
// check is what the test's name states, on the description that a GET of the
// endpoint returns (SPARQL 1.1 Service Description §2: "a service description
// ... made available by dereferencing the service endpoint").
var serviceDescriptionChecks = map[string]func(ctx context.Context, endpoint string) error{
	// "GET on endpoint returns RDF": with no Accept, and with Accept naming RDF.
	"returns-rdf": func(ctx context.Context, endpoint string) error {
		for _, accept := range []string{"", "text/turtle", "application/n-triples", "application/rdf+xml;q=0.5, text/turtle;q=0.4"} {
			sts, err := serviceDescription(ctx, endpoint, accept)
			if err != nil {
				return err
			}
			if len(sts) == 0 {
				return fmt.Errorf("Accept %q: an empty description", accept)
			}
		}
		return nil
	},
	// "Service description contains a matching sd:endpoint triple": an
	// sd:endpoint whose object is the URL the request went to.
	"has-endpoint-triple": func(ctx context.Context, endpoint string) error {
		sts, err := serviceDescription(ctx, endpoint, "")
		if err != nil {
			return err
		}
		for _, st := range sts {
			if st.P == sdEndpoint && st.O == rdf.IRI(endpoint) {
				return nil
			}
		}
		return fmt.Errorf("no sd:endpoint <%s>", endpoint)
	},
	// "Service description conforms to schema": every term in the sd:
	// namespace is one the vocabulary defines (SPARQL 1.1 Service Description
	// §3, from memory of the Recommendation), each sd:endpoint is on an
	// sd:Service, and the properties have their ranges' kinds of terms.
	"conforms-to-schema": func(ctx context.Context, endpoint string) error {
		sts, err := serviceDescription(ctx, endpoint, "")
		if err != nil {
			return err
		}
		types := map[rdf.Term][]rdf.Term{}
		for _, st := range sts {
			if st.P == rdf.RDFType {
				types[st.S] = append(types[st.S], st.O)
			}
		}
		var problems []string
		for _, st := range sts {
			for _, term := range []rdf.Term{st.P, st.O} {
				iri, ok := term.(rdf.IRI)
				if local, in := strings.CutPrefix(string(iri), sdNS); ok && in && !slices.Contains(sdVocabulary, local) {
					problems = append(problems, fmt.Sprintf("%s is not in the vocabulary", iri))
				}
			}
			switch st.P {
			case sdEndpoint:
				if st.O.Kind() != rdf.KindIRI || !slices.Contains(types[st.S], rdf.Term(sdService)) {
					problems = append(problems, fmt.Sprintf("sd:endpoint %s on a subject that is not an sd:Service", st.O))
				}
			case rdf.IRI(sdNS + "resultFormat"), rdf.IRI(sdNS + "supportedLanguage"), rdf.IRI(sdNS + "defaultEntailmentRegime"):
				if st.O.Kind() != rdf.KindIRI {
					problems = append(problems, fmt.Sprintf("%s has a non-IRI object %s", st.P, st.O))
				}
			}
		}
		if len(problems) > 0 {
			return errors.New(strings.Join(problems, "; "))
		}
		return nil
	},
}

// sdVocabulary are the local names of the terms of the service description
// vocabulary (SPARQL 1.1 Service Description §3, from memory of the
// Recommendation).
var sdVocabulary = strings.Fields(`Service Dataset Graph NamedGraph GraphCollection Language Feature Function
	Aggregate EntailmentRegime EntailmentProfile endpoint supportedLanguage resultFormat inputFormat feature
	defaultEntailmentRegime defaultSupportedEntailmentProfile extensionFunction extensionAggregate
	languageExtension propertyFeature defaultDataset availableGraphs defaultGraph namedGraph name graph
	entailmentRegime supportedEntailmentProfile SPARQL10Query SPARQL11Query SPARQL11Update
	DereferencesURIs UnionDefaultGraph RequiresDataset EmptyGraphs BasicFederatedQuery`)

// serviceDescription GETs the endpoint, with accept as the Accept header
// unless it is empty, and reads the description, which must be RDF.
func serviceDescription(ctx context.Context, endpoint, accept string) ([]rdf.Statement, error) {
	req, err := http.NewRequestWithContext(ctx, http.MethodGet, endpoint, nil)
	if err != nil {
		return nil, err
	}
	if accept != "" {
		req.Header.Set("Accept", accept)
	}
	resp, err := http.DefaultClient.Do(req)
	if err != nil {
		return nil, err
	}
	defer resp.Body.Close()
	body, err := io.ReadAll(resp.Body)
	if err != nil {
		return nil, fmt.Errorf("reading the description: %w", err)
	}
	if resp.StatusCode != http.StatusOK {
		return nil, fmt.Errorf("GET with Accept %q: status %d: %s", accept, resp.StatusCode, firstLine(string(body)))
	}
	var doc *rdf.Document
	switch mt, _, _ := mime.ParseMediaType(resp.Header.Get("Content-Type")); mt {
	case "text/turtle":
		doc, err = rdf.ParseTurtle("the service description", body, endpoint)
	case "application/n-triples":
		doc, err = rdf.ParseNTriples("the service description", body)
	default:
		return nil, fmt.Errorf("GET with Accept %q: Content-Type %q is not RDF veneer reads", accept, mt)
	}
	if err != nil {
		return nil, fmt.Errorf("the description does not parse: %w", err)
	}
	return doc.Statements, nil
}
