package conformance

import (
	"testing"

	"veneer/conformance/w3cdir"
)

// TestProtocol runs the W3C SPARQL 1.1 Protocol and service description tests
// (rdf-tests sparql11/protocol and sparql11/service-description, as their
// manifests list them) over HTTP against veneer's server on each database. A
// test that fails fails this test unless testdata/known-protocol.txt lists it;
// testdata/skip-protocol.txt leaves out the update tests.
func TestProtocol(t *testing.T) {
	runOnEachDatabase(t, Protocol(), func(t *testing.T, rep *Report) {
		checkReport(t, rep)
		if rep.Passed == 0 {
			t.Error("no test passed")
		}
	})
}

// The suite's identifiers name the folder and the test, and every test the
// two manifests list is there (rdf-tests sparql11/protocol/manifest.ttl
// :query_post_form and :update_base_uri, sparql11/service-description
// manifest.ttl :has-endpoint-triple).
func TestProtocolLoad(t *testing.T) {
	groups, err := Protocol().Load(w3cdir.ForTest(t))
	if err != nil {
		t.Fatal(err)
	}
	ids := map[string]bool{}
	for _, g := range groups {
		if g.Setup == nil {
			t.Errorf("group %s has no set-up", g.Name)
		}
		for _, tc := range g.Tests {
			ids[tc.ID] = true
		}
	}
	for _, id := range []string{"sparql11/protocol/query_post_form", "sparql11/protocol/update_base_uri", "sparql11/service-description/has-endpoint-triple"} {
		if !ids[id] {
			t.Errorf("no test %s among %d", id, len(ids))
		}
	}
	// The tests with ut:graphData share servers by their documents: the
	// query_dataset tests use data1.nt to data3.nt (manifest.ttl).
	if len(groups) < 2 {
		t.Errorf("%d groups, want the demo's and those of the ut:graphData tests", len(groups))
	}
}
