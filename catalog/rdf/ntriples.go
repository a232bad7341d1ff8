package rdf

// ParseNTriples reads an RDF 1.1 N-Triples document. name is used in error
// messages. Blank node labels are kept as written.
//
// The error, if any, is an ErrorList with one error for each bad line (the
// reader goes on with the next line), up to 20 errors.
func ParseNTriples(name string, src []byte) (*Document, error) {
	return parseLines(name, src, false)
}

// ParseNQuads reads an RDF 1.1 N-Quads document; like ParseNTriples, with an
// optional graph label on each statement.
func ParseNQuads(name string, src []byte) (*Document, error) {
	return parseLines(name, src, true)
}

// maxLineErrors is how many bad lines the line-based readers report before they stop.
const maxLineErrors = 20

// lineParser reads N-Triples or N-Quads, one statement per line.
type lineParser struct {
	src   *source
	lex   *lexer
	tok   item
	quads bool
}

// lineError is a syntax error in one statement; parseLines skips to the next line.
type lineError struct{ err *SyntaxError }

func parseLines(name string, src []byte, quads bool) (*Document, error) {
	s := newSource(name, src)
	if err := s.checkUTF8(); err != nil {
		return nil, err
	}
	p := &lineParser{src: s, lex: newLexer(src), quads: quads}
	doc := &Document{Name: name}
	var errs ErrorList
	p.advanceOrErr()
	for p.tok.typ != itemEOF && len(errs) < maxLineErrors {
		st, err := p.statementOrErr()
		if err != nil {
			errs = append(errs, err)
			p.skipLine(err.Pos.Line)
			continue
		}
		doc.Statements = append(doc.Statements, st)
	}
	if errs != nil {
		sortErrors(errs)
		return nil, errs
	}
	return doc, nil
}

// skipLine restarts lexing at the line after the given one.
func (p *lineParser) skipLine(line int) {
	next := len(p.src.src)
	if line < len(p.src.lines) {
		next = p.src.lines[line]
	}
	p.lex.restart(next)
	p.advanceOrErr()
}

// advanceOrErr reads the next item; an error item stays current, and the
// statement parser reports it.
func (p *lineParser) advanceOrErr() { p.tok = p.lex.nextItem() }

func (p *lineParser) statementOrErr() (st Statement, err *SyntaxError) {
	defer func() {
		if r := recover(); r != nil {
			le, ok := r.(lineError)
			if !ok {
				panic(r)
			}
			err = le.err
		}
	}()
	return p.statement(), nil
}

func (p *lineParser) check() {
	if p.tok.typ == itemError {
		panic(lineError{p.src.errorAt(p.tok.pos, "%s", p.tok.val)})
	}
}

func (p *lineParser) advance() {
	p.tok = p.lex.nextItem()
	p.check()
}

func (p *lineParser) fail(expected string) {
	p.check()
	panic(lineError{p.src.errorAt(p.tok.pos, "expected %s, found %s", expected, p.tok.describe())})
}

// statement parses one line's statement.
//
//	[2] triple     ::= subject predicate object '.'
//	[2] statement  ::= subject predicate object graphLabel? '.'   (N-Quads)
//	[3] subject    ::= IRIREF | BLANK_NODE_LABEL
//	[4] predicate  ::= IRIREF
//	[5] object     ::= IRIREF | BLANK_NODE_LABEL | literal
//	[6] graphLabel ::= IRIREF | BLANK_NODE_LABEL
func (p *lineParser) statement() Statement {
	p.check()
	var st Statement
	st.SubjectPos = p.src.position(p.tok.pos)
	st.S = p.iriOrBlank("a subject (IRI or blank node)")
	st.PredicatePos = p.src.position(p.tok.pos)
	if p.tok.typ != itemIRI {
		p.fail("a predicate IRI")
	}
	st.P = p.iri()
	st.ObjectPos = p.src.position(p.tok.pos)
	if p.tok.typ == itemString {
		st.O = p.literal()
	} else {
		st.O = p.iriOrBlank("an object (IRI, blank node or literal)")
	}
	if p.quads && (p.tok.typ == itemIRI || p.tok.typ == itemBlankLabel) {
		st.G = p.iriOrBlank("a graph label")
	}
	if p.tok.typ != itemDot {
		if p.quads {
			p.fail("a graph label or '.' at the end of the statement")
		}
		p.fail("'.' at the end of the triple")
	}
	line := p.src.position(p.tok.pos).Line
	p.advance()
	if p.tok.typ != itemEOF && p.src.position(p.tok.pos).Line == line {
		p.fail("the end of the line: one statement per line")
	}
	return st
}

func (p *lineParser) iriOrBlank(what string) Term {
	switch p.tok.typ {
	case itemIRI:
		return p.iri()
	case itemBlankLabel:
		b := BlankNode(p.tok.val)
		p.advance()
		return b
	}
	p.fail(what)
	return nil
}

// iri reads an IRIREF, which must be absolute.
func (p *lineParser) iri() IRI {
	if !IsAbsoluteIRI(p.tok.val) {
		panic(lineError{p.src.errorAt(p.tok.pos, "relative IRI <%s>: N-Triples and N-Quads need absolute IRIs", p.tok.val)})
	}
	iri := IRI(p.tok.val)
	p.advance()
	return iri
}

// literal reads a literal.
//
//	[6] literal ::= STRING_LITERAL_QUOTE ('^^' IRIREF | LANGTAG)?
func (p *lineParser) literal() Literal {
	if p.tok.quote != `"` {
		p.fail(`a string in double quotes ("...")`)
	}
	text := p.tok.val
	p.advance()
	switch p.tok.typ {
	case itemLangTag:
		lang := p.tok.val
		p.advance()
		return NewLangString(text, lang)
	case itemCaretCaret:
		p.advance()
		if p.tok.typ != itemIRI {
			p.fail("a datatype IRI after '^^'")
		}
		return NewTyped(text, p.iri())
	}
	return NewString(text)
}
