package sparql

import (
	"strings"
)

// updateKeywords are the words that start an update operation (rule [30]).
var updateKeywords = map[string]bool{
	"LOAD": true, "CLEAR": true, "DROP": true, "CREATE": true, "ADD": true, "MOVE": true,
	"COPY": true, "INSERT": true, "DELETE": true, "WITH": true,
}

// parseUpdate reads a SPARQL Update request to its end, so that a malformed one
// gets a precise syntax error, and then refuses the well-formed one with an
// error wrapping ErrUpdate at its first operation.
//
//	[3] UpdateUnit ::= Update
//	[29] Update ::= Prologue ( Update1 ( ';' Update )? )?
func (p *parser) parseUpdate(first token) {
	for {
		p.parseUpdate1()
		if !p.acceptPunct(";") {
			break
		}
		p.parsePrologue(false)
		if t := p.peek(); t.typ != tokWord || !updateKeywords[strings.ToUpper(t.val)] {
			break
		}
	}
	if t := p.peek(); t.typ != tokEOF {
		p.unexpected("';' or the end of the update request")
	}
	panic(parseError{&SyntaxError{
		Pos: first.pos, src: p.src, err: ErrUpdate,
		Msg: strings.ToUpper(first.val) + " starts a SPARQL Update request, which this endpoint does not accept: it is read-only and answers queries only",
	}})
}

// parseUpdate1 parses one operation.
//
//	[30] Update1 ::= Load | Clear | Drop | Add | Move | Copy | Create | InsertData | DeleteData | DeleteWhere | Modify
//	[31] Load ::= 'LOAD' 'SILENT'? iri ( 'INTO' GraphRef )?
//	[32] Clear ::= 'CLEAR' 'SILENT'? GraphRefAll
//	[33] Drop ::= 'DROP' 'SILENT'? GraphRefAll
//	[34] Create ::= 'CREATE' 'SILENT'? GraphRef
//	[35] Add ::= 'ADD' 'SILENT'? GraphOrDefault 'TO' GraphOrDefault
//	[36] Move ::= 'MOVE' 'SILENT'? GraphOrDefault 'TO' GraphOrDefault
//	[37] Copy ::= 'COPY' 'SILENT'? GraphOrDefault 'TO' GraphOrDefault
//	[38] InsertData ::= 'INSERT DATA' QuadData
//	[39] DeleteData ::= 'DELETE DATA' QuadData
//	[40] DeleteWhere ::= 'DELETE WHERE' QuadPattern
//	[41] Modify ::= ( 'WITH' iri )? ( DeleteClause InsertClause? | InsertClause ) UsingClause* 'WHERE' GroupGraphPattern
//	[42] DeleteClause ::= 'DELETE' QuadPattern
//	[43] InsertClause ::= 'INSERT' QuadPattern
func (p *parser) parseUpdate1() {
	t := p.peek()
	if t.typ != tokWord || !updateKeywords[strings.ToUpper(t.val)] {
		p.unexpected("an update operation (INSERT, DELETE, LOAD, CLEAR, CREATE, DROP, COPY, MOVE, ADD or WITH)")
	}
	p.next()
	switch kw := strings.ToUpper(t.val); kw {
	case "LOAD":
		p.acceptWord("SILENT")
		p.parseIRI()
		if p.acceptWord("INTO") {
			p.parseGraphRef()
		}
	case "CLEAR", "DROP":
		p.acceptWord("SILENT")
		if !p.acceptWord("DEFAULT") && !p.acceptWord("NAMED") && !p.acceptWord("ALL") {
			if !p.isWord("GRAPH") {
				p.unexpected("GRAPH, DEFAULT, NAMED or ALL after " + kw)
			}
			p.parseGraphRef()
		}
	case "CREATE":
		p.acceptWord("SILENT")
		p.parseGraphRef()
	case "ADD", "MOVE", "COPY":
		p.acceptWord("SILENT")
		p.parseGraphOrDefault()
		p.expectWord("TO")
		p.parseGraphOrDefault()
	case "INSERT":
		if p.acceptWord("DATA") {
			p.parseQuads("INSERT DATA", p.newBGP(), false, true)
			return
		}
		p.parseQuads("INSERT", 0, true, true)
		p.parseModifyWhere()
	case "DELETE":
		switch {
		case p.acceptWord("DATA"):
			p.parseQuads("DELETE DATA", 0, false, false)
		case p.acceptWord("WHERE"):
			p.parseQuads("DELETE WHERE", 0, true, false)
		default:
			p.parseQuads("DELETE", 0, true, false)
			if p.acceptWord("INSERT") {
				p.parseQuads("INSERT", 0, true, true)
			}
			p.parseModifyWhere()
		}
	case "WITH":
		p.parseIRI()
		switch {
		case p.acceptWord("DELETE"):
			p.parseQuads("DELETE", 0, true, false)
			if p.acceptWord("INSERT") {
				p.parseQuads("INSERT", 0, true, true)
			}
		case p.acceptWord("INSERT"):
			p.parseQuads("INSERT", 0, true, true)
		default:
			p.unexpected("DELETE or INSERT after WITH iri")
		}
		p.parseModifyWhere()
	}
}

