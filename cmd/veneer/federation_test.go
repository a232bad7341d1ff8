package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"net/http"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
	"time"

	dto "github.com/prometheus/client_model/go"
	"github.com/prometheus/common/expfmt"
	"github.com/prometheus/common/model"

	"veneer/catalog"
	"veneer/catalog/r2rml"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/catalog/source/sourcetest"
	"veneer/cmd/veneer/demo"
	"veneer/conformance/differential"
)

// The federation check with sources: the query engine from the npm registry
// (@comunica/query-sparql) is given two veneer instances as its sources, no
// SERVICE in the query, and decides by itself which instance answers which
// triple pattern (it sends each instance COUNT and ASK probes per pattern,
// then sub-queries with VALUES blocks). Both instances serve one database,
// each through half of the demo mapping; the answer must equal the same
// query asked of one instance with the whole mapping, and the answer of the
// reference engine (npm oxigraph) over the demo graph materialised without
// veneer's planner (conformance/differential).

// federatedJoin is a three-way join whose patterns need both halves of the
// split mapping: wf:onTurbine comes from work orders (half A) and
// inspections (half B), wf:locatedAt from turbines (B), and rdfs:label from
// sites (A) as well as from turbines and parts (B).
const federatedJoin = prefixes + `SELECT ?event ?turbine ?siteName WHERE {
  ?event wf:onTurbine ?turbine .
  ?turbine wf:locatedAt ?site .
  ?site rdfs:label ?siteName .
}`

// mapsOfHalfA are the demo mapping's triples maps (cmd/veneer/demo/mapping.ttl)
// that the first instance serves; the second serves the others.
var mapsOfHalfA = []string{"Site", "Technician", "WorkOrder", "OpenWorkOrder"}

// demoMappingNS is the namespace of the demo mapping's triples map names.
const demoMappingNS = "https://data.veneer.example/windfarm/mapping#"

// TestFederatedSources runs the check on SQLite and on PostgreSQL.
func TestFederatedSources(t *testing.T) {
	needNode(t)
	fedDir := npmInstall(t, "federation")
	refDir := t.TempDir()
	differential.RequireReference(t, differential.InstallReference(context.Background(),
		filepath.Join("..", "..", "conformance", "differential", "reference"), refDir, 5*time.Minute))
	for _, d := range []source.Dialect{source.SQLite, source.Postgres} {
		t.Run(d.String(), func(t *testing.T) { federatedSources(t, sourcetest.New(t, d), fedDir, refDir) })
	}
}

