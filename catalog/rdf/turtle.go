package rdf

import (
	"errors"
	"fmt"
	"strings"
)

// ParseTurtle reads an RDF 1.1 Turtle document. name is used in error messages;
// base is the IRI relative IRIs are resolved against until the document sets
// its own with @base or BASE (it may be empty if the document needs none).
// Blank node labels of the document are kept where they do not clash with the
// labels the reader makes up for [] and collections.
//
// The error, if any, is an ErrorList holding the first syntax error.
func ParseTurtle(name string, src []byte, base string) (*Document, error) {
	s := newSource(name, src)
	if err := s.checkUTF8(); err != nil {
		return nil, err
	}
	p := &turtleParser{
		src:      s,
		lex:      newLexer(src),
		base:     base,
		prefixes: map[string]string{},
		doc:      &Document{Name: name},
	}
	if err := p.turtleDoc(); err != nil {
		return nil, ErrorList{err}
	}
	p.doc.Base = p.base
	return p.doc, nil
}

// turtleParser is a recursive-descent parser over the lexer's items, with one
// item of lookahead.
type turtleParser struct {
	src      *source
	lex      *lexer
	tok      item
	base     string
	prefixes map[string]string
	blanks   blankNodes
	doc      *Document
}

// parseError is a syntax error as a panic value; the parser recovers it in
// turtleDoc, so it never leaves the package.
type parseError struct{ err *SyntaxError }

func (p *turtleParser) advance() {
	p.tok = p.lex.nextItem()
	if p.tok.typ == itemError {
		panic(parseError{p.src.errorAt(p.tok.pos, "%s", p.tok.val)})
	}
}

// fail stops parsing with an error at the current item: "expected X, found Y".
func (p *turtleParser) fail(expected string) {
	panic(parseError{p.src.errorAt(p.tok.pos, "expected %s, found %s", expected, p.tok.describe())})
}

func (p *turtleParser) expect(t itemType, what string) item {
	if p.tok.typ != t {
		p.fail(what)
	}
	it := p.tok
	p.advance()
	return it
}

func (p *turtleParser) isWord(w string) bool { return p.tok.typ == itemWord && p.tok.val == w }

// node is a term with the offset where it was written.
type node struct {
	term Term
	pos  int
}

func (p *turtleParser) emit(s, pr, o node) {
	p.doc.Statements = append(p.doc.Statements, Statement{
		Quad:         Quad{S: s.term, P: pr.term, O: o.term},
		SubjectPos:   p.src.position(s.pos),
		PredicatePos: p.src.position(pr.pos),
		ObjectPos:    p.src.position(o.pos),
	})
}

// turtleDoc parses the whole document.
//
//	[1] turtleDoc ::= statement*
func (p *turtleParser) turtleDoc() (err *SyntaxError) {
	defer func() {
		if r := recover(); r != nil {
			pe, ok := r.(parseError)
			if !ok {
				panic(r)
			}
			err = pe.err
		}
	}()
	p.advance()
	for p.tok.typ != itemEOF {
		p.statement()
	}
	return nil
}

// statement parses a directive or a triples statement.
//
//	[2] statement   ::= directive | triples '.'
//	[3] directive   ::= prefixID | base | sparqlPrefix | sparqlBase
//	[4] prefixID    ::= '@prefix' PNAME_NS IRIREF '.'
//	[5] base        ::= '@base' IRIREF '.'
//	[5s] sparqlBase   ::= "BASE" IRIREF
//	[6s] sparqlPrefix ::= "PREFIX" PNAME_NS IRIREF
func (p *turtleParser) statement() {
	switch {
	case p.tok.typ == itemLangTag && p.tok.val == "prefix":
		p.advance()
		p.prefixDecl()
		p.expect(itemDot, "'.' after the @prefix directive")
	case p.tok.typ == itemLangTag && p.tok.val == "base":
		p.advance()
		p.baseDecl()
		p.expect(itemDot, "'.' after the @base directive")
	case p.tok.typ == itemWord && strings.EqualFold(p.tok.val, "prefix"):
		p.advance()
		p.prefixDecl()
	case p.tok.typ == itemWord && strings.EqualFold(p.tok.val, "base"):
		p.advance()
		p.baseDecl()
	default:
		p.triples()
		p.expect(itemDot, "'.' at the end of the statement")
	}
}

// prefixDecl parses the rest of a prefix directive: PNAME_NS IRIREF.
func (p *turtleParser) prefixDecl() {
	if p.tok.typ != itemPName || p.tok.local != "" {
		p.fail("a prefix name ending in ':'")
	}
	name := p.tok.val
	p.advance()
	iri := p.iriRef()
	p.prefixes[name] = string(iri)
	p.doc.Prefixes = append(p.doc.Prefixes, Prefix{Name: name, IRI: iri})
}

