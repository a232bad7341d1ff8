package results

import (
	"fmt"
	"io"
	"slices"
	"strings"

	"veneer/catalog/rdf"
)

// NewTurtle returns a writer of RDF 1.1 Turtle (text/turtle). Consecutive
// triples with the same subject share it (predicate lists, ';'), and with the
// same predicate too (object lists, ','); rdf:type is written "a"; numbers and
// booleans take their short form where that keeps the lexical form. The
// writer declares prefixes and writes an IRI as a prefixed name when the part
// after the longest matching prefix needs no escapes in Turtle. A prefix
// declared twice keeps its last IRI. Blank nodes may be renamed
// (see the package documentation).
func NewTurtle(w io.Writer, prefixes []rdf.Prefix) GraphWriter {
	var ps []rdf.Prefix
	for i, p := range prefixes {
		if !slices.ContainsFunc(prefixes[i+1:], func(q rdf.Prefix) bool { return q.Name == p.Name }) {
			ps = append(ps, p)
		}
	}
	return newGraphWriter(w, "Turtle", &turtleEncoder{terms: termSyntax{prefixes: ps, short: true}})
}

// NewNTriples returns a writer of RDF 1.1 N-Triples (application/n-triples):
// one triple per line. Blank nodes may be renamed (see the package
// documentation).
func NewNTriples(w io.Writer) GraphWriter {
	return newGraphWriter(w, "N-Triples", ntriplesEncoder{})
}

// turtleEncoder writes Turtle statements, keeping the last statement open
// so that the next triple can join its predicate or object list.
type turtleEncoder struct {
	terms termSyntax
	// subject and predicate of the open statement; nil before the first triple.
	subject, predicate rdf.Term
}

// begin writes the prefix declarations:
//
//	[4] prefixID ::= '@prefix' PNAME_NS IRIREF '.'
func (e *turtleEncoder) begin(dst []byte) ([]byte, error) {
	for _, p := range e.terms.prefixes {
		if err := checkUTF8(p.Name); err != nil {
			return dst, fmt.Errorf("prefix %q: %w", p.Name, err)
		}
		// PNAME_NS ::= PN_PREFIX? ':' (RDF 1.1 Turtle §6.5 [139s]): the empty prefix is one too.
		if p.Name != "" && !rdf.IsPrefixName(p.Name) {
			return dst, fmt.Errorf("prefix %q is not a Turtle PN_PREFIX", p.Name)
		}
		dst = append(dst, "@prefix "...)
		dst = append(dst, p.Name...)
		dst = append(dst, ": "...)
		var err error
		if dst, err = (termSyntax{}).appendIRI(dst, p.IRI); err != nil {
			return dst, fmt.Errorf("prefix %s: %w", p.Name, err)
		}
		dst = append(dst, " .\n"...)
	}
	if len(e.terms.prefixes) > 0 {
		dst = append(dst, '\n')
	}
	return dst, nil
}

// triple continues the open statement or starts a new one:
//
//	[6]  triples             ::= subject predicateObjectList | ...
//	[7]  predicateObjectList ::= verb objectList (';' (verb objectList)?)*
//	[8]  objectList          ::= object (',' object)*
//	[9]  verb                ::= predicate | 'a'
func (e *turtleEncoder) triple(dst []byte, t rdf.Triple) ([]byte, error) {
	var err error
	switch {
	case e.subject == t.S && e.predicate == t.P:
		dst = append(dst, " ,\n        "...)
	case e.subject == t.S:
		dst = append(dst, " ;\n    "...)
		if dst, err = e.appendVerb(dst, t.P); err != nil {
			return dst, err
		}
		dst = append(dst, ' ')
	default:
		if e.subject != nil {
			dst = append(dst, " .\n"...)
		}
		if dst, err = e.terms.appendTerm(dst, t.S); err != nil {
			return dst, err
		}
		dst = append(dst, ' ')
		if dst, err = e.appendVerb(dst, t.P); err != nil {
			return dst, err
		}
		dst = append(dst, ' ')
	}
	if dst, err = e.terms.appendTerm(dst, t.O); err != nil {
		return dst, err
	}
	e.subject, e.predicate = t.S, t.P
	return dst, nil
}

func (e *turtleEncoder) appendVerb(dst []byte, p rdf.Term) ([]byte, error) {
	if p == rdf.RDFType {
		return append(dst, 'a'), nil
	}
	return e.terms.appendTerm(dst, p)
}

func (e *turtleEncoder) end(dst []byte) []byte {
	if e.subject != nil {
		dst = append(dst, " .\n"...)
	}
	return dst
}

// ntriplesEncoder writes N-Triples lines:
//
//	[2] triple ::= subject predicate object '.'
type ntriplesEncoder struct{}

func (ntriplesEncoder) begin(dst []byte) ([]byte, error) { return dst, nil }

func (ntriplesEncoder) triple(dst []byte, t rdf.Triple) ([]byte, error) {
	var terms termSyntax
	for i, term := range [3]rdf.Term{t.S, t.P, t.O} {
		if i > 0 {
			dst = append(dst, ' ')
		}
		var err error
		if dst, err = terms.appendTerm(dst, term); err != nil {
			return dst, err
		}
	}
	return append(dst, " .\n"...), nil
}

func (ntriplesEncoder) end(dst []byte) []byte { return dst }

// termSyntax writes RDF terms in the syntax N-Triples, Turtle and TSV share:
// IRIs in angle brackets, literals in double quotes escaped as
// veneer/catalog/rdf escapes them, blank nodes as appendBlankLabel says.
type termSyntax struct {
	// prefixes lets IRIs be written as prefixed names (Turtle).
	prefixes []rdf.Prefix
	// short lets numbers and booleans be written bare (Turtle, TSV).
	short bool
}

