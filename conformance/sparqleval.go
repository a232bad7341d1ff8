package conformance

import (
	"context"
	"errors"
	"fmt"
	"net/http"
	"net/http/httptest"
	"net/url"
	"os"
	"path"
	"path/filepath"
	"runtime/debug"
	"strings"
	"time"

	"veneer/catalog/rdf"
	"veneer/rewrite/algebra"
	"veneer/rewrite/exec"
	"veneer/rewrite/sparql"
)

// The SPARQL evaluation suite. Its tests are the mf:QueryEvaluationTest
// entries of the folders that two manifests include: the SPARQL 1.1 Query
// Language folders (sparql11/manifest-sparql11-query.ttl; entailment, update,
// federation, protocol and results-format folders are not part of it) and the
// SPARQL 1.0 evaluation folders (sparql10/manifest-evaluation.ttl), whose
// tests count only when the working group approved them (dawgt:approval
// dawgt:Approved). Each test's mf:action names the query (qt:query), the
// default graph (qt:data) and named graphs (qt:graphData, each named by its
// file's IRI); mf:result the expected answer.
const (
	mfInclude     = rdf.IRI(testManifestNS + "include")
	mfResult      = rdf.IRI(testManifestNS + "result")
	mfQueryEval   = rdf.IRI(testManifestNS + "QueryEvaluationTest")
	mfCard        = rdf.IRI(testManifestNS + "resultCardinality")
	mfLax         = rdf.IRI(testManifestNS + "LaxCardinality")
	qtNS          = "http://www.w3.org/2001/sw/DataAccess/tests/test-query#"
	qtData        = rdf.IRI(qtNS + "data")
	qtGraphData   = rdf.IRI(qtNS + "graphData")
	dawgtNS       = "http://www.w3.org/2001/sw/DataAccess/tests/test-dawg#"
	dawgtApproval = rdf.IRI(dawgtNS + "approval")
	dawgtApproved = rdf.IRI(dawgtNS + "Approved")
)

// sparqlEvalManifests are the manifests whose mf:include lists name the test
// folders, and whether a test must be approved to count.
var sparqlEvalManifests = []struct {
	path         string
	approvedOnly bool
}{
	{"sparql11/manifest-sparql11-query.ttl", false},
	{"sparql10/manifest-evaluation.ttl", true},
}

// Bounds of one test. An answer is read whole before it is compared, so a
// runaway query (a cross product the engine got wrong) stops at maxSolutions.
const (
	sparqlEvalTimeout = 10 * time.Second
	// stopGrace is how long a test that ran out of time has to return after
	// its context ended, before the run goes on without it.
	stopGrace    = 2 * time.Second
	maxSolutions = 100_000
	// httpSampleEvery: every so many tests (in suite order) are also asked
	// through the HTTP handler, the rest straight from the engine.
	httpSampleEvery = 4
)

// SPARQLEval is the suite "sparql-eval": the W3C SPARQL 1.1 and 1.0 query
// evaluation tests answered over a database. Each test's dataset is stored in
// triple tables on the database, one per term shape, and served by a
// generated R2RML mapping (see tripleTables); the query runs through veneer's
// pipeline (column probing, planner, executor; a sample of the tests through
// the HTTP handler too) and its answer is compared with the expected one.
// Tests whose dataset is the same share one database.
//
// A test's identifier is its folder under rdf-tests/sparql and its name in the
// manifest (the fragment of its IRI): "sparql11/aggregates/agg01".
func SPARQLEval() Suite { return sparqlEvalSuite{} }

type sparqlEvalSuite struct{}

func (sparqlEvalSuite) Name() string        { return "sparql-eval" }
func (sparqlEvalSuite) NeedsDatabase() bool { return true }

func (sparqlEvalSuite) Load(dir string) ([]*Group, error) {
	root, err := filepath.Abs(filepath.Join(dir, "rdf-tests", "sparql"))
	if err != nil {
		return nil, err
	}
	var cases []*evalCase
	for _, top := range sparqlEvalManifests {
		folders, err := includedManifests(filepath.Join(root, filepath.FromSlash(top.path)))
		if err != nil {
			return nil, err
		}
		for _, f := range folders {
			cs, err := readEvalManifest(root, f, top.approvedOnly)
			if err != nil {
				return nil, err
			}
			cases = append(cases, cs...)
		}
	}
	if len(cases) == 0 {
		return nil, fmt.Errorf("no evaluation tests under %s", root)
	}
	return groupByDataset(cases), nil
}

