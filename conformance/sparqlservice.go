package conformance

import (
	"context"
	"errors"
	"fmt"
	"net"
	"path/filepath"
	"slices"
	"strings"

	"veneer/catalog/rdf"
	"veneer/rewrite/algebra"
)

// The SPARQL 1.1 Federated Query tests: the folder sparql11/service of
// rdf-tests/sparql, whose manifest gives each test, besides its query, local
// data (qt:data) and expected result, the data of each remote endpoint the
// query calls: qt:serviceData [ qt:endpoint <iri> ; qt:data <file> ] (the
// folder's README introduces the two terms).
const (
	qtServiceData = rdf.IRI(qtNS + "serviceData")
	qtEndpoint    = rdf.IRI(qtNS + "endpoint")
)

// serviceManifest is the suite's manifest, under rdf-tests/sparql.
const serviceManifest = "sparql11/service/manifest.ttl"

// SPARQLService is the suite "sparql-service". Each test gets stand-in
// endpoints on loopback: for each qt:serviceData a veneer instance over its
// data, stored the way the sparql-eval suite stores a dataset (triple tables
// on a throw-away database of its own, served by a generated mapping), and
// for an endpoint IRI that the query names without data (the tests'
// "invalid" endpoints) a listener that closes every connection unanswered.
// The endpoint IRIs are example.org names that cannot be called from here, so
// the runner rewrites them in the query text to the stand-ins' loopback URLs;
// the local engine and every stand-in allow exactly those URLs (the SERVICE
// allowlist, exec.Options.ServiceAllow), so that a nested SERVICE inside a
// remote pattern reaches its stand-in too. The query runs on the engine over
// the local data (qt:data) and through the HTTP handler, and its answer is
// compared with the expected one as in sparql-eval.
//
// A test's identifier is "sparql11/service/" and its name in the manifest.
func SPARQLService() Suite { return sparqlServiceSuite{} }

type sparqlServiceSuite struct{}

func (sparqlServiceSuite) Name() string        { return "sparql-service" }
func (sparqlServiceSuite) NeedsDatabase() bool { return true }

func (sparqlServiceSuite) Load(dir string) ([]*Group, error) {
	root, err := filepath.Abs(filepath.Join(dir, "rdf-tests", "sparql"))
	if err != nil {
		return nil, err
	}
	m, err := ReadManifest(filepath.Join(root, filepath.FromSlash(serviceManifest)))
	if err != nil {
		return nil, err
	}
	folder, err := filepath.Rel(root, m.Dir)
	if err != nil {
		return nil, err
	}
	_, entries, err := m.Entries()
	if err != nil {
		return nil, err
	}
	var groups []*Group
	for _, e := range entries {
		ty, err := m.Object(e, rdf.RDFType)
		if err != nil {
			return nil, err
		}
		if ty != rdf.Term(mfQueryEval) {
			continue
		}
		c, err := readEvalCase(m, filepath.ToSlash(folder), e, true)
		if err != nil {
			return nil, err
		}
		remotes, err := readServiceData(m, e)
		if err != nil {
			return nil, err
		}
		groups = append(groups, newServiceGroup(c, remotes))
	}
	if len(groups) == 0 {
		return nil, fmt.Errorf("no evaluation tests in %s", m.Path)
	}
	return groups, nil
}

// remoteEndpoint is one qt:serviceData of a test: an endpoint and its data.
type remoteEndpoint struct {
	iri   rdf.IRI
	loads []graphLoad
}

// readServiceData reads the qt:serviceData of a test's action.
func readServiceData(m *Manifest, entry rdf.Term) ([]remoteEndpoint, error) {
	action, err := m.Object(entry, mfAction)
	if err != nil {
		return nil, err
	}
	var out []remoteEndpoint
	for _, sd := range m.Objects(action, qtServiceData) {
		ep, err := m.Object(sd, qtEndpoint)
		if err != nil {
			return nil, err
		}
		iri, ok := ep.(rdf.IRI)
		if !ok {
			return nil, m.Errorf(entry, "qt:serviceData without an endpoint IRI (qt:endpoint %v)", ep)
		}
		r := remoteEndpoint{iri: iri}
		for _, d := range m.Objects(sd, qtData) {
			p, err := fileOf(m, sd, d)
			if err != nil {
				return nil, err
			}
			r.loads = append(r.loads, graphLoad{file: p})
		}
		out = append(out, r)
	}
	return out, nil
}