func federatedSources(t *testing.T, db *sourcetest.DB, fedDir, refDir string) {
	ctx := context.Background()
	err := demo.Build(ctx, func(ctx context.Context, q string, args ...any) error {
		_, err := db.Admin.ExecContext(ctx, q, args...)
		return err
	}, db.Dialect.String())
	if err != nil {
		t.Fatalf("building the demo database: %v", err)
	}
	whole, err := demoCatalog(ctx)
	if err != nil {
		t.Fatal(err)
	}
	halfA, halfB := splitDemoMapping(t, mapsOfHalfA)

	// The split must share the demo graph out, neither losing nor adding a
	// triple: the graph of A and B together is the graph of the whole mapping.
	data := differential.Database{DB: db.Admin, Dialect: db.Dialect.String()}
	graph := materialise(t, data, whole)
	union := append(materialise(t, data, halfA), materialise(t, data, halfB)...)
	slices.Sort(union)
	union = slices.Compact(union)
	if !slices.Equal(union, graph) {
		t.Fatalf("the two halves of the mapping give %d distinct triples, the whole mapping %d", len(union), len(graph))
	}

	// The reference: oxigraph over the materialised graph.
	graphFile := filepath.Join(t.TempDir(), "demo.nt")
	if err := os.WriteFile(graphFile, []byte(strings.Join(graph, "")), 0o644); err != nil {
		t.Fatal(err)
	}
	ref, err := differential.StartReference(refDir, graphFile, time.Minute)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { ref.Close() })
	body, err := ref.Answer(federatedJoin, false)
	if err != nil {
		t.Fatalf("the reference engine: %v", err)
	}
	reference, err := resultRows(body)
	if err != nil {
		t.Fatalf("the reference engine's answer: %v", err)
	}

	// Three instances, each with its own connection pool on the one database:
	// the whole mapping, half A and half B.
	serveCatalog := func(cat *catalog.Catalog) string {
		src, err := openSource(ctx, &sourceConf{DB: db.DSN})
		if err != nil {
			t.Fatal(err)
		}
		t.Cleanup(func() { src.Close() })
		return startServer(t, src, func(context.Context) (*catalog.Catalog, error) { return cat, nil }, nil)
	}
	single, endA, endB := serveCatalog(whole), serveCatalog(halfA), serveCatalog(halfB)

	want, err := expected(t, single, "select", federatedJoin)
	if err != nil {
		t.Fatal(err)
	}
	wantRows := want.([]string)
	if len(wantRows) == 0 {
		t.Fatal("the single-instance query has no answer; the check would compare nothing")
	}
	if !slices.Equal(reference, wantRows) {
		t.Fatalf("the single instance answers %d solutions, the reference engine %d: %s",
			len(wantRows), len(reference), firstDiff(wantRows, reference))
	}
	// Neither half answers the join alone.
	for _, end := range []string{endA, endB} {
		alone, err := expected(t, end, "select", federatedJoin)
		if err != nil {
			t.Fatal(err)
		}
		if n := len(alone.([]string)); n >= len(wantRows) {
			t.Fatalf("%s alone answers %d of the %d solutions: the join does not need both instances", end, n, len(wantRows))
		}
	}
	t.Logf("%s: the single instance and the reference engine agree on %d solutions", db.Dialect, len(wantRows))

	// The federated query, twice: the first run fills the plan caches, the
	// second is measured with them warm.
	instances := []*instance{{name: "A", endpoint: endA}, {name: "B", endpoint: endB}}
	for run := 1; run <= 2; run++ {
		for _, in := range instances {
			in.before = scrape(t, in.endpoint)
		}
		start := time.Now()
		out, err := node(t, fedDir, nil, "federate.mjs", endA, federatedJoin, endB)
		elapsed := time.Since(start)
		if err != nil {
			t.Fatalf("run %d: %v", run, err)
		}
		var rows []map[string]jsTerm
		if err := json.Unmarshal(out, &rows); err != nil {
			t.Fatalf("run %d: %v: %.300s", run, err, out)
		}
		got := canonical(rows)
		if !slices.Equal(got, wantRows) {
			t.Errorf("run %d: the federated answer has %d solutions, the single instance's %d: %s",
				run, len(got), len(wantRows), firstDiff(got, wantRows))
		}
		var total requestFigures
		for _, in := range instances {
			f, err := figures(scrape(t, in.endpoint), in.before)
			if err != nil {
				t.Fatalf("instance %s: %v", in.name, err)
			}
			t.Logf("%s run %d, instance %s: %s", db.Dialect, run, in.name, f)
			total = total.add(f)
		}
		t.Logf("%s run %d, both instances: %s; %d solutions in %s", db.Dialect, run, total, len(got), elapsed.Round(time.Millisecond))
	}
}

// instance is one veneer instance of the federation and its metrics before a run.
type instance struct {
	name, endpoint string
	before         map[string]*dto.MetricFamily
}

// materialise returns the N-Triples lines of the graph a mapping gives over
// the database, sorted.
func materialise(t *testing.T, db differential.Database, cat *catalog.Catalog) []string {
	t.Helper()
	g, err := differential.Materialise(context.Background(), db, cat)
	if err != nil {
		t.Fatal(err)
	}
	var b bytes.Buffer
	if err := g.WriteNTriples(&b); err != nil {
		t.Fatal(err)
	}
	lines := strings.SplitAfter(b.String(), "\n")
	if lines[len(lines)-1] == "" {
		lines = lines[:len(lines)-1]
	}
	slices.Sort(lines)
	return lines
}

// resultRows reads a SPARQL 1.1 Query Results JSON document (§3) into the
// canonical rows that canonical makes of check.mjs's output.
func resultRows(body []byte) ([]string, error) {
	var doc struct {
		Results struct {
			Bindings []map[string]binding `json:"bindings"`
		} `json:"results"`
	}
	if err := json.Unmarshal(body, &doc); err != nil {
		return nil, err
	}
	return canonicalBindings(doc.Results.Bindings), nil
}

