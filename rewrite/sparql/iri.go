package sparql

import (
	"strings"

	"veneer/catalog/rdf"
)

// resolve reads the IRI of an IRIREF token and resolves it against the base
// (RFC 3986 §5.2, by rdf.ResolveIRI). Without a base, or with a base that is
// not absolute, a relative reference stays as written: the query has nothing
// to resolve it against.
func (p *parser) resolve(t token) rdf.IRI {
	if msg := checkIRI(t.val); msg != "" {
		p.fail(t.pos, "%s", msg)
	}
	iri, err := rdf.ResolveIRI(p.base, t.val)
	if err != nil {
		return rdf.IRI(t.val)
	}
	return rdf.IRI(iri)
}

// checkIRI reports why s is not an IRI reference (RFC 3987 §2.2), checking
// what the lexer cannot: one fragment at most and well-formed percent escapes.
func checkIRI(s string) string {
	if strings.Count(s, "#") > 1 {
		return "an IRI may contain at most one '#'"
	}
	for i := 0; i < len(s); i++ {
		if s[i] == '%' && (i+2 >= len(s) || hexValue(s[i+1]) < 0 || hexValue(s[i+2]) < 0) {
			return "'%' in an IRI must be followed by two hexadecimal digits"
		}
	}
	return ""
}
