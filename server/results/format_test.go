package results

import (
	"bytes"
	"testing"
)

// TestNegotiate checks format selection from Accept headers. The weights
// follow RFC 9110 §12.5.1: a media range's q (default 1, §12.4.2) applies to
// the media types it matches, the most specific matching range decides for a
// given type ("text/csv" over "text/*" over "*/*"), and q=0 means "not
// acceptable". Ties between different types are not ordered by the RFC; the
// server's preference (Formats order) breaks them, which is common practice.
func TestNegotiate(t *testing.T) {
	const browser = "text/html,application/xhtml+xml,application/xml;q=0.9,image/avif,image/webp,*/*;q=0.8"
	for _, c := range []struct {
		accept string
		kind   Kind
		want   Format
		ok     bool
	}{
		// Absent header: any type is acceptable (§12.5.1), so the default.
		{"", Solutions, JSON, true},
		{"", Boolean, JSON, true},
		{"", Graph, Turtle, true},
		{"*/*", Solutions, JSON, true},
		{"*/*", Graph, Turtle, true},
		// A browser: only */* matches, so the default.
		{browser, Solutions, JSON, true},
		{browser, Graph, Turtle, true},
		// Exact types.
		{"application/sparql-results+xml", Solutions, XML, true},
		{"text/csv", Solutions, CSV, true},
		{"text/tab-separated-values", Solutions, TSV, true},
		{"application/n-triples", Graph, NTriples, true},
		{"application/ld+json", Graph, JSONLD, true},
		{"text/turtle", Graph, Turtle, true},
		// q-values: the highest weight wins.
		{"application/sparql-results+xml;q=0.5, application/sparql-results+json", Solutions, JSON, true},
		{"application/sparql-results+json;q=0.4, application/sparql-results+xml;q=0.5", Solutions, XML, true},
		{"text/csv;q=0.9, text/tab-separated-values", Solutions, TSV, true},
		{"text/turtle;q=0.1, application/n-triples;q=0.2, application/ld+json;q=0.15", Graph, NTriples, true},
		// Wildcards, and the more specific range overriding them.
		{"text/*", Solutions, CSV, true},
		{"text/*, text/csv;q=0.5", Solutions, TSV, true},
		{"application/*", Solutions, JSON, true},
		{"application/*;q=0.2, application/sparql-results+json;q=0.1", Solutions, XML, true},
		{"*/*;q=0.1, text/csv", Solutions, CSV, true},
		{"*/*, application/sparql-results+json;q=0", Solutions, XML, true},
		{"application/sparql-results+json;q=0, application/sparql-results+xml;q=0, */*", Solutions, CSV, true},
		// The same range twice: the RFC does not say; the more generous weight counts.
		{"text/csv;q=0.8, text/csv;q=0.2, text/tab-separated-values;q=0.5", Solutions, CSV, true},
		// Equal weights: the more specific match, then the server's order.
		{"text/*, application/sparql-results+xml", Solutions, XML, true},
		{"text/tab-separated-values, text/csv", Solutions, CSV, true},
		// Nothing acceptable: 406.
		{"image/png", Solutions, Format{}, false},
		{"text/csv;q=0", Solutions, Format{}, false},
		{"*/*;q=0", Solutions, Format{}, false},
		{"text/csv", Boolean, Format{}, false},
		{"application/sparql-results+json", Graph, Format{}, false},
		{"text/turtle", Solutions, Format{}, false},
		{"text/csv, */*;q=0.1", Boolean, JSON, true},
		// Case-insensitive type and subtype (RFC 9110 §8.3.1), parameters,
		// whitespace, and quoted parameter values with separators in them.
		{"TEXT/CSV", Solutions, CSV, true},
		{"text/csv;charset=utf-8;header=present", Solutions, CSV, true},
		{" text/csv ; q=0.5 , application/sparql-results+xml ; Q=0.7 ", Solutions, XML, true},
		{`application/ld+json;profile="http://www.w3.org/ns/json-ld#expanded, x;y";q=0.9, text/turtle;q=0.8`, Graph, JSONLD, true},
		// application/json stands for JSON results and for JSON-LD.
		{"application/json", Solutions, JSON, true},
		{"application/json", Graph, JSONLD, true},
		// Unreadable elements are skipped (qvalue grammar of §12.4.2: at most
		// three decimals, at most 1); with none left the header counts as absent.
		{"text/csv;q=1.5, application/sparql-results+xml;q=0.1", Solutions, XML, true},
		{"text/csv;q=0.1234, application/sparql-results+xml;q=0.1", Solutions, XML, true},
		{"text/csv;q=abc", Solutions, JSON, true},
		{"garbage", Solutions, JSON, true},
		{"*/csv", Solutions, JSON, true},
		{",,text/csv,,", Solutions, CSV, true},
		{"text/csv;q=1.000", Solutions, CSV, true},
		{"text/csv;q=0.", Solutions, Format{}, false},
	} {
		got, ok := Negotiate(c.accept, c.kind)
		if got != c.want || ok != c.ok {
			t.Errorf("Negotiate(%q, %v) = %s, %v; want %s, %v", c.accept, c.kind, got.Name(), ok, c.want.Name(), c.ok)
		}
	}
}