func (s termSyntax) appendTerm(dst []byte, t rdf.Term) ([]byte, error) {
	switch t := t.(type) {
	case rdf.IRI:
		return s.appendIRI(dst, t)
	case rdf.BlankNode:
		if err := checkUTF8(string(t)); err != nil {
			return dst, err
		}
		return appendBlankLabel(dst, string(t)), nil
	case rdf.Literal:
		return s.appendLiteral(dst, t)
	}
	return dst, nil
}

func (s termSyntax) appendIRI(dst []byte, iri rdf.IRI) ([]byte, error) {
	if err := checkUTF8(string(iri)); err != nil {
		return dst, err
	}
	if name, local, ok := s.prefixed(iri); ok {
		dst = append(dst, name...)
		dst = append(dst, ':')
		return append(dst, local...), nil
	}
	if i := strings.IndexFunc(string(iri), notInIRIRef); i >= 0 {
		return dst, fmt.Errorf("IRI %q has %q at byte %d, which an IRI cannot hold", iri, iri[i], i)
	}
	dst = append(dst, '<')
	dst = append(dst, iri...)
	return append(dst, '>'), nil
}

// notInIRIRef reports whether r is left out of IRIREF (RDF 1.1 Turtle §6.5):
//
//	[18] IRIREF ::= '<' ([^#x00-#x20<>"{}|^`\] | UCHAR)* '>'
//
// Such a character cannot be in an IRI at all (RFC 3987 §2.2), and a reader
// refuses it even as a UCHAR escape, so the writers refuse it too instead of
// writing a document that cannot be read.
func notInIRIRef(r rune) bool { return !rdf.IsIRIChar(r) }

// prefixed finds the longest prefix IRI that iri starts with and whose rest of
// iri is a local name that needs no escapes.
func (s termSyntax) prefixed(iri rdf.IRI) (name, local string, ok bool) {
	best := -1
	for i, p := range s.prefixes {
		rest, found := strings.CutPrefix(string(iri), string(p.IRI))
		if found && rdf.IsLocalName(rest) && (best < 0 || len(p.IRI) > len(s.prefixes[best].IRI)) {
			best, local = i, rest
		}
	}
	if best < 0 {
		return "", "", false
	}
	return s.prefixes[best].Name, local, true
}

// appendLiteral writes a literal:
//
//	[128s] RDFLiteral ::= String (LANGTAG | '^^' iri)?
//
// or, when short allows, a NumericLiteral or BooleanLiteral.
func (s termSyntax) appendLiteral(dst []byte, l rdf.Literal) ([]byte, error) {
	if err := checkUTF8(l.Lexical); err != nil {
		return dst, err
	}
	if s.short && isShortLiteral(l) {
		return append(dst, l.Lexical...), nil
	}
	dst = append(dst, '"')
	dst = append(dst, rdf.EscapeString(l.Lexical)...)
	dst = append(dst, '"')
	switch {
	case l.Lang != "":
		if !isLangTag(l.Lang) {
			return dst, fmt.Errorf("language tag %q is not a LANGTAG", l.Lang)
		}
		dst = append(dst, '@')
		dst = append(dst, l.Lang...)
	case l.Datatype != "" && l.Datatype != rdf.XSDString:
		dst = append(dst, "^^"...)
		return s.appendIRI(dst, l.Datatype)
	}
	return dst, nil
}

// isShortLiteral reports whether l can be written bare in Turtle and read back
// as the same literal (RDF 1.1 Turtle §2.5.2, §2.5.3): its datatype is the one
// the bare form implies and its lexical form matches the bare form's token.
func isShortLiteral(l rdf.Literal) bool {
	switch l.Datatype {
	case rdf.XSDInteger:
		return isTurtleInteger(l.Lexical)
	case rdf.XSDDecimal:
		return isTurtleDecimal(l.Lexical)
	case rdf.XSDDouble:
		return isTurtleDouble(l.Lexical)
	case rdf.XSDBoolean:
		return l.Lexical == "true" || l.Lexical == "false"
	}
	return false
}

// isTurtleInteger implements [19] INTEGER ::= [+-]? [0-9]+
func isTurtleInteger(s string) bool {
	s = trimSign(s)
	return s != "" && allDigits(s)
}

// isTurtleDecimal implements [20] DECIMAL ::= [+-]? [0-9]* '.' [0-9]+
func isTurtleDecimal(s string) bool {
	whole, frac, ok := strings.Cut(trimSign(s), ".")
	return ok && allDigits(whole) && frac != "" && allDigits(frac)
}

// isTurtleDouble implements
//
//	[21]  DOUBLE   ::= [+-]? ([0-9]+ '.' [0-9]* EXPONENT | '.' [0-9]+ EXPONENT | [0-9]+ EXPONENT)
//	[154s] EXPONENT ::= [eE] [+-]? [0-9]+
func isTurtleDouble(s string) bool {
	s = trimSign(s)
	e := strings.IndexAny(s, "eE")
	if e < 0 || !isTurtleInteger(s[e+1:]) {
		return false
	}
	whole, frac, dot := strings.Cut(s[:e], ".")
	if !dot {
		return whole != "" && allDigits(whole)
	}
	return (whole != "" || frac != "") && allDigits(whole) && allDigits(frac)
}

func trimSign(s string) string {
	if s != "" && (s[0] == '+' || s[0] == '-') {
		return s[1:]
	}
	return s
}

func allDigits(s string) bool {
	for i := 0; i < len(s); i++ {
		if !isDigit(rune(s[i])) {
			return false
		}
	}
	return true
}
