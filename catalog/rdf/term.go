// Package rdf holds RDF 1.1 terms (IRIs, blank nodes, literals), triples and quads,
// and the readers and writers of the RDF text formats veneer needs: Turtle,
// N-Triples and N-Quads.
package rdf

import (
	"strings"
)

// Kind tells which of the three kinds of RDF term a Term is. The order of the
// constants is the order SPARQL's ORDER BY puts the kinds in (§15.1).
type Kind int

// The kinds of RDF term.
const (
	KindBlank Kind = iota + 1
	KindIRI
	KindLiteral
)

// Term is an RDF term: IRI, BlankNode or Literal. The interface is sealed.
type Term interface {
	// Kind reports which kind of term this is.
	Kind() Kind
	// String returns the term in N-Triples syntax.
	String() string
	term()
}

// IRI is an absolute IRI, held without angle brackets.
type IRI string

// BlankNode is a blank node, held by its label (without the "_:" prefix).
type BlankNode string

// Literal is an RDF literal. Every literal has a datatype: a simple literal has
// xsd:string, a language-tagged one has rdf:langString and a non-empty Lang.
type Literal struct {
	Lexical  string
	Datatype IRI
	Lang     string
}

var (
	_ Term = IRI("")
	_ Term = BlankNode("")
	_ Term = Literal{}
)

// Well-known IRIs.
const (
	RDFNS  = "http://www.w3.org/1999/02/22-rdf-syntax-ns#"
	RDFSNS = "http://www.w3.org/2000/01/rdf-schema#"
	XSDNS  = "http://www.w3.org/2001/XMLSchema#"

	RDFType       IRI = RDFNS + "type"
	RDFLangString IRI = RDFNS + "langString"
	RDFFirst      IRI = RDFNS + "first"
	RDFRest       IRI = RDFNS + "rest"
	RDFNil        IRI = RDFNS + "nil"

	XSDString   IRI = XSDNS + "string"
	XSDBoolean  IRI = XSDNS + "boolean"
	XSDInteger  IRI = XSDNS + "integer"
	XSDDecimal  IRI = XSDNS + "decimal"
	XSDDouble   IRI = XSDNS + "double"
	XSDFloat    IRI = XSDNS + "float"
	XSDDate     IRI = XSDNS + "date"
	XSDTime     IRI = XSDNS + "time"
	XSDDateTime IRI = XSDNS + "dateTime"
	XSDHexBin   IRI = XSDNS + "hexBinary"
)

// NewString returns a simple literal (datatype xsd:string).
func NewString(s string) Literal { return Literal{Lexical: s, Datatype: XSDString} }

// NewLangString returns a language-tagged literal. The tag is kept as given;
// comparisons of tags are case-insensitive (see SameTerm).
func NewLangString(s, lang string) Literal {
	return Literal{Lexical: s, Datatype: RDFLangString, Lang: lang}
}

// NewTyped returns a literal with the given datatype.
func NewTyped(s string, dt IRI) Literal { return Literal{Lexical: s, Datatype: dt} }

// Kind implements Term.
func (IRI) Kind() Kind { return KindIRI }

// Kind implements Term.
func (BlankNode) Kind() Kind { return KindBlank }

// Kind implements Term.
func (Literal) Kind() Kind { return KindLiteral }

func (IRI) term()       {}
func (BlankNode) term() {}
func (Literal) term()   {}

// String returns the IRI in angle brackets, escaped as N-Triples requires.
func (i IRI) String() string {
	var b strings.Builder
	b.WriteByte('<')
	for _, r := range string(i) {
		switch {
		case r <= 0x20 || r == '<' || r == '>' || r == '"' || r == '{' || r == '}' ||
			r == '|' || r == '^' || r == '`' || r == '\\':
			writeUnicodeEscape(&b, r)
		default:
			b.WriteRune(r)
		}
	}
	b.WriteByte('>')
	return b.String()
}

// String returns the blank node as "_:label".
func (n BlankNode) String() string { return "_:" + string(n) }

// String returns the literal in N-Triples syntax; xsd:string is left implicit.
func (l Literal) String() string {
	var b strings.Builder
	b.WriteByte('"')
	b.WriteString(EscapeString(l.Lexical))
	b.WriteByte('"')
	switch {
	case l.Lang != "":
		b.WriteByte('@')
		b.WriteString(l.Lang)
	case l.Datatype != "" && l.Datatype != XSDString:
		b.WriteString("^^")
		b.WriteString(l.Datatype.String())
	}
	return b.String()
}

// EscapeString escapes s for use between double quotes in N-Triples or Turtle.
func EscapeString(s string) string {
	var b strings.Builder
	for _, r := range s {
		switch r {
		case '"':
			b.WriteString(`\"`)
		case '\\':
			b.WriteString(`\\`)
		case '\n':
			b.WriteString(`\n`)
		case '\r':
			b.WriteString(`\r`)
		case '\t':
			b.WriteString(`\t`)
		case '\b':
			b.WriteString(`\b`)
		case '\f':
			b.WriteString(`\f`)
		default:
			if r < 0x20 || r == 0x7f {
				writeUnicodeEscape(&b, r)
			} else {
				b.WriteRune(r)
			}
		}
	}
	return b.String()
}

func writeUnicodeEscape(b *strings.Builder, r rune) {
	const hex = "0123456789ABCDEF"
	if r > 0xffff {
		b.WriteString(`\U`)
		for shift := 28; shift >= 0; shift -= 4 {
			b.WriteByte(hex[(r>>uint(shift))&0xf])
		}
		return
	}
	b.WriteString(`\u`)
	for shift := 12; shift >= 0; shift -= 4 {
		b.WriteByte(hex[(r>>uint(shift))&0xf])
	}
}

// SameTerm reports whether a and b are the same RDF term (RDF 1.1 Concepts §3:
// language tags compare case-insensitively). Either may be nil; two nils are the same.
func SameTerm(a, b Term) bool {
	if a == nil || b == nil {
		return a == nil && b == nil
	}
	la, ok := a.(Literal)
	if !ok {
		return a == b
	}
	lb, ok := b.(Literal)
	if !ok {
		return false
	}
	return la.Lexical == lb.Lexical && la.Datatype == lb.Datatype && strings.EqualFold(la.Lang, lb.Lang)
}

// Triple is an RDF triple.
type Triple struct {
	S, P, O Term
}

// Quad is a triple in a graph; G is nil for the default graph.
type Quad struct {
	S, P, O, G Term
}
