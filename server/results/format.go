package results

import (
	"fmt"
	"io"
	"slices"
	"strings"

	"veneer/catalog/rdf"
)

// Kind is what a query form answers with.
type Kind uint8

// The kinds of answer.
const (
	Solutions Kind = 1 << iota // SELECT: a sequence of solutions
	Boolean                    // ASK: true or false
	Graph                      // CONSTRUCT and DESCRIBE: RDF triples
)

// String names the kind for messages.
func (k Kind) String() string {
	switch k {
	case Solutions:
		return "solutions"
	case Boolean:
		return "boolean"
	case Graph:
		return "graph"
	}
	return fmt.Sprintf("Kind(%d)", uint8(k))
}

// Format is a result format: its media type, the short name a request can
// give in a format parameter, and the kinds of answer it can carry. Formats
// are comparable; the package variables below are all there are.
type Format struct {
	name, mediaType string
	kinds           Kind
}

// The result formats.
var (
	// JSON is the SPARQL 1.1 Query Results JSON Format.
	JSON = Format{"json", "application/sparql-results+json", Solutions | Boolean}
	// XML is the SPARQL Query Results XML Format.
	XML = Format{"xml", "application/sparql-results+xml", Solutions | Boolean}
	// CSV is the CSV format of SPARQL 1.1 Query Results CSV and TSV Formats.
	CSV = Format{"csv", "text/csv", Solutions}
	// TSV is the TSV format of SPARQL 1.1 Query Results CSV and TSV Formats.
	TSV = Format{"tsv", "text/tab-separated-values", Solutions}
	// Turtle is RDF 1.1 Turtle.
	Turtle = Format{"ttl", "text/turtle", Graph}
	// NTriples is RDF 1.1 N-Triples.
	NTriples = Format{"nt", "application/n-triples", Graph}
	// JSONLD is JSON-LD 1.1, written in expanded form.
	JSONLD = Format{"jsonld", "application/ld+json", Graph}
)

// formats lists the formats in order of preference: the first one of a kind
// is its default, and Negotiate breaks ties with the order. aliases are other
// media types that name the format in an Accept header or format parameter;
// application/json names JSON results for solutions and JSON-LD for graphs,
// the JSON a client asking for plain JSON can use.
var formats = []struct {
	Format
	aliases []string
}{
	{JSON, []string{"application/json"}},
	{XML, nil},
	{CSV, nil},
	{TSV, nil},
	{Turtle, []string{"application/x-turtle"}},
	{NTriples, nil},
	{JSONLD, []string{"application/json"}},
}

// Name returns the short name of the format: json, xml, csv, tsv, ttl, nt or jsonld.
func (f Format) Name() string { return f.name }

// MediaType returns the media type of the format, without parameters.
func (f Format) MediaType() string { return f.mediaType }

// ContentType returns the value for a Content-Type header: the media type,
// with "; charset=utf-8" for the text/* types, whose default charset would
// otherwise be left to the client. The other types are UTF-8 by definition.
func (f Format) ContentType() string {
	if strings.HasPrefix(f.mediaType, "text/") {
		return f.mediaType + "; charset=utf-8"
	}
	return f.mediaType
}

// Supports reports whether the format can carry an answer of kind k.
func (f Format) Supports(k Kind) bool { return f.kinds&k != 0 }

// Formats returns the formats that can carry an answer of kind k, the default first.
func Formats(k Kind) []Format {
	var fs []Format
	for _, e := range formats {
		if e.Supports(k) {
			fs = append(fs, e.Format)
		}
	}
	return fs
}

// Lookup finds the format for an answer of kind k named by a request's format
// parameter: a short name (see Format.Name) or a media type, in any case.
func Lookup(name string, k Kind) (Format, bool) {
	name, _, _ = strings.Cut(name, ";")
	name = strings.ToLower(strings.TrimSpace(name))
	for _, e := range formats {
		if e.Supports(k) && (name == e.name || name == e.mediaType || slices.Contains(e.aliases, name)) {
			return e.Format, true
		}
	}
	return Format{}, false
}

// NewSelectWriter returns the SelectWriter of f: NewJSON, NewXML, NewCSV or NewTSV.
func NewSelectWriter(f Format, w io.Writer) (SelectWriter, error) {
	switch f {
	case JSON:
		return NewJSON(w), nil
	case XML:
		return NewXML(w), nil
	case CSV:
		return NewCSV(w), nil
	case TSV:
		return NewTSV(w), nil
	}
	return nil, fmt.Errorf("results: format %q cannot carry %s", f.name, Solutions)
}

// NewGraphWriter returns the GraphWriter of f: NewTurtle, NewNTriples or
// NewJSONLD. prefixes are for Turtle (the query's own prefixes make the
// answer easy to read); the other formats have no use for them.
func NewGraphWriter(f Format, w io.Writer, prefixes []rdf.Prefix) (GraphWriter, error) {
	switch f {
	case Turtle:
		return NewTurtle(w, prefixes), nil
	case NTriples:
		return NewNTriples(w), nil
	case JSONLD:
		return NewJSONLD(w), nil
	}
	return nil, fmt.Errorf("results: format %q cannot carry a %s", f.name, Graph)
}

// WriteBoolean writes the whole answer of an ASK query in f and flushes it.
// Only JSON and XML define a form for it: the CSV and TSV formats describe
// tables of solutions only, so for them WriteBoolean writes nothing and
// returns an error.
func WriteBoolean(f Format, w io.Writer, v bool) error {
	s := newSink(w)
	switch f {
	case JSON:
		s.buf = appendJSONBoolean(s.buf, v)
	case XML:
		s.buf = appendXMLBoolean(s.buf, v)
	default:
		return fmt.Errorf("results: format %q cannot carry a %s answer", f.name, Boolean)
	}
	if err := s.send(); err != nil {
		return fmt.Errorf("results: writing %s boolean: %w", f.name, err)
	}
	s.release()
	return nil
}
