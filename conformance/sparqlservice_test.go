package conformance

import (
	"path/filepath"
	"slices"
	"testing"

	"veneer/catalog/rdf"
	"veneer/conformance/w3cdir"
)

// TestSPARQLService runs the W3C SPARQL 1.1 Federated Query tests (rdf-tests
// sparql/sparql11/service/manifest.ttl) on each database, each test against
// stand-in endpoints over its qt:serviceData; a failure fails the test, and
// so does a skip list entry that names no test.
func TestSPARQLService(t *testing.T) {
	runOnEachDatabase(t, SPARQLService(), func(t *testing.T, rep *Report) {
		checkReport(t, rep)
		if rep.Passed == 0 {
			t.Error("no test passed: the suite checked nothing")
		}
	})
}

// The suite reads the endpoints of each test from the manifest, and the
// endpoints its query names without data from the query. The values are the
// manifest's and the queries' (rdf-tests sparql11/service: :service2 has two
// qt:serviceData, :service6 calls example1.org, whose pattern calls
// invalid.endpoint.org with SERVICE SILENT).
func TestSPARQLServiceLoad(t *testing.T) {
	dir := w3cdir.ForTest(t)
	root := filepath.Join(dir, "rdf-tests", "sparql")
	groups, err := SPARQLService().Load(dir)
	if err != nil {
		t.Fatal(err)
	}
	var ids []string
	for _, g := range groups {
		for _, tc := range g.Tests {
			ids = append(ids, tc.ID)
		}
	}
	for _, id := range []string{"sparql11/service/service1", "sparql11/service/service4a", "sparql11/service/service7"} {
		if !slices.Contains(ids, id) {
			t.Errorf("no test %s among %v", id, ids)
		}
	}

	m, err := ReadManifest(filepath.Join(root, filepath.FromSlash(serviceManifest)))
	if err != nil {
		t.Fatal(err)
	}
	entry := func(name string) rdf.IRI {
		return rdf.IRI("http://www.w3.org/2009/sparql/docs/tests/data-sparql11/service/manifest#" + name)
	}
	remotes, err := readServiceData(m, entry("service2"))
	if err != nil {
		t.Fatal(err)
	}
	got := map[rdf.IRI]string{}
	for _, r := range remotes {
		if len(r.loads) != 1 {
			t.Fatalf("endpoint %s has %d data files, want 1", r.iri, len(r.loads))
		}
		got[r.iri] = filepath.Base(r.loads[0].file)
	}
	want := map[rdf.IRI]string{"http://example1.org/sparql": "data02endpoint1.ttl", "http://example2.org/sparql": "data02endpoint2.ttl"}
	if len(got) != len(want) || got["http://example1.org/sparql"] != want["http://example1.org/sparql"] ||
		got["http://example2.org/sparql"] != want["http://example2.org/sparql"] {
		t.Errorf("service2's endpoints are %v, want %v", got, want)
	}

	c, err := readEvalCase(m, "sparql11/service", entry("service6"), true)
	if err != nil {
		t.Fatal(err)
	}
	remotes, err = readServiceData(m, entry("service6"))
	if err != nil {
		t.Fatal(err)
	}
	g := &serviceGroup{c: c, remotes: remotes}
	if eps, want := g.endpoints(), []rdf.IRI{"http://example1.org/sparql", "http://invalid.endpoint.org/sparql"}; !slices.Equal(eps, want) {
		t.Errorf("service6's endpoints are %v, want %v", eps, want)
	}
	g.urls = map[rdf.IRI]string{"http://example1.org/sparql": "http://127.0.0.1:9/sparql"}
	if got, want := g.pointAtStandIns("SERVICE <http://example1.org/sparql> { ?s ?p ?o }"), "SERVICE <http://127.0.0.1:9/sparql> { ?s ?p ?o }"; got != want {
		t.Errorf("rewritten to %q, want %q", got, want)
	}
}