// canonicalBindings gives solutions in JSON results form the canonical rows of
// canonical.
func canonicalBindings(rows []map[string]binding) []string {
	var out []map[string]jsTerm
	for _, r := range rows {
		m := map[string]jsTerm{}
		for k, b := range r {
			m[k] = bindingTerm(b)
		}
		out = append(out, m)
	}
	return canonical(out)
}

// splitDemoMapping splits the demo mapping in two R2RML documents by triples
// maps: the first has the maps named in first, the second the others, and
// each is loaded as a catalog. A referencing object map (R2RML §8) whose
// parent triples map went to the other document gets a stub of that parent:
// its logical table and its subject map without rr:class, and no
// predicate-object maps, so that it gives the join its subject IRIs without
// adding a triple of its own (R2RML §11: a triples map's triples come from
// its class and its predicate-object maps).
func splitDemoMapping(t *testing.T, first []string) (*catalog.Catalog, *catalog.Catalog) {
	t.Helper()
	doc, err := rdf.ParseTurtle("demo/mapping.ttl", []byte(demo.Mapping()), "")
	if err != nil {
		t.Fatal(err)
	}
	triples := doc.Triples()
	const rr = "http://www.w3.org/ns/r2rml#"
	var all []rdf.IRI
	for _, tr := range triples {
		if tr.P == rdf.RDFType && tr.O == rdf.IRI(rr+"TriplesMap") {
			all = append(all, tr.S.(rdf.IRI))
		}
	}
	inA := map[rdf.IRI]bool{}
	for _, name := range first {
		m := rdf.IRI(demoMappingNS + name)
		if !slices.Contains(all, m) {
			t.Fatalf("the demo mapping has no triples map %s", m)
		}
		inA[m] = true
	}
	// closure returns the triples about node and, recursively, about the
	// blank nodes they lead to, except those drop rejects.
	var closure func(node rdf.Term, drop func(rdf.Triple) bool) []rdf.Triple
	closure = func(node rdf.Term, drop func(rdf.Triple) bool) []rdf.Triple {
		var out []rdf.Triple
		for _, tr := range triples {
			if tr.S != node || drop(tr) {
				continue
			}
			out = append(out, tr)
			if _, blank := tr.O.(rdf.BlankNode); blank {
				out = append(out, closure(tr.O, drop)...)
			}
		}
		return out
	}
	keep := func(rdf.Triple) bool { return false }
	half := func(mine func(rdf.IRI) bool, name string) *catalog.Catalog {
		var out []rdf.Triple
		parents := map[rdf.IRI]bool{}
		for _, m := range all {
			if !mine(m) {
				continue
			}
			for _, tr := range closure(m, keep) {
				out = append(out, tr)
				if p, ok := tr.O.(rdf.IRI); ok && tr.P == rdf.IRI(rr+"parentTriplesMap") && !mine(p) {
					parents[p] = true
				}
			}
		}
		for _, p := range all {
			if !parents[p] {
				continue
			}
			out = append(out, rdf.Triple{S: p, P: rdf.RDFType, O: rdf.IRI(rr + "TriplesMap")})
			for _, tr := range triples {
				switch {
				case tr.S != p:
				case tr.P == rdf.IRI(rr+"logicalTable"):
					out = append(append(out, tr), closure(tr.O, keep)...)
				case tr.P == rdf.IRI(rr+"subjectMap"):
					out = append(append(out, tr), closure(tr.O, func(c rdf.Triple) bool { return c.P == rdf.IRI(rr+"class") })...)
				}
			}
		}
		var b bytes.Buffer
		if err := rdf.WriteTurtle(&b, out, doc.Prefixes); err != nil {
			t.Fatal(err)
		}
		cat, err := r2rml.Load(name, b.Bytes())
		if err != nil {
			t.Fatalf("the split mapping %s: %v\n%s", name, err, b.String())
		}
		return cat
	}
	return half(func(m rdf.IRI) bool { return inA[m] }, "demo-half-a.ttl"),
		half(func(m rdf.IRI) bool { return !inA[m] }, "demo-half-b.ttl")
}