// serviceGroup is one test and its stand-in endpoints; each test has a group
// of its own, as its endpoints differ.
type serviceGroup struct {
	eval    evalGroup
	c       *evalCase
	remotes []remoteEndpoint
	// urls are the loopback URLs of the stand-ins, by endpoint IRI, once the
	// group is set up.
	urls map[rdf.IRI]string
}

func newServiceGroup(c *evalCase, remotes []remoteEndpoint) *Group {
	g := &serviceGroup{c: c, remotes: remotes, eval: evalGroup{loads: c.loads}}
	c.overHTTP = true
	c.edit = g.pointAtStandIns
	g.eval.group = &Group{Name: c.id, Setup: g.setup, Tests: []Test{{ID: c.id, Run: func(ctx context.Context, _ *Scratch) error {
		if c.skip != "" {
			return Skip(c.skip)
		}
		return guarded(ctx, sparqlEvalTimeout, func(ctx context.Context) error { return c.run(ctx, &g.eval) })
	}}}}
	return g.eval.group
}

// pointAtStandIns rewrites the endpoint IRIs written in a query to the URLs
// of their stand-ins.
func (g *serviceGroup) pointAtStandIns(text string) string {
	for iri, u := range g.urls {
		text = strings.ReplaceAll(text, "<"+string(iri)+">", "<"+u+">")
	}
	return text
}

// endpoints are the IRIs of the test's endpoints: those with data, then those
// the query's SERVICE clauses name without data, in the order written.
func (g *serviceGroup) endpoints() []rdf.IRI {
	var out []rdf.IRI
	for _, r := range g.remotes {
		out = append(out, r.iri)
	}
	if g.c.parsed == nil {
		return out
	}
	algebra.Transform(g.c.parsed.Root, func(n algebra.Node) (algebra.Node, bool) {
		if s, ok := n.(algebra.Service); ok {
			if iri, ok := algebra.TermOf(s.Endpoint).(rdf.IRI); ok && !slices.Contains(out, iri) {
				out = append(out, iri)
			}
		}
		return n, false
	})
	return out
}

// setup starts the stand-ins, each endpoint with data on a database of its
// own, and builds the engine over the local data.
func (g *serviceGroup) setup(ctx context.Context, sc *Scratch) error {
	// Every stand-in listens before any is served, so that each can be
	// allowed to call the others.
	listeners := map[rdf.IRI]net.Listener{}
	defer func() {
		for _, ln := range listeners { // those not handed to a server
			ln.Close()
		}
	}()
	g.urls = map[rdf.IRI]string{}
	var allow []string
	for _, iri := range g.endpoints() {
		ln, err := net.Listen("tcp", "127.0.0.1:0")
		if err != nil {
			return fmt.Errorf("listening for the stand-in of %s: %w", iri, err)
		}
		listeners[iri] = ln
		g.urls[iri] = "http://" + ln.Addr().String() + "/sparql"
		allow = append(allow, g.urls[iri])
	}
	for _, r := range g.remotes {
		db, err := sc.Another(ctx)
		if err != nil {
			return err
		}
		e, err := engineOver(ctx, db, r.loads)
		if err != nil {
			return fmt.Errorf("the stand-in of %s: %w", r.iri, err)
		}
		e.Options.ServiceAllow = allow
		if err := serveOn(db, e, listeners[r.iri]); err != nil {
			return err
		}
		delete(listeners, r.iri)
	}
	for iri, ln := range listeners {
		refuseOn(sc, ln)
		delete(listeners, iri)
	}
	e, err := engineOver(ctx, sc, g.eval.loads)
	if err != nil {
		return err
	}
	e.Options.ServiceAllow = allow
	g.eval.engine = e
	return nil
}

// refuseOn closes every connection ln accepts without a word, as an endpoint
// that is not there would, until the scratch database is closed.
func refuseOn(sc *Scratch, ln net.Listener) {
	done := make(chan struct{})
	go func() {
		defer close(done)
		for {
			conn, err := ln.Accept()
			if err != nil {
				return
			}
			conn.Close()
		}
	}()
	sc.atClose(func() error {
		err := ln.Close()
		<-done
		if errors.Is(err, net.ErrClosed) {
			return nil
		}
		return err
	})
}