// baseDecl parses the rest of a base directive: IRIREF.
func (p *turtleParser) baseDecl() {
	p.base = string(p.iriRef())
}

// iriRef parses an IRIREF and resolves it against the base IRI.
func (p *turtleParser) iriRef() IRI {
	if p.tok.typ != itemIRI {
		p.fail("an IRI in angle brackets")
	}
	iri, err := ResolveIRI(p.base, p.tok.val)
	if errors.Is(err, ErrNoBase) {
		panic(parseError{p.src.errorAt(p.tok.pos, "<%s>: %v (declare one with @base)", p.tok.val, err)})
	}
	if err != nil {
		panic(parseError{p.src.errorAt(p.tok.pos, "<%s>: %v", p.tok.val, err)})
	}
	p.advance()
	return IRI(iri)
}

// triples parses the subject and predicates of a triples statement.
//
//	[6] triples ::= subject predicateObjectList | blankNodePropertyList predicateObjectList?
func (p *turtleParser) triples() {
	if p.tok.typ == itemLBracket {
		start := p.tok.pos
		p.advance()
		if p.tok.typ == itemRBracket { // ANON
			p.advance()
			p.predicateObjectList(node{p.blanks.fresh(), start})
			return
		}
		subj := p.blankNodePropertyList(start)
		if p.tok.typ != itemDot {
			p.predicateObjectList(subj)
		}
		return
	}
	p.predicateObjectList(p.subject())
}

// subject parses the subject of a triples statement.
//
//	[10] subject ::= iri | BlankNode | collection
func (p *turtleParser) subject() node {
	switch p.tok.typ {
	case itemIRI, itemPName:
		return p.iri()
	case itemBlankLabel:
		return p.blankLabel()
	case itemLParen:
		return p.collection()
	}
	p.fail("a subject (IRI, prefixed name, blank node or collection)")
	return node{}
}

// predicateObjectList parses the predicates and objects of one subject.
//
//	[7] predicateObjectList ::= verb objectList (';' (verb objectList)?)*
//	[9] verb                ::= predicate | 'a'
//	[11] predicate          ::= iri
func (p *turtleParser) predicateObjectList(subj node) {
	p.verbObjectList(subj)
	for p.tok.typ == itemSemicolon {
		p.advance()
		if p.tok.typ == itemIRI || p.tok.typ == itemPName || p.isWord("a") {
			p.verbObjectList(subj)
		}
	}
}

func (p *turtleParser) verbObjectList(subj node) {
	var verb node
	switch {
	case p.isWord("a"):
		verb = node{RDFType, p.tok.pos}
		p.advance()
	case p.tok.typ == itemIRI || p.tok.typ == itemPName:
		verb = p.iri()
	default:
		p.fail("a predicate (IRI, prefixed name or 'a')")
	}
	p.objectList(subj, verb)
}

// objectList parses the objects of one subject and predicate.
//
//	[8] objectList ::= object (',' object)*
func (p *turtleParser) objectList(subj, verb node) {
	p.emit(subj, verb, p.object())
	for p.tok.typ == itemComma {
		p.advance()
		p.emit(subj, verb, p.object())
	}
}

// object parses an object.
//
//	[12] object  ::= iri | BlankNode | collection | blankNodePropertyList | literal
//	[13] literal ::= RDFLiteral | NumericLiteral | BooleanLiteral
//	[16] NumericLiteral ::= INTEGER | DECIMAL | DOUBLE
//	[133s] BooleanLiteral ::= 'true' | 'false'
func (p *turtleParser) object() node {
	start := p.tok.pos
	switch p.tok.typ {
	case itemIRI, itemPName:
		return p.iri()
	case itemBlankLabel:
		return p.blankLabel()
	case itemLParen:
		return p.collection()
	case itemLBracket:
		p.advance()
		if p.tok.typ == itemRBracket { // ANON
			p.advance()
			return node{p.blanks.fresh(), start}
		}
		return p.blankNodePropertyList(start)
	case itemString:
		return p.rdfLiteral()
	case itemInteger, itemDecimal, itemDouble:
		lit := NewTyped(p.tok.val, numberTypes[p.tok.typ])
		p.advance()
		return node{lit, start}
	case itemWord:
		if p.tok.val == "true" || p.tok.val == "false" {
			lit := NewTyped(p.tok.val, XSDBoolean)
			p.advance()
			return node{lit, start}
		}
	}
	p.fail("an object (IRI, prefixed name, blank node, collection, [ ... ] or literal)")
	return node{}
}