// scrape reads the metrics of the instance serving endpoint.
func scrape(t *testing.T, endpoint string) map[string]*dto.MetricFamily {
	t.Helper()
	resp, err := http.Get(strings.TrimSuffix(endpoint, "/sparql") + "/metrics")
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	if resp.StatusCode != http.StatusOK {
		t.Fatalf("GET /metrics: status %d", resp.StatusCode)
	}
	p := expfmt.NewTextParser(model.LegacyValidation)
	fams, err := p.TextToMetricFamilies(resp.Body)
	if err != nil {
		t.Fatalf("reading /metrics: %v", err)
	}
	return fams
}

// The metrics the figures are read from: the server's (server/metrics.go) and
// the planner's plan cache and translation time.
const (
	metricRequests      = "veneer_http_requests_total"
	metricRequestTime   = "veneer_http_request_duration_seconds"
	metricTranslateTime = "veneer_translate_duration_seconds"
	metricPlanCache     = "veneer_plan_cache_lookups_total"
)

// requestFigures are what one run of the federated query cost an instance,
// from the differences of its metrics.
type requestFigures struct {
	requests, failed float64 // on the SPARQL route; failed: status other than 200
	seconds          float64 // answering them, from request to last byte
	translate        float64 // of that, in parse + plan
	hits, misses     float64 // plan cache lookups
}

// figures are the differences between two scrapes of an instance's metrics;
// a metric that is not there is an error.
func figures(after, before map[string]*dto.MetricFamily) (requestFigures, error) {
	sparqlRoute := func(m *dto.Metric) bool { return label(m, "route") == "sparql" }
	var missing []string
	delta := func(name string, keep func(*dto.Metric) bool) float64 {
		a, ok := metricSum(after, name, keep)
		if !ok {
			missing = append(missing, name)
		}
		b, _ := metricSum(before, name, keep)
		return a - b
	}
	f := requestFigures{
		requests:  delta(metricRequests, sparqlRoute),
		failed:    delta(metricRequests, func(m *dto.Metric) bool { return sparqlRoute(m) && label(m, "status") != "200" }),
		seconds:   delta(metricRequestTime, sparqlRoute),
		translate: delta(metricTranslateTime, func(*dto.Metric) bool { return true }),
		hits:      delta(metricPlanCache, func(m *dto.Metric) bool { return label(m, "result") == "hit" }),
		misses:    delta(metricPlanCache, func(m *dto.Metric) bool { return label(m, "result") == "miss" }),
	}
	if len(missing) > 0 {
		slices.Sort(missing)
		return f, fmt.Errorf("/metrics has no %s", strings.Join(slices.Compact(missing), ", "))
	}
	return f, nil
}

// add sums the figures of two instances.
func (f requestFigures) add(g requestFigures) requestFigures {
	return requestFigures{f.requests + g.requests, f.failed + g.failed, f.seconds + g.seconds,
		f.translate + g.translate, f.hits + g.hits, f.misses + g.misses}
}

func (f requestFigures) String() string {
	s := fmt.Sprintf("%.0f requests (%.0f not 200), %.3f s answering", f.requests, f.failed, f.seconds)
	if f.seconds > 0 {
		s += fmt.Sprintf(", parse+plan %.4f s = %.1f %%", f.translate, 100*f.translate/f.seconds)
	}
	if n := f.hits + f.misses; n > 0 {
		s += fmt.Sprintf(", plan cache %.0f hits of %.0f lookups = %.1f %%", f.hits, n, 100*f.hits/n)
	}
	return s
}

// metricSum sums a counter's values, or a histogram's sums of observations
// (the getters give 0 for the part a metric does not have), over the series
// keep accepts; ok is false when the metric is not there.
func metricSum(fams map[string]*dto.MetricFamily, name string, keep func(*dto.Metric) bool) (sum float64, ok bool) {
	fam, ok := fams[name]
	if !ok {
		return 0, false
	}
	for _, m := range fam.GetMetric() {
		if !keep(m) {
			continue
		}
		sum += m.GetCounter().GetValue() + m.GetHistogram().GetSampleSum()
	}
	return sum, true
}

// label is the value of a metric's label, "" when it has none of that name.
func label(m *dto.Metric, name string) string {
	for _, l := range m.GetLabel() {
		if l.GetName() == name {
			return l.GetValue()
		}
	}
	return ""
}
