package server

import (
	"bytes"
	"mime"
	"net/http"
	"strconv"
	"strings"

	"veneer/catalog/rdf"
	"veneer/server/results"
)

// Vocabularies of the service description. The terms are those of SPARQL 1.1
// Service Description (W3C Recommendation, 21 March 2013, §3 and §4) and of
// the W3C format IRIs at http://www.w3.org/ns/formats/ that §3.2.5 refers to
// for sd:resultFormat; written from memory of those documents, which are not
// under ../shared/specs.
const (
	sdNS      = "http://www.w3.org/ns/sparql-service-description#"
	formatsNS = "http://www.w3.org/ns/formats/"
)

// formatIRIs name the result formats of package results in the formats
// vocabulary, for sd:resultFormat.
var formatIRIs = map[results.Format]rdf.IRI{
	results.JSON:     formatsNS + "SPARQL_Results_JSON",
	results.XML:      formatsNS + "SPARQL_Results_XML",
	results.CSV:      formatsNS + "SPARQL_Results_CSV",
	results.TSV:      formatsNS + "SPARQL_Results_TSV",
	results.Turtle:   formatsNS + "Turtle",
	results.NTriples: formatsNS + "N-Triples",
	results.JSONLD:   formatsNS + "JSON-LD",
}

// serviceDescription describes the endpoint at endpoint (SPARQL 1.1 Service
// Description §3): a service that answers SPARQL 1.1 Query in the result
// formats veneer writes, under simple entailment, over a default dataset
// whose default graph is the mapped graph.
func serviceDescription(endpoint string) []rdf.Triple {
	var (
		service = rdf.BlankNode("service")
		dataset = rdf.BlankNode("dataset")
		graph   = rdf.BlankNode("defaultGraph")
	)
	t := func(s rdf.Term, p string, o rdf.Term) rdf.Triple { return rdf.Triple{S: s, P: rdf.IRI(p), O: o} }
	ts := []rdf.Triple{
		t(service, rdf.RDFNS+"type", rdf.IRI(sdNS+"Service")),
		t(service, sdNS+"endpoint", rdf.IRI(endpoint)),
		t(service, sdNS+"supportedLanguage", rdf.IRI(sdNS+"SPARQL11Query")),
	}
	for _, k := range []results.Kind{results.Solutions, results.Graph} {
		for _, f := range results.Formats(k) {
			if iri, ok := formatIRIs[f]; ok {
				ts = append(ts, t(service, sdNS+"resultFormat", iri))
			}
		}
	}
	return append(ts,
		t(service, sdNS+"defaultEntailmentRegime", rdf.IRI("http://www.w3.org/ns/entailment/Simple")),
		t(service, sdNS+"defaultDataset", dataset),
		t(dataset, rdf.RDFNS+"type", rdf.IRI(sdNS+"Dataset")),
		t(dataset, sdNS+"defaultGraph", graph),
		t(graph, rdf.RDFNS+"type", rdf.IRI(sdNS+"Graph")),
	)
}

// The media types the service description is offered in, the default first,
// and the query page's.
const (
	mediaTurtle   = "text/turtle"
	mediaNTriples = "application/n-triples"
	mediaNQuads   = "application/n-quads"
	mediaHTML     = "text/html"
)

var descriptionTypes = []string{mediaTurtle, mediaNTriples, mediaNQuads, mediaHTML}

// describe answers a GET of the endpoint without a query: the service
// description in Turtle, N-Triples or N-Quads, or the query page for a
// browser, whichever the Accept header prefers (Turtle when it has no
// preference). The answer varies with Accept, and the endpoint IRI in it with
// the request's host.
func (s *Server) describe(w http.ResponseWriter, r *http.Request, endpoint string) error {
	mt, ok := preferredMedia(strings.Join(r.Header.Values("Accept"), ","), descriptionTypes)
	w.Header().Add("Vary", "Accept")
	if !ok {
		return &problem{status: http.StatusNotAcceptable,
			msg: "the service description is available as " + strings.Join(descriptionTypes[:3], ", ") + " and the query page as " + mediaHTML}
	}
	info := infoOf(w)
	if mt == mediaHTML {
		info.format = "html"
		s.console.ServePage(w, r)
		return nil
	}
	triples := serviceDescription(endpoint)
	var b bytes.Buffer
	var err error
	switch mt {
	case mediaTurtle:
		info.format = results.Turtle.Name()
		err = rdf.WriteTurtle(&b, triples, []rdf.Prefix{{Name: "sd", IRI: sdNS}, {Name: "fmt", IRI: formatsNS}})
	case mediaNTriples:
		info.format = results.NTriples.Name()
		err = rdf.WriteNTriples(&b, triples)
	case mediaNQuads:
		info.format = "nq"
		quads := make([]rdf.Quad, len(triples))
		for i, t := range triples {
			quads[i] = rdf.Quad{S: t.S, P: t.P, O: t.O}
		}
		err = rdf.WriteNQuads(&b, quads)
	}
	if err != nil {
		return err
	}
	ct := mt
	if strings.HasPrefix(mt, "text/") {
		ct += "; charset=utf-8"
	}
	w.Header().Set("Content-Type", ct)
	w.Header().Set("Content-Length", strconv.Itoa(b.Len()))
	if r.Method != http.MethodHead {
		w.Write(b.Bytes())
	}
	return nil
}

// preferredMedia picks among offers, media types without parameters in order
// of preference, the one that the Accept header weighs most (RFC 9110
// §12.5.1): each offer takes the weight of the most specific media range that
// matches it, q=0 rules it out, and ties go to the earlier offer. An empty or
// unreadable header accepts anything, so the first offer wins.
//
// Package results negotiates its result formats the same way but offers no
// negotiation over other media types; this covers the service description's.
func preferredMedia(accept string, offers []string) (string, bool) {
	type rng struct {
		typ, sub string
		q        float64
	}
	var ranges []rng
	for _, elem := range strings.Split(accept, ",") {
		mt, params, err := mime.ParseMediaType(strings.TrimSpace(elem))
		if err != nil {
			continue
		}
		typ, sub, _ := strings.Cut(mt, "/")
		q := 1.0
		if v, ok := params["q"]; ok {
			if q, err = strconv.ParseFloat(v, 64); err != nil || q < 0 || q > 1 {
				continue
			}
		}
		ranges = append(ranges, rng{typ, sub, q})
	}
	if len(ranges) == 0 {
		return offers[0], true
	}
	best, bestQ := "", 0.0
	for _, offer := range offers {
		typ, sub, _ := strings.Cut(offer, "/")
		q, spec := 0.0, -1
		for _, r := range ranges {
			s := -1
			switch {
			case r.typ == typ && r.sub == sub:
				s = 2
			case r.typ == typ && r.sub == "*":
				s = 1
			case r.typ == "*" && r.sub == "*":
				s = 0
			}
			if s > spec || s == spec && s >= 0 && r.q > q {
				q, spec = r.q, s
			}
		}
		if q > bestQ {
			best, bestQ = offer, q
		}
	}
	return best, bestQ > 0
}