// includedManifests returns the paths of the manifests a manifest includes.
func includedManifests(file string) ([]string, error) {
	m, err := ReadManifest(file)
	if err != nil {
		return nil, err
	}
	var out []string
	for _, man := range m.OfType(mfManifest) {
		for _, head := range m.Objects(man, mfInclude) {
			members, err := m.List(head)
			if err != nil {
				return nil, err
			}
			for _, t := range members {
				p, err := fileOf(m, man, t)
				if err != nil {
					return nil, err
				}
				out = append(out, p)
			}
		}
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("%s includes no manifests", file)
	}
	return out, nil
}

// fileOf returns the path that a file: IRI of a manifest names.
func fileOf(m *Manifest, subject, t rdf.Term) (string, error) {
	iri, ok := t.(rdf.IRI)
	if !ok {
		return "", m.Errorf(subject, "%s is not a file: IRI", t)
	}
	u, err := url.Parse(string(iri))
	if err != nil || u.Scheme != "file" {
		return "", m.Errorf(subject, "%s is not a file: IRI", t)
	}
	return filepath.FromSlash(u.Path), nil
}

// evalCase is one evaluation test.
type evalCase struct {
	id     string
	query  string // file
	result string // file
	loads  []graphLoad
	// skip, when set, is why the test cannot run here.
	skip string
	// parsed is the query as veneer's parser and translation read it, for its
	// form, dataset and ORDER BY; parseErr when they rejected it.
	parsed   *algebra.Query
	parseErr error
	// lax is mf:resultCardinality mf:LaxCardinality.
	lax bool
	// overHTTP: the test is also asked through the HTTP handler.
	overHTTP bool
	// edit, when set, rewrites the query text before it runs (the
	// sparql-service suite points SERVICE IRIs at its stand-in endpoints).
	edit func(text string) string
}

// graphLoad is one RDF document loaded into one graph of a test's dataset.
type graphLoad struct {
	file  string
	graph rdf.IRI // "" for the default graph
}

// readEvalManifest reads the evaluation tests of one folder's manifest.
func readEvalManifest(root, file string, approvedOnly bool) ([]*evalCase, error) {
	m, err := ReadManifest(file)
	if err != nil {
		return nil, err
	}
	folder, err := filepath.Rel(root, m.Dir)
	if err != nil {
		return nil, err
	}
	folder = filepath.ToSlash(folder)
	var out []*evalCase
	for _, man := range m.OfType(mfManifest) {
		head, err := m.Object(man, mfEntries)
		if err != nil || head == nil {
			return nil, err
		}
		entries, err := m.List(head)
		if err != nil {
			return nil, err
		}
		for _, e := range entries {
			ty, err := m.Object(e, rdf.RDFType)
			if err != nil {
				return nil, err
			}
			if ty != rdf.Term(mfQueryEval) {
				continue
			}
			c, err := readEvalCase(m, folder, e, approvedOnly)
			if err != nil {
				return nil, err
			}
			out = append(out, c)
		}
	}
	return out, nil
}

func readEvalCase(m *Manifest, folder string, entry rdf.Term, approvedOnly bool) (*evalCase, error) {
	name := entry.String()
	if iri, ok := entry.(rdf.IRI); ok {
		name = string(iri)
		if i := strings.LastIndexAny(name, "#/"); i >= 0 {
			name = name[i+1:]
		}
	}
	c := &evalCase{id: folder + "/" + name}
	action, err := m.Object(entry, mfAction)
	if err != nil {
		return nil, err
	}
	if action == nil {
		return nil, m.Errorf(entry, "has no mf:action")
	}
	if c.query, err = m.File(action, qtQuery); err != nil {
		return nil, err
	}
	if c.result, err = m.File(entry, mfResult); err != nil {
		return nil, err
	}
	for _, d := range m.Objects(action, qtData) {
		p, err := fileOf(m, action, d)
		if err != nil {
			return nil, err
		}
		c.loads = append(c.loads, graphLoad{file: p})
	}
	for _, d := range m.Objects(action, qtGraphData) {
		p, err := fileOf(m, action, d)
		if err != nil {
			return nil, err
		}
		c.loads = append(c.loads, graphLoad{file: p, graph: d.(rdf.IRI)})
	}
	card, err := m.Object(entry, mfCard)
	if err != nil {
		return nil, err
	}
	c.lax = card == rdf.Term(mfLax)
	if approvedOnly {
		a, err := m.Object(entry, dawgtApproval)
		if err != nil {
			return nil, err
		}
		switch {
		case a == nil:
			c.skip = "not approved by the working group (no dawgt:approval)"
		case a != rdf.Term(dawgtApproved):
			c.skip = fmt.Sprintf("not approved by the working group (dawgt:approval %v)", a)
		}
	}
	c.readQuery()
	c.loads = append(c.loads, c.datasetLoads()...)
	c.loads = dedupeLoads(c.loads)
	if f := rdfXMLFile(c.loads); f != "" && c.skip == "" {
		c.skip = "RDF/XML data (" + f + ")"
	}
	return c, nil
}