// TestLookup checks the format parameter values: short names and media
// types, in any case, for the kinds the format can carry.
func TestLookup(t *testing.T) {
	for _, c := range []struct {
		name string
		kind Kind
		want Format
		ok   bool
	}{
		{"json", Solutions, JSON, true},
		{"JSON", Boolean, JSON, true},
		{"xml", Boolean, XML, true},
		{"csv", Solutions, CSV, true},
		{"tsv", Solutions, TSV, true},
		{"ttl", Graph, Turtle, true},
		{"nt", Graph, NTriples, true},
		{"jsonld", Graph, JSONLD, true},
		{"application/sparql-results+json", Solutions, JSON, true},
		{" text/csv; charset=utf-8", Solutions, CSV, true},
		{"application/json", Graph, JSONLD, true},
		{"csv", Boolean, Format{}, false},
		{"csv", Graph, Format{}, false},
		{"ttl", Solutions, Format{}, false},
		{"html", Solutions, Format{}, false},
		{"", Solutions, Format{}, false},
	} {
		got, ok := Lookup(c.name, c.kind)
		if got != c.want || ok != c.ok {
			t.Errorf("Lookup(%q, %v) = %s, %v; want %s, %v", c.name, c.kind, got.Name(), ok, c.want.Name(), c.ok)
		}
	}
}

// TestFormats checks the registry: media types (the ones the W3C
// Recommendations register), content types, and the constructors refusing
// formats of the wrong kind.
func TestFormats(t *testing.T) {
	for _, c := range []struct {
		f                     Format
		mediaType, contentTyp string
	}{
		{JSON, "application/sparql-results+json", "application/sparql-results+json"},
		{XML, "application/sparql-results+xml", "application/sparql-results+xml"},
		{CSV, "text/csv", "text/csv; charset=utf-8"},
		{TSV, "text/tab-separated-values", "text/tab-separated-values; charset=utf-8"},
		{Turtle, "text/turtle", "text/turtle; charset=utf-8"},
		{NTriples, "application/n-triples", "application/n-triples"},
		{JSONLD, "application/ld+json", "application/ld+json"},
	} {
		if c.f.MediaType() != c.mediaType || c.f.ContentType() != c.contentTyp {
			t.Errorf("%s: %q, %q", c.f.Name(), c.f.MediaType(), c.f.ContentType())
		}
	}
	names := func(fs []Format) (s string) {
		for _, f := range fs {
			s += f.Name() + " "
		}
		return s
	}
	if got := names(Formats(Solutions)); got != "json xml csv tsv " {
		t.Errorf("Formats(Solutions) = %s", got)
	}
	if got := names(Formats(Boolean)); got != "json xml " {
		t.Errorf("Formats(Boolean) = %s", got)
	}
	if got := names(Formats(Graph)); got != "ttl nt jsonld " {
		t.Errorf("Formats(Graph) = %s", got)
	}
	var buf bytes.Buffer
	for _, f := range Formats(Graph) {
		if _, err := NewSelectWriter(f, &buf); err == nil {
			t.Errorf("NewSelectWriter(%s) accepted", f.Name())
		}
	}
	for _, f := range Formats(Solutions) {
		if _, err := NewGraphWriter(f, &buf, nil); err == nil {
			t.Errorf("NewGraphWriter(%s) accepted", f.Name())
		}
		if _, err := NewSelectWriter(f, &buf); err != nil {
			t.Errorf("NewSelectWriter(%s): %v", f.Name(), err)
		}
	}
	if err := WriteBoolean(Turtle, &buf, true); err == nil || buf.Len() != 0 {
		t.Errorf("WriteBoolean(ttl) = %v after %d bytes", err, buf.Len())
	}
}