// numberTypes are the datatypes of the numeric literals (RDF 1.1 Turtle §2.5.2).
var numberTypes = map[itemType]IRI{itemInteger: XSDInteger, itemDecimal: XSDDecimal, itemDouble: XSDDouble}

// rdfLiteral parses a string literal with its optional language tag or datatype.
//
//	[128s] RDFLiteral ::= String (LANGTAG | '^^' iri)?
//	[17] String ::= STRING_LITERAL_QUOTE | STRING_LITERAL_SINGLE_QUOTE |
//	                STRING_LITERAL_LONG_SINGLE_QUOTE | STRING_LITERAL_LONG_QUOTE
func (p *turtleParser) rdfLiteral() node {
	start, text := p.tok.pos, p.tok.val
	p.advance()
	switch p.tok.typ {
	case itemLangTag:
		lang := p.tok.val
		p.advance()
		return node{NewLangString(text, lang), start}
	case itemCaretCaret:
		p.advance()
		if p.tok.typ != itemIRI && p.tok.typ != itemPName {
			p.fail("a datatype IRI after '^^'")
		}
		dt := p.iri().term.(IRI)
		return node{NewTyped(text, dt), start}
	}
	return node{NewString(text), start}
}

// blankNodePropertyList parses the rest of "[ predicateObjectList ]" after '['
// and returns its blank node.
//
//	[14] blankNodePropertyList ::= '[' predicateObjectList ']'
func (p *turtleParser) blankNodePropertyList(start int) node {
	b := node{p.blanks.fresh(), start}
	p.predicateObjectList(b)
	p.expect(itemRBracket, "']' to close the blank node property list")
	return b
}

// collection parses an RDF collection into rdf:first/rdf:rest links.
//
//	[15] collection ::= '(' object* ')'
func (p *turtleParser) collection() node {
	start := p.tok.pos
	p.advance()
	head := node{RDFNil, start}
	var last node
	for p.tok.typ != itemRParen {
		if p.tok.typ == itemEOF {
			p.fail("')' to close the collection")
		}
		cell := node{p.blanks.fresh(), p.tok.pos}
		if last.term == nil {
			head = cell
		} else {
			p.emit(last, node{RDFRest, cell.pos}, cell)
		}
		obj := p.object()
		p.emit(cell, node{RDFFirst, obj.pos}, obj)
		last = cell
	}
	end := p.tok.pos
	p.advance()
	if last.term != nil {
		p.emit(last, node{RDFRest, end}, node{RDFNil, end})
	}
	return head
}

// iri parses an IRIREF or a prefixed name.
//
//	[135s] iri          ::= IRIREF | PrefixedName
//	[136s] PrefixedName ::= PNAME_LN | PNAME_NS
func (p *turtleParser) iri() node {
	start := p.tok.pos
	if p.tok.typ == itemIRI {
		return node{p.iriRef(), start}
	}
	ns, ok := p.prefixes[p.tok.val]
	if !ok {
		panic(parseError{p.src.errorAt(start, "undefined prefix %q: declare it with @prefix %s: <...> .", p.tok.val+":", p.tok.val)})
	}
	iri := IRI(ns + p.tok.local)
	p.advance()
	return node{iri, start}
}

// blankLabel parses a BLANK_NODE_LABEL.
func (p *turtleParser) blankLabel() node {
	n := node{p.blanks.labeled(p.tok.val), p.tok.pos}
	p.advance()
	return n
}

// blankNodes hands out blank nodes for one document: the document's own labels
// are kept unless one of them was already made up by fresh, and made-up labels
// never repeat a label in use.
type blankNodes struct {
	byLabel map[string]BlankNode
	used    map[string]bool
	n       int
}

func (b *blankNodes) labeled(label string) BlankNode {
	if n, ok := b.byLabel[label]; ok {
		return n
	}
	if b.byLabel == nil {
		b.byLabel, b.used = map[string]BlankNode{}, map[string]bool{}
	}
	n := BlankNode(label)
	if b.used[label] {
		n = b.fresh()
	}
	b.used[string(n)] = true
	b.byLabel[label] = n
	return n
}

func (b *blankNodes) fresh() BlankNode {
	if b.used == nil {
		b.byLabel, b.used = map[string]BlankNode{}, map[string]bool{}
	}
	for {
		b.n++
		label := fmt.Sprintf("b%d", b.n)
		if !b.used[label] {
			b.used[label] = true
			return BlankNode(label)
		}
	}
}