// rdfXMLFile returns the name of the first document of loads in RDF/XML,
// which the test data reader does not read, or "".
func rdfXMLFile(loads []graphLoad) string {
	for _, l := range loads {
		if filepath.Ext(l.file) == ".rdf" {
			return filepath.Base(l.file)
		}
	}
	return ""
}

// readQuery parses and translates the query, its file: IRI being the base
// (the retrieval IRI, SPARQL 1.1 Query §4.1.1.2). A panic of the parser is a
// failure of this test, not of the run.
func (c *evalCase) readQuery() {
	defer func() {
		if p := recover(); p != nil {
			c.parsed, c.parseErr = nil, fmt.Errorf("the parser panicked: %v", p)
		}
	}()
	text, base, err := c.queryText()
	if err != nil {
		c.parseErr = err
		return
	}
	q, err := sparql.ParseBase(text, base)
	if err == nil {
		c.parsed, err = algebra.Translate(q)
	}
	c.parseErr = err
}

func (c *evalCase) queryText() (text, base string, err error) {
	src, err := os.ReadFile(c.query)
	if err != nil {
		return "", "", fmt.Errorf("reading the query: %w", err)
	}
	base, err = fileIRI(c.query)
	return string(src), base, err
}

// datasetLoads are the graphs the query's FROM and FROM NAMED clauses name
// (SPARQL 1.1 Query §13.2): the files of the suite they point to, each loaded
// as the named graph of its IRI. A virtual endpoint's dataset is what its
// mapping defines, so the query's dataset clauses have to select graphs of
// it: the default graph of FROM <g> is the mapped graph g.
func (c *evalCase) datasetLoads() []graphLoad {
	if c.parsed == nil {
		return nil
	}
	var out []graphLoad
	for _, g := range append(append([]rdf.IRI(nil), c.parsed.Dataset.Default...), c.parsed.Dataset.Named...) {
		u, err := url.Parse(string(g))
		if err != nil || u.Scheme != "file" {
			continue
		}
		if _, err := os.Stat(u.Path); err == nil {
			out = append(out, graphLoad{file: filepath.FromSlash(u.Path), graph: g})
		}
	}
	return out
}

// dedupeLoads drops repeated loads: a graph is a set, and loading a document
// twice into one graph would only copy its blank nodes.
func dedupeLoads(ls []graphLoad) []graphLoad {
	seen := map[graphLoad]bool{}
	var out []graphLoad
	for _, l := range ls {
		if !seen[l] {
			seen[l] = true
			out = append(out, l)
		}
	}
	return out
}

// groupByDataset makes one group per dataset, in the order the datasets first
// appear; a group's tests share its database.
func groupByDataset(cases []*evalCase) []*Group {
	var groups []*Group
	byKey := map[string]*evalGroup{}
	for i, c := range cases {
		c.overHTTP = i%httpSampleEvery == 0
		var parts []string
		for _, l := range c.loads {
			parts = append(parts, string(l.graph)+"\x00"+l.file)
		}
		key := strings.Join(parts, "\x01")
		eg := byKey[key]
		if eg == nil {
			eg = &evalGroup{loads: c.loads}
			eg.group = &Group{Name: eg.name(c), Setup: eg.setup}
			if rdfXMLFile(c.loads) != "" {
				eg.group.Setup = nil // its tests are skipped: no database
			}
			byKey[key] = eg
			groups = append(groups, eg.group)
		}
		eg.group.Tests = append(eg.group.Tests, Test{ID: c.id, Run: func(ctx context.Context, _ *Scratch) error {
			if c.skip != "" {
				return Skip(c.skip)
			}
			return guarded(ctx, sparqlEvalTimeout, func(ctx context.Context) error { return c.run(ctx, eg) })
		}})
	}
	return groups
}