// parseModifyWhere parses the end of a Modify operation.
//
//	[44] UsingClause ::= 'USING' ( iri | 'NAMED' iri )
func (p *parser) parseModifyWhere() {
	for p.acceptWord("USING") {
		p.acceptWord("NAMED")
		p.parseIRI()
	}
	if !p.isWord("WHERE") {
		p.unexpected("WHERE (or USING) after the update template")
	}
	p.next()
	p.expectGroup("WHERE")
}

// parseGraphRef parses [46] GraphRef ::= 'GRAPH' iri.
func (p *parser) parseGraphRef() {
	p.expectWord("GRAPH")
	p.parseIRI()
}

// parseGraphOrDefault parses [45] GraphOrDefault ::= 'DEFAULT' | 'GRAPH'? iri.
func (p *parser) parseGraphOrDefault() {
	if p.acceptWord("DEFAULT") {
		return
	}
	p.acceptWord("GRAPH")
	p.parseIRI()
}

// parseQuads parses a QuadPattern or QuadData. Variables are allowed only when
// vars is set (§19.8 notes: not in QuadData), blank nodes only when bnodes is
// set (not in DELETE forms); bgp numbers the data's blank node scope.
//
//	[48] QuadPattern ::= '{' Quads '}'
//	[49] QuadData ::= '{' Quads '}'
//	[50] Quads ::= TriplesTemplate? ( QuadsNotTriples '.'? TriplesTemplate? )*
//	[51] QuadsNotTriples ::= 'GRAPH' VarOrIri '{' TriplesTemplate? '}'
func (p *parser) parseQuads(op string, bgp int, vars, bnodes bool) {
	open := p.expectPunct("{").pos
	check := func(ts []*TriplesSameSubject) {
		walkNodes(ts, func(n GraphNode) {
			switch n := n.(type) {
			case *Var:
				if !vars {
					p.fail(n.Pos, "variables are not allowed in %s", op)
				}
			case *BlankNode, *BlankNodePropertyList:
				if !bnodes {
					p.fail(n.Position(), "blank nodes are not allowed in %s", op)
				}
			case *Collection:
				if !bnodes && len(n.Items) > 0 {
					p.fail(n.Pos, "collections (which stand for blank nodes) are not allowed in %s", op)
				}
			}
		})
	}
	check(p.parseTriplesTemplate(bgp))
	for p.isWord("GRAPH") {
		p.next()
		name := p.parseVarOrIRI()
		if v, ok := name.(*Var); ok && !vars {
			p.fail(v.Pos, "variables are not allowed in %s", op)
		}
		inner := p.expectPunct("{").pos
		check(p.parseTriplesTemplate(bgp))
		p.closeBrace(inner, "GRAPH block")
		p.acceptPunct(".")
		check(p.parseTriplesTemplate(bgp))
	}
	p.closeBrace(open, op+" block")
}

// walkNodes calls fn for every node of the triples, nested ones included, and
// for every verb that is a variable.
func walkNodes(ts []*TriplesSameSubject, fn func(GraphNode)) {
	var node func(GraphNode)
	props := func(ps []*Property) {
		for _, pr := range ps {
			if v, ok := pr.Verb.(*Var); ok {
				fn(v)
			}
			for _, o := range pr.Objects {
				node(o)
			}
		}
	}
	node = func(n GraphNode) {
		fn(n)
		switch n := n.(type) {
		case *Collection:
			for _, it := range n.Items {
				node(it)
			}
		case *BlankNodePropertyList:
			props(n.Props)
		}
	}
	for _, t := range ts {
		node(t.Subject)
		props(t.Props)
	}
}