// evalGroup is the dataset that a group's tests share, and the engine over it
// once the group is set up.
type evalGroup struct {
	group *Group
	loads []graphLoad
	// engine answers over the mapped dataset; its Options.Base is set per test.
	engine *exec.Engine
}

// name names the group after the folder of its first test and its documents.
func (g *evalGroup) name(first *evalCase) string {
	folder := path.Dir(first.id)
	if len(g.loads) == 0 {
		return folder + " (empty dataset)"
	}
	var files []string
	for _, l := range g.loads {
		f := filepath.Base(l.file)
		if l.graph != "" {
			f = "GRAPH " + f
		}
		files = append(files, f)
	}
	return folder + " " + strings.Join(files, ", ")
}

// setup stores the dataset on the scratch database and builds the engine
// over it, as veneer serve does.
func (g *evalGroup) setup(ctx context.Context, sc *Scratch) error {
	var err error
	g.engine, err = engineOver(ctx, sc, g.loads)
	return err
}

// engineOver stores a dataset on the scratch database and builds the engine
// over it.
func engineOver(ctx context.Context, sc *Scratch, loads []graphLoad) (*exec.Engine, error) {
	cat, err := storeDataset(ctx, sc, loads)
	if err != nil {
		return nil, err
	}
	src, err := sc.Source(ctx)
	if err != nil {
		return nil, err
	}
	return newEngine(ctx, src, cat)
}

// guarded runs f with a deadline. A test that does not return within stopGrace
// after its context ended is left behind and fails, so that one query that
// ignores cancellation cannot stop the run; a panic in f fails the test with
// its stack.
func guarded(ctx context.Context, timeout time.Duration, f func(context.Context) error) error {
	ctx, cancel := context.WithTimeout(ctx, timeout)
	defer cancel()
	done := make(chan error, 1)
	go func() {
		defer func() {
			if p := recover(); p != nil {
				done <- &panicError{value: p, stack: strings.Split(strings.TrimSpace(string(debug.Stack())), "\n")}
			}
		}()
		done <- f(ctx)
	}()
	select {
	case err := <-done:
		return err
	case <-ctx.Done():
	}
	select {
	case err := <-done:
		if err == nil || errors.Is(err, context.DeadlineExceeded) {
			return fmt.Errorf("no answer within %s", timeout)
		}
		return fmt.Errorf("no answer within %s: %w", timeout, err)
	case <-time.After(stopGrace):
		return fmt.Errorf("no answer within %s, and the query did not stop when its context ended", timeout)
	}
}

// panicError is a panic turned into a test failure.
type panicError struct {
	value any
	stack []string
}

func (e *panicError) Error() string     { return fmt.Sprintf("panic: %v", e.value) }
func (e *panicError) Details() []string { return e.stack }

// run runs the test over its group's engine and compares the answer with the
// expected one; a sampled test is asked again through the HTTP handler.
func (c *evalCase) run(ctx context.Context, g *evalGroup) error {
	if c.parseErr != nil {
		return fmt.Errorf("the query is rejected: %w", c.parseErr)
	}
	want, err := readAnswer(c.result)
	if err != nil {
		return err
	}
	text, base, err := c.queryText()
	if err != nil {
		return err
	}
	if c.edit != nil {
		text = c.edit(text)
	}
	// The engine reads query text without a retrieval IRI; a BASE declaration
	// in front gives it the file's (a prologue may start with BASE, §19.8).
	text = "BASE <" + base + ">\n" + text
	e := *g.engine
	e.Options.Base = base
	cmp := comparison{order: c.orderCheck(), lax: c.lax}
	got, err := engineAnswer(ctx, &e, text)
	if err != nil {
		return err
	}
	if err := compareAnswers(want, got, cmp); err != nil {
		return err
	}
	if !c.overHTTP {
		return nil
	}
	got, err = httpAnswer(ctx, &e, text, c.parsed.Form)
	if err == nil {
		err = compareAnswers(want, got, cmp)
	}
	if err != nil {
		return &httpError{err: err}
	}
	return nil
}

// httpError marks a failure of the HTTP path for a test whose answer from the
// engine was right.
type httpError struct{ err error }

func (e *httpError) Error() string { return "over HTTP: " + e.err.Error() }
func (e *httpError) Unwrap() error { return e.err }

// orderCheck returns what the order of the answer must follow: nil when the
// query has no ORDER BY at its top (below the projection, DISTINCT, REDUCED
// and the slice, §18.2.5), the ORDER BY variables when each condition is a
// variable of the result, else the whole solutions.
func (c *evalCase) orderCheck() *orderCheck {
	if c.parsed == nil || c.parsed.Form != algebra.Select {
		return nil
	}
	n := c.parsed.Root
	for {
		switch x := n.(type) {
		case algebra.Slice:
			n = x.Input
			continue
		case algebra.Distinct:
			n = x.Input
			continue
		case algebra.Reduced:
			n = x.Input
			continue
		case algebra.Project:
			n = x.Input
			continue
		case algebra.OrderBy:
			result := map[algebra.Var]bool{}
			for _, v := range c.parsed.Vars {
				result[v] = true
			}
			oc := &orderCheck{}
			for _, cond := range x.Conds {
				v, ok := cond.Expr.(algebra.Var)
				if !ok || !result[v] {
					return &orderCheck{}
				}
				oc.keys = append(oc.keys, string(v))
			}
			return oc
		}
		return nil
	}
}

// engineAnswer runs a query on the engine and reads its whole answer.
func engineAnswer(ctx context.Context, e *exec.Engine, text string) (*answer, error) {
	cur, err := e.Query(ctx, text)
	if err != nil {
		return nil, err
	}
	defer cur.Close()
	a := &answer{ordered: true}
	switch cur.Form() {
	case algebra.Ask:
		b := cur.Boolean()
		a.boolean = &b
	case algebra.Select:
		a.vars = cur.Vars()
		for cur.Next() {
			if len(a.rows) == maxSolutions {
				return nil, fmt.Errorf("more than %d solutions", maxSolutions)
			}
			row := solution{}
			for i, t := range cur.Solution() {
				if t != nil {
					row[a.vars[i]] = t
				}
			}
			a.rows = append(a.rows, row)
		}
	default:
		a.isGraph = true
		for cur.Next() {
			if len(a.graph) == maxSolutions {
				return nil, fmt.Errorf("more than %d triples", maxSolutions)
			}
			a.graph = append(a.graph, cur.Triple())
		}
	}
	if err := cur.Err(); err != nil {
		return nil, err
	}
	return a, cur.Close()
}

// httpAnswer asks a query through the HTTP handler of a server over the
// engine, as a client of the SPARQL 1.1 Protocol would (§2.1.3, POST with the
// query as the body), and reads the answer: SPARQL JSON results, or
// N-Triples for a graph.
func httpAnswer(ctx context.Context, e *exec.Engine, text string, form algebra.Form) (*answer, error) {
	srv, err := newServer(e)
	if err != nil {
		return nil, err
	}
	req := httptest.NewRequestWithContext(ctx, http.MethodPost, "/sparql", strings.NewReader(text))
	req.Header.Set("Content-Type", "application/sparql-query")
	accept := "application/sparql-results+json"
	if form == algebra.Construct || form == algebra.Describe {
		accept = "application/n-triples"
	}
	req.Header.Set("Accept", accept)
	rec := httptest.NewRecorder()
	srv.Handler().ServeHTTP(rec, req)
	body := rec.Body.Bytes()
	if rec.Code != http.StatusOK {
		first, _, _ := strings.Cut(strings.TrimSpace(string(body)), "\n")
		return nil, fmt.Errorf("status %d: %s", rec.Code, first)
	}
	ct, _, _ := strings.Cut(rec.Header().Get("Content-Type"), ";")
	switch strings.TrimSpace(ct) {
	case "application/sparql-results+json":
		return readSRJ(body)
	case "application/n-triples":
		doc, err := rdf.ParseNTriples("the answer", body)
		if err != nil {
			return nil, err
		}
		return &answer{isGraph: true, graph: doc.Triples()}, nil
	}
	return nil, fmt.Errorf("answer of type %q, asked for %s", ct, accept)
}
