// Package sparql turns SPARQL 1.1 query text into a syntax tree with positions
// (SPARQL 1.1 Query §19), and prints such trees back as query text. A SPARQL
// Update request is recognised and refused with an error wrapping ErrUpdate;
// a query longer, deeper or with more triple patterns than its Limits allow
// gets an error wrapping ErrLimit.
package sparql

import (
	"fmt"
	"strconv"
	"strings"

	"veneer/catalog/rdf"
)

// Parse parses a SPARQL query within the default limits. Relative IRIs are
// resolved against the query's own BASE declarations only. The error is as
// ParseWith's.
func Parse(text string) (*Query, error) { return ParseWith(text, Options{}) }

// ParseBase parses a SPARQL query within the default limits, resolving
// relative IRIs against base (the retrieval IRI of the query) until a BASE
// declaration replaces it. The error is as ParseWith's.
func ParseBase(text, base string) (*Query, error) {
	return ParseWith(text, Options{Base: base})
}

// Options say how ParseWith reads a query.
type Options struct {
	// Base is the IRI relative IRIs are resolved against until a BASE
	// declaration replaces it; empty for none.
	Base string
	// Limits bound the query; fields that are not positive take the defaults.
	Limits Limits
}

// ParseWith parses a SPARQL query as the options say. The error is an
// ErrorList; for a SPARQL Update request it wraps ErrUpdate, and for a query
// beyond the limits ErrLimit.
func ParseWith(text string, opt Options) (q *Query, err error) {
	p := &parser{
		src:      text,
		base:     opt.Base,
		lim:      opt.Limits.orDefaults(),
		prefixes: map[string]rdf.IRI{},
		bnodes:   map[string]bnodeUse{},
	}
	defer func() {
		if r := recover(); r != nil {
			pe, ok := r.(parseError)
			if !ok {
				panic(r)
			}
			q, err = nil, ErrorList{pe.err}
		}
	}()
	p.checkLength()
	p.lex = newLexer(text)
	return p.parseQueryUnit(), nil
}

// parseError carries a syntax error up the parser's stack; ParseWith recovers it.
type parseError struct{ err *SyntaxError }

// bnodeUse records in which basic graph pattern a blank node label was used
// first (§19.6: a label may not be used in two of them).
type bnodeUse struct {
	bgp int
	pos Pos
}

type parser struct {
	src      string
	lex      *lexer
	ahead    []token
	base     string
	prefixes map[string]rdf.IRI
	// bnodes and bgp implement the blank node label rule: bgp is the number of
	// the basic graph pattern being read, 0 where labels are not checked.
	bnodes  map[string]bnodeUse
	bgp     int
	nextBGP int
	// aggOK is set while reading expressions where aggregates may appear.
	aggOK bool
	lim   Limits
	// depth is the nesting level (see Limits.MaxDepth), triples the number of
	// triple patterns read so far.
	depth   int
	triples int
	// data collects the VALUES blocks read so far (Query.Data).
	data []*ValuesBlock
}

// peekAt returns the token i places ahead (0: the next one) without consuming it.
func (p *parser) peekAt(i int) token {
	for len(p.ahead) <= i {
		p.ahead = append(p.ahead, p.lex.next())
	}
	return p.ahead[i]
}

func (p *parser) peek() token { return p.peekAt(0) }

func (p *parser) next() token {
	t := p.peek()
	if t.typ == tokError {
		p.fail(t.pos, "%s", t.val)
	}
	// Shift rather than reslice, so that the buffer keeps its capacity and
	// reading a token allocates nothing.
	p.ahead = p.ahead[:copy(p.ahead, p.ahead[1:])]
	return t
}

// fail stops parsing with an error at pos.
func (p *parser) fail(pos Pos, format string, args ...any) {
	panic(parseError{newError(p.src, pos, format, args...)})
}

// unexpected stops parsing because the next token is not what the rule needs.
func (p *parser) unexpected(what string) {
	t := p.peek()
	if t.typ == tokError {
		p.fail(t.pos, "%s", t.val)
	}
	p.fail(t.pos, "expected %s, found %s", what, t.describe())
}

// at returns a position's "line L, column C" for messages that point back.
func (p *parser) at(pos Pos) string {
	line, col := lineCol(p.src, pos)
	return fmt.Sprintf("line %d, column %d", line, col)
}

func (p *parser) isPunct(s string) bool {
	t := p.peek()
	return t.typ == tokPunct && t.val == s
}

// acceptPunct consumes the punctuation s if it is next.
func (p *parser) acceptPunct(s string) bool {
	if p.isPunct(s) {
		p.next()
		return true
	}
	return false
}

func (p *parser) expectPunct(s string) token {
	if !p.isPunct(s) {
		p.unexpected("'" + s + "'")
	}
	return p.next()
}

// isWord reports whether the next token is the keyword kw (upper case), which
// matches case-insensitively (§19.8).
func (p *parser) isWord(kw string) bool { return isWordTok(p.peek(), kw) }

func isWordTok(t token, kw string) bool {
	return t.typ == tokWord && strings.EqualFold(t.val, kw)
}

func (p *parser) acceptWord(kw string) bool {
	if p.isWord(kw) {
		p.next()
		return true
	}
	return false
}

func (p *parser) expectWord(kw string) token {
	if !p.isWord(kw) {
		p.unexpected(kw)
	}
	return p.next()
}

// closeBrace consumes the '}' that closes the group opened at open.
func (p *parser) closeBrace(open Pos, what string) Pos {
	if !p.isPunct("}") {
		t := p.peek()
		if t.typ == tokError {
			p.fail(t.pos, "%s", t.val)
		}
		p.fail(t.pos, "expected '}' to close the %s started at %s, found %s", what, p.at(open), t.describe())
	}
	return p.next().pos
}

// closeParen consumes the ')' that closes the parenthesis opened at open.
func (p *parser) closeParen(open Pos, what string) {
	if !p.isPunct(")") {
		t := p.peek()
		if t.typ == tokError {
			p.fail(t.pos, "%s", t.val)
		}
		p.fail(t.pos, "expected ')' to close the %s started at %s, found %s", what, p.at(open), t.describe())
	}
	p.next()
}

// parseQueryUnit parses a whole request.
//
//	[1] QueryUnit ::= Query
//	[2] Query ::= Prologue ( SelectQuery | ConstructQuery | DescribeQuery | AskQuery ) ValuesClause
func (p *parser) parseQueryUnit() *Query {
	q := &Query{Source: p.src, Modifiers: noModifiers()}
	q.Prologue = p.parsePrologue(true)
	t := p.peek()
	q.FormPos = t.pos
	switch {
	case isWordTok(t, "SELECT"):
		p.parseSelectQuery(q)
	case isWordTok(t, "CONSTRUCT"):
		p.parseConstructQuery(q)
	case isWordTok(t, "DESCRIBE"):
		p.parseDescribeQuery(q)
	case isWordTok(t, "ASK"):
		p.parseAskQuery(q)
	case t.typ == tokWord && updateKeywords[strings.ToUpper(t.val)]:
		p.parseUpdate(t)
	case t.typ == tokEOF:
		panic(parseError{&SyntaxError{Pos: t.pos, src: p.src, err: ErrUpdate,
			Msg: "expected SELECT, CONSTRUCT, DESCRIBE or ASK, found end of query " +
				"(as a SPARQL Update request it would do nothing, and this endpoint is read-only)"}})
	default:
		p.unexpected("SELECT, CONSTRUCT, DESCRIBE or ASK")
	}
	q.Values = p.parseValuesClause()
	q.Data = p.data
	if t := p.peek(); t.typ != tokEOF {
		p.unexpected("end of query")
	}
	return q
}

func noModifiers() Modifiers { return Modifiers{Limit: -1, Offset: -1} }

// parsePrologue parses the BASE and PREFIX declarations. In a query a prefix
// may be declared once (§19.5); each operation of an update has its own prologue.
//
//	[4] Prologue ::= ( BaseDecl | PrefixDecl )*
//	[5] BaseDecl ::= 'BASE' IRIREF
//	[6] PrefixDecl ::= 'PREFIX' PNAME_NS IRIREF
func (p *parser) parsePrologue(once bool) []*Decl {
	var decls []*Decl
	declared := map[string]Pos{}
	for {
		switch {
		case p.isWord("BASE"):
			pos := p.next().pos
			iri := p.expectIRIRef()
			p.base = string(iri)
			decls = append(decls, &Decl{Pos: pos, IRI: iri})
		case p.isWord("PREFIX"):
			pos := p.next().pos
			t := p.peek()
			if t.typ != tokPNameNS {
				p.unexpected("a prefix such as ex: after PREFIX")
			}
			p.next()
			if prev, ok := declared[t.val]; ok && once {
				p.fail(t.pos, "prefix %s: is already declared at %s", t.val, p.at(prev))
			}
			declared[t.val] = t.pos
			iri := p.expectIRIRef()
			p.prefixes[t.val] = iri
			decls = append(decls, &Decl{Pos: pos, IsPrefix: true, Prefix: t.val, IRI: iri})
		default:
			return decls
		}
	}
}

// expectIRIRef reads an IRIREF and resolves it against the base.
func (p *parser) expectIRIRef() rdf.IRI {
	t := p.peek()
	if t.typ != tokIRI {
		p.unexpected("an IRI in angle brackets")
	}
	p.next()
	return p.resolve(t)
}

// isIRIStart reports whether t starts rule [136] iri.
func isIRIStart(t token) bool {
	return t.typ == tokIRI || t.typ == tokPNameNS || t.typ == tokPNameLN
}

// parseIRI parses an IRI.
//
//	[136] iri ::= IRIREF | PrefixedName
//	[137] PrefixedName ::= PNAME_LN | PNAME_NS
func (p *parser) parseIRI() *IRI {
	t := p.peek()
	switch t.typ {
	case tokIRI:
		p.next()
		return &IRI{Pos: t.pos, IRI: p.resolve(t), Form: IRIRef}
	case tokPNameNS, tokPNameLN:
		p.next()
		ns, ok := p.prefixes[t.val]
		if !ok {
			p.fail(t.pos, "prefix %s: is not declared (add PREFIX %s: <...> before the query)", t.val, t.val)
		}
		iri := ns + rdf.IRI(t.local)
		if msg := checkIRI(string(iri)); msg != "" {
			p.fail(t.pos, "%s:%s expands to <%s>: %s", t.val, t.local, iri, msg)
		}
		return &IRI{Pos: t.pos, IRI: iri, Form: IRIPrefixed, Prefix: t.val, Local: t.local}
	}
	p.unexpected("an IRI")
	return nil
}

// parseSelectQuery parses a SELECT query.
//
//	[7] SelectQuery ::= SelectClause DatasetClause* WhereClause SolutionModifier
func (p *parser) parseSelectQuery(q *Query) {
	q.Form = FormSelect
	q.Select = p.parseSelectClause()
	q.Dataset = p.parseDatasetClauses()
	q.Where = p.parseWhereClause()
	q.Modifiers = p.parseSolutionModifier()
}

// parseSubSelect parses a nested SELECT.
//
//	[8] SubSelect ::= SelectClause WhereClause SolutionModifier ValuesClause
func (p *parser) parseSubSelect() *SubSelect {
	s := &SubSelect{Pos: p.peek().pos}
	s.Select = p.parseSelectClause()
	s.Where = p.parseWhereClause()
	s.Modifiers = p.parseSolutionModifier()
	s.Values = p.parseValuesClause()
	return s
}

// parseSelectClause parses the projection.
//
//	[9] SelectClause ::= 'SELECT' ( 'DISTINCT' | 'REDUCED' )? ( ( Var | ( '(' Expression 'AS' Var ')' ) )+ | '*' )
func (p *parser) parseSelectClause() *SelectClause {
	s := &SelectClause{Pos: p.expectWord("SELECT").pos}
	switch {
	case p.acceptWord("DISTINCT"):
		s.Distinct = true
	case p.acceptWord("REDUCED"):
		s.Reduced = true
	}
	if p.acceptPunct("*") {
		s.Star = true
		return s
	}
	base := p.depth
	for {
		t := p.peek()
		switch {
		case t.typ == tokVar:
			s.Items = append(s.Items, &SelectItem{Pos: t.pos, Var: p.parseVar()})
			continue
		case t.typ == tokPunct && t.val == "(":
			p.next()
			p.enter(t.pos) // each SELECT expression adds an Extend (§18.2.4.4)
			item := &SelectItem{Pos: t.pos}
			item.Expr = p.parseAggExpression()
			if !p.isWord("AS") {
				p.unexpected("AS and a variable: a SELECT expression must be written (expression AS ?name)")
			}
			p.next()
			item.Var = p.parseVar()
			p.closeParen(t.pos, "SELECT expression")
			s.Items = append(s.Items, item)
			continue
		}
		break
	}
	if len(s.Items) == 0 {
		p.unexpected("'*', a variable or (expression AS ?name) after SELECT")
	}
	p.depth = base
	return s
}

// parseAggExpression parses an expression in which aggregates are allowed.
func (p *parser) parseAggExpression() Expr {
	saved := p.aggOK
	p.aggOK = true
	e := p.parseExpression()
	p.aggOK = saved
	return e
}

// parseConstructQuery parses a CONSTRUCT query.
//
//	[10] ConstructQuery ::= 'CONSTRUCT' ( ConstructTemplate DatasetClause* WhereClause SolutionModifier | DatasetClause* 'WHERE' '{' TriplesTemplate? '}' SolutionModifier )
//	[73] ConstructTemplate ::= '{' ConstructTriples? '}'
func (p *parser) parseConstructQuery(q *Query) {
	q.Form = FormConstruct
	p.expectWord("CONSTRUCT")
	if p.isPunct("{") {
		open := p.next().pos
		q.Template = p.parseTriplesTemplate(0)
		p.closeBrace(open, "CONSTRUCT template")
		q.Dataset = p.parseDatasetClauses()
		q.Where = p.parseWhereClause()
	} else {
		q.ShortConstruct = true
		q.Dataset = p.parseDatasetClauses()
		if !p.isWord("WHERE") {
			p.unexpected("'{' to start the CONSTRUCT template, or WHERE")
		}
		p.next()
		open := p.expectPunct("{").pos
		q.Template = p.parseTriplesTemplate(p.newBGP())
		p.closeBrace(open, "CONSTRUCT WHERE pattern")
	}
	q.Modifiers = p.parseSolutionModifier()
}

func (p *parser) newBGP() int {
	p.nextBGP++
	return p.nextBGP
}

// parseTriplesTemplate parses triples without property paths; bgp numbers the
// basic graph pattern they form, or is 0 for a template.
//
//	[52] TriplesTemplate ::= TriplesSameSubject ( '.' TriplesTemplate? )?
//	[74] ConstructTriples ::= TriplesSameSubject ( '.' ConstructTriples? )?
func (p *parser) parseTriplesTemplate(bgp int) []*TriplesSameSubject {
	saved := p.bgp
	p.bgp = bgp
	defer func() { p.bgp = saved }()
	var triples []*TriplesSameSubject
	for startsTriples(p.peek()) {
		triples = append(triples, p.parseTriplesSameSubject(false))
		if !p.acceptPunct(".") {
			break
		}
	}
	return triples
}

// parseDescribeQuery parses a DESCRIBE query.
//
//	[11] DescribeQuery ::= 'DESCRIBE' ( VarOrIri+ | '*' ) DatasetClause* WhereClause? SolutionModifier
func (p *parser) parseDescribeQuery(q *Query) {
	q.Form = FormDescribe
	p.expectWord("DESCRIBE")
	if p.acceptPunct("*") {
		q.DescribeAll = true
	} else {
		for {
			t := p.peek()
			if t.typ != tokVar && !isIRIStart(t) {
				break
			}
			q.Describe = append(q.Describe, p.parseVarOrIRI())
		}
		if len(q.Describe) == 0 {
			p.unexpected("'*', a variable or an IRI after DESCRIBE")
		}
	}
	q.Dataset = p.parseDatasetClauses()
	if p.isWord("WHERE") || p.isPunct("{") {
		q.Where = p.parseWhereClause()
	}
	q.Modifiers = p.parseSolutionModifier()
}

// parseAskQuery parses an ASK query.
//
//	[12] AskQuery ::= 'ASK' DatasetClause* WhereClause SolutionModifier
func (p *parser) parseAskQuery(q *Query) {
	q.Form = FormAsk
	p.expectWord("ASK")
	q.Dataset = p.parseDatasetClauses()
	q.Where = p.parseWhereClause()
	q.Modifiers = p.parseSolutionModifier()
}

// parseDatasetClauses parses FROM clauses.
//
//	[13] DatasetClause ::= 'FROM' ( DefaultGraphClause | NamedGraphClause )
//	[14] DefaultGraphClause ::= SourceSelector
//	[15] NamedGraphClause ::= 'NAMED' SourceSelector
//	[16] SourceSelector ::= iri
func (p *parser) parseDatasetClauses() []*DatasetClause {
	var ds []*DatasetClause
	for p.isWord("FROM") {
		d := &DatasetClause{Pos: p.next().pos}
		d.Named = p.acceptWord("NAMED")
		d.IRI = p.parseIRI()
		ds = append(ds, d)
	}
	return ds
}

// parseWhereClause parses the query pattern.
//
//	[17] WhereClause ::= 'WHERE'? GroupGraphPattern
func (p *parser) parseWhereClause() *GroupPattern {
	p.acceptWord("WHERE")
	if !p.isPunct("{") {
		p.unexpected("'{' to start the query pattern")
	}
	return p.parseGroupGraphPattern()
}

// parseSolutionModifier parses GROUP BY, HAVING, ORDER BY, LIMIT and OFFSET.
//
//	[18] SolutionModifier ::= GroupClause? HavingClause? OrderClause? LimitOffsetClauses?
//	[19] GroupClause ::= 'GROUP' 'BY' GroupCondition+
//	[21] HavingClause ::= 'HAVING' HavingCondition+
//	[22] HavingCondition ::= Constraint
//	[23] OrderClause ::= 'ORDER' 'BY' OrderCondition+
//	[25] LimitOffsetClauses ::= LimitClause OffsetClause? | OffsetClause LimitClause?
//	[26] LimitClause ::= 'LIMIT' INTEGER
//	[27] OffsetClause ::= 'OFFSET' INTEGER
func (p *parser) parseSolutionModifier() Modifiers {
	m := noModifiers()
	if p.acceptWord("GROUP") {
		p.expectWord("BY")
		for {
			m.GroupBy = append(m.GroupBy, p.parseGroupCondition())
			if !p.startsGroupCondition() {
				break
			}
		}
	}
	if p.acceptWord("HAVING") {
		for {
			m.Having = append(m.Having, p.parseConstraint(true))
			if !p.startsConstraint() {
				break
			}
		}
	}
	if p.acceptWord("ORDER") {
		p.expectWord("BY")
		for {
			m.OrderBy = append(m.OrderBy, p.parseOrderCondition())
			if !p.startsOrderCondition() {
				break
			}
		}
	}
	for i := 0; i < 2; i++ {
		switch {
		case m.Limit < 0 && p.isWord("LIMIT"):
			m.LimitPos = p.next().pos
			m.Limit = p.parseCount("LIMIT")
		case m.Offset < 0 && p.isWord("OFFSET"):
			m.OffsetPos = p.next().pos
			m.Offset = p.parseCount("OFFSET")
		}
	}
	return m
}

func (p *parser) parseCount(clause string) int64 {
	t := p.peek()
	if t.typ != tokInteger || t.val[0] == '+' || t.val[0] == '-' {
		p.unexpected("a non-negative integer after " + clause)
	}
	p.next()
	n, err := strconv.ParseInt(t.val, 10, 64)
	if err != nil {
		p.fail(t.pos, "%s %s is too large", clause, t.val)
	}
	return n
}

func (p *parser) startsGroupCondition() bool {
	t := p.peek()
	return t.typ == tokVar || p.startsConstraint()
}

// parseGroupCondition parses one GROUP BY condition.
//
//	[20] GroupCondition ::= BuiltInCall | FunctionCall | '(' Expression ( 'AS' Var )? ')' | Var
func (p *parser) parseGroupCondition() *GroupCondition {
	t := p.peek()
	g := &GroupCondition{Pos: t.pos}
	switch {
	case t.typ == tokVar:
		g.Expr = p.parseVar()
	case t.typ == tokPunct && t.val == "(":
		p.next()
		g.Expr = p.parseExpression()
		if p.acceptWord("AS") {
			g.Var = p.parseVar()
		}
		p.closeParen(t.pos, "GROUP BY condition")
	case isIRIStart(t):
		g.Expr = p.parseFunctionCall()
	case p.startsBuiltIn():
		g.Expr = p.parseBuiltInCall()
	default:
		p.unexpected("a variable, a function call or (expression) after GROUP BY")
	}
	return g
}

func (p *parser) startsConstraint() bool {
	t := p.peek()
	return (t.typ == tokPunct && t.val == "(") || isIRIStart(t) || p.startsBuiltIn()
}

// parseConstraint parses a FILTER or HAVING condition; agg says whether
// aggregates may appear in it.
//
//	[69] Constraint ::= BrackettedExpression | BuiltInCall | FunctionCall
func (p *parser) parseConstraint(agg bool) Expr {
	saved := p.aggOK
	p.aggOK = agg
	defer func() { p.aggOK = saved }()
	t := p.peek()
	switch {
	case t.typ == tokPunct && t.val == "(":
		return p.parseBrackettedExpression()
	case isIRIStart(t):
		return p.parseFunctionCall()
	case p.startsBuiltIn():
		return p.parseBuiltInCall()
	}
	p.unexpected("'(', a function call or a built-in function")
	return nil
}

func (p *parser) startsOrderCondition() bool {
	return p.isWord("ASC") || p.isWord("DESC") || p.peek().typ == tokVar || p.startsConstraint()
}

// parseOrderCondition parses one ORDER BY condition.
//
//	[24] OrderCondition ::= ( ( 'ASC' | 'DESC' ) BrackettedExpression ) | ( Constraint | Var )
func (p *parser) parseOrderCondition() *OrderCondition {
	t := p.peek()
	o := &OrderCondition{Pos: t.pos}
	switch {
	case isWordTok(t, "ASC") || isWordTok(t, "DESC"):
		p.next()
		o.Desc = isWordTok(t, "DESC")
		if !p.isPunct("(") {
			p.unexpected("'(' after " + strings.ToUpper(t.val))
		}
		saved := p.aggOK
		p.aggOK = true
		o.Expr = p.parseBrackettedExpression()
		p.aggOK = saved
	case t.typ == tokVar:
		o.Expr = p.parseVar()
	default:
		o.Expr = p.parseConstraint(true)
	}
	return o
}

// parseValuesClause parses a trailing VALUES clause.
//
//	[28] ValuesClause ::= ( 'VALUES' DataBlock )?
func (p *parser) parseValuesClause() *ValuesBlock {
	if !p.isWord("VALUES") {
		return nil
	}
	pos := p.next().pos
	return p.parseDataBlock(pos)
}

// parseDataBlock parses inline data.
//
//	[62] DataBlock ::= InlineDataOneVar | InlineDataFull
//	[63] InlineDataOneVar ::= Var '{' DataBlockValue* '}'
//	[64] InlineDataFull ::= ( NIL | '(' Var* ')' ) '{' ( '(' DataBlockValue* ')' | NIL )* '}'
func (p *parser) parseDataBlock(pos Pos) *ValuesBlock {
	v := &ValuesBlock{Pos: pos}
	p.data = append(p.data, v)
	v.Block = len(p.data)
	t := p.peek()
	switch {
	case t.typ == tokVar:
		v.Vars = []*Var{p.parseVar()}
		open := p.expectPunct("{").pos
		for !p.isPunct("}") {
			rowPos := p.peek().pos
			v.Rows = append(v.Rows, []Term{p.parseDataBlockValue()})
			v.RowPos = append(v.RowPos, rowPos)
		}
		v.Body = [2]Pos{open, p.closeBrace(open, "VALUES block") + 1}
		return v
	case t.typ == tokPunct && t.val == "(":
		p.next()
		for p.peek().typ == tokVar {
			v.Vars = append(v.Vars, p.parseVar())
		}
		p.closeParen(t.pos, "VALUES variable list")
	default:
		p.unexpected("a variable or '(' after VALUES")
	}
	open := p.expectPunct("{").pos
	for p.isPunct("(") {
		rowPos := p.next().pos
		var row []Term
		for !p.isPunct(")") {
			if len(row) == len(v.Vars) {
				p.fail(p.peek().pos, "expected ')': this row has more values than the %d variables of VALUES", len(v.Vars))
			}
			row = append(row, p.parseDataBlockValue())
		}
		if len(row) < len(v.Vars) {
			p.fail(p.peek().pos, "expected another value: this row has %d values for the %d variables of VALUES", len(row), len(v.Vars))
		}
		p.next()
		v.Rows = append(v.Rows, row)
		v.RowPos = append(v.RowPos, rowPos)
	}
	v.Body = [2]Pos{open, p.closeBrace(open, "VALUES block") + 1}
	return v
}

// parseDataBlockValue parses one value of inline data; UNDEF gives nil.
//
//	[65] DataBlockValue ::= iri | RDFLiteral | NumericLiteral | BooleanLiteral | 'UNDEF'
func (p *parser) parseDataBlockValue() Term {
	t := p.peek()
	switch {
	case isWordTok(t, "UNDEF"):
		p.next()
		return nil
	case isIRIStart(t):
		return p.parseIRI()
	case startsLiteral(t):
		return p.parseLiteral()
	}
	p.unexpected("an IRI, a literal or UNDEF")
	return nil
}

// parseGroupGraphPattern parses a group.
//
//	[53] GroupGraphPattern ::= '{' ( SubSelect | GroupGraphPatternSub ) '}'
func (p *parser) parseGroupGraphPattern() *GroupPattern {
	open := p.expectPunct("{").pos
	p.enter(open)
	defer p.leave()
	g := &GroupPattern{Pos: open}
	saved := p.aggOK
	p.aggOK = false
	if p.isWord("SELECT") {
		g.Sub = p.parseSubSelect()
	} else {
		g.Elems = p.parseGroupGraphPatternSub(open)
	}
	p.aggOK = saved
	g.End = p.closeBrace(open, "group")
	return g
}

// parseGroupGraphPatternSub parses the elements of a group.
//
//	[54] GroupGraphPatternSub ::= TriplesBlock? ( GraphPatternNotTriples '.'? TriplesBlock? )*
//
// Each element other than triples and FILTER nests the algebra of the group
// one level deeper (§18.2.2.6), so it counts as a level for the elements after it.
func (p *parser) parseGroupGraphPatternSub(open Pos) []Pattern {
	var elems []Pattern
	bgp := 0          // the basic graph pattern the next triples join; 0 for a new one
	needsDot := false // a triples block ended without '.'
	base := p.depth
	for {
		t := p.peek()
		switch {
		case t.typ == tokPunct && t.val == "}":
			p.depth = base
			return elems
		case startsTriples(t):
			if needsDot {
				p.fail(t.pos, "expected '.' between triple patterns, or '}' to close the group started at %s, found %s", p.at(open), t.describe())
			}
			if bgp == 0 {
				bgp = p.newBGP()
			}
			block, dot := p.parseTriplesBlock(bgp)
			elems = append(elems, block)
			needsDot = !dot
		case p.startsNotTriples():
			e := p.parseGraphPatternNotTriples()
			if _, ok := e.(*Filter); !ok {
				bgp = 0
				p.enter(t.pos)
			}
			elems = append(elems, e)
			p.acceptPunct(".")
			needsDot = false
		case t.typ == tokEOF:
			p.closeBrace(open, "group")
		default:
			if t.typ == tokError {
				p.fail(t.pos, "%s", t.val)
			}
			p.fail(t.pos, "expected a triple pattern, a graph pattern keyword or '}' to close the group started at %s, found %s", p.at(open), t.describe())
		}
	}
}

// parseTriplesBlock parses triples with paths; it reports whether the block
// ended with '.'.
//
//	[55] TriplesBlock ::= TriplesSameSubjectPath ( '.' TriplesBlock? )?
func (p *parser) parseTriplesBlock(bgp int) (*TriplesBlock, bool) {
	saved := p.bgp
	p.bgp = bgp
	defer func() { p.bgp = saved }()
	b := &TriplesBlock{Pos: p.peek().pos}
	for {
		b.Triples = append(b.Triples, p.parseTriplesSameSubject(true))
		if !p.acceptPunct(".") {
			return b, false
		}
		if !startsTriples(p.peek()) {
			return b, true
		}
	}
}

// startsTriples reports whether t can start a subject.
func startsTriples(t token) bool {
	switch t.typ {
	case tokVar, tokIRI, tokPNameNS, tokPNameLN, tokBlank, tokString, tokInteger, tokDecimal, tokDouble:
		return true
	case tokPunct:
		return t.val == "[" || t.val == "("
	case tokWord:
		return isWordTok(t, "true") || isWordTok(t, "false")
	}
	return false
}

func (p *parser) startsNotTriples() bool {
	t := p.peek()
	if t.typ == tokPunct {
		return t.val == "{"
	}
	for _, kw := range []string{"OPTIONAL", "MINUS", "GRAPH", "SERVICE", "FILTER", "BIND", "VALUES"} {
		if isWordTok(t, kw) {
			return true
		}
	}
	return false
}

// parseGraphPatternNotTriples parses a group element other than triples.
//
//	[56] GraphPatternNotTriples ::= GroupOrUnionGraphPattern | OptionalGraphPattern | MinusGraphPattern | GraphGraphPattern | ServiceGraphPattern | Filter | Bind | InlineData
//	[57] OptionalGraphPattern ::= 'OPTIONAL' GroupGraphPattern
//	[58] GraphGraphPattern ::= 'GRAPH' VarOrIri GroupGraphPattern
//	[59] ServiceGraphPattern ::= 'SERVICE' 'SILENT'? VarOrIri GroupGraphPattern
//	[60] Bind ::= 'BIND' '(' Expression 'AS' Var ')'
//	[61] InlineData ::= 'VALUES' DataBlock
//	[66] MinusGraphPattern ::= 'MINUS' GroupGraphPattern
//	[67] GroupOrUnionGraphPattern ::= GroupGraphPattern ( 'UNION' GroupGraphPattern )*
//	[68] Filter ::= 'FILTER' Constraint
func (p *parser) parseGraphPatternNotTriples() Pattern {
	t := p.peek()
	switch {
	case t.typ == tokPunct:
		base := p.depth
		u := &GroupOrUnion{Pos: t.pos, Groups: []*GroupPattern{p.parseGroupGraphPattern()}}
		for p.isWord("UNION") {
			p.enter(p.next().pos)
			if !p.isPunct("{") {
				p.unexpected("'{' after UNION")
			}
			u.Groups = append(u.Groups, p.parseGroupGraphPattern())
		}
		p.depth = base
		return u
	case isWordTok(t, "OPTIONAL"):
		p.next()
		return &Optional{Pos: t.pos, Pattern: p.expectGroup("OPTIONAL")}
	case isWordTok(t, "MINUS"):
		p.next()
		return &Minus{Pos: t.pos, Pattern: p.expectGroup("MINUS")}
	case isWordTok(t, "GRAPH"):
		p.next()
		name := p.parseVarOrIRI()
		return &Graph{Pos: t.pos, Name: name, Pattern: p.expectGroup("GRAPH name")}
	case isWordTok(t, "SERVICE"):
		p.next()
		s := &Service{Pos: t.pos, Silent: p.acceptWord("SILENT")}
		s.Name = p.parseVarOrIRI()
		s.Pattern = p.expectGroup("SERVICE name")
		return s
	case isWordTok(t, "FILTER"):
		p.next()
		return &Filter{Pos: t.pos, Expr: p.parseConstraint(false)}
	case isWordTok(t, "BIND"):
		p.next()
		open := p.expectPunct("(").pos
		b := &Bind{Pos: t.pos, Expr: p.parseExpression()}
		if !p.isWord("AS") {
			p.unexpected("AS and a variable in BIND (expression AS ?name)")
		}
		p.next()
		b.Var = p.parseVar()
		p.closeParen(open, "BIND")
		return b
	default: // VALUES
		p.next()
		return &InlineData{Pos: t.pos, Values: p.parseDataBlock(t.pos)}
	}
}

func (p *parser) expectGroup(after string) *GroupPattern {
	if !p.isPunct("{") {
		p.unexpected("'{' after " + after)
	}
	return p.parseGroupGraphPattern()
}

// parseTriplesSameSubject parses a subject and its properties; paths says
// whether property paths may be used (in patterns, not in templates).
//
//	[75] TriplesSameSubject ::= VarOrTerm PropertyListNotEmpty | TriplesNode PropertyList
//	[81] TriplesSameSubjectPath ::= VarOrTerm PropertyListPathNotEmpty | TriplesNodePath PropertyListPath
func (p *parser) parseTriplesSameSubject(paths bool) *TriplesSameSubject {
	subj := p.parseGraphNode(paths)
	ts := &TriplesSameSubject{Subject: subj}
	if isTriplesNode(subj) && !p.startsVerb(paths) {
		return ts
	}
	ts.Props = p.parsePropertyListNotEmpty(paths)
	return ts
}

// isTriplesNode reports whether n is rule [98] TriplesNode (a non-empty
// collection or a blank node property list), which needs no properties.
func isTriplesNode(n GraphNode) bool {
	switch n := n.(type) {
	case *Collection:
		return len(n.Items) > 0
	case *BlankNodePropertyList:
		return true
	}
	return false
}

func (p *parser) startsVerb(paths bool) bool {
	t := p.peek()
	if t.typ == tokVar || isIRIStart(t) || (t.typ == tokWord && t.val == "a") {
		return true
	}
	return paths && t.typ == tokPunct && (t.val == "^" || t.val == "!" || t.val == "(")
}

// parsePropertyListNotEmpty parses verbs and object lists. With paths, every
// verb may be a path and every object may hold paths. Rule [83] gives the verbs
// after the first ';' an ObjectList, whose nested blank node property lists may
// not use paths; this parser reads ObjectListPath there too, accepting a little
// more than the rule does.
//
//	[77] PropertyListNotEmpty ::= Verb ObjectList ( ';' ( Verb ObjectList )? )*
//	[83] PropertyListPathNotEmpty ::= ( VerbPath | VerbSimple ) ObjectListPath ( ';' ( ( VerbPath | VerbSimple ) ObjectList )? )*
//	[79] ObjectList ::= Object ( ',' Object )*
//	[86] ObjectListPath ::= ObjectPath ( ',' ObjectPath )*
func (p *parser) parsePropertyListNotEmpty(paths bool) []*Property {
	var props []*Property
	for {
		if !p.startsVerb(paths) {
			if paths {
				p.unexpected("a predicate (an IRI, a variable, 'a' or a property path)")
			}
			p.unexpected("a predicate (an IRI, a variable or 'a')")
		}
		prop := &Property{Pos: p.peek().pos, Verb: p.parseVerb(paths)}
		for {
			p.addTriples(p.peek().pos, 1)
			prop.Objects = append(prop.Objects, p.parseGraphNode(paths))
			if !p.acceptPunct(",") {
				break
			}
		}
		props = append(props, prop)
		if !p.isPunct(";") {
			return props
		}
		for p.acceptPunct(";") {
		}
		if !p.startsVerb(paths) {
			return props
		}
	}
}

// parseVerb parses a predicate.
//
//	[78] Verb ::= VarOrIri | 'a'
//	[84] VerbPath ::= Path
//	[85] VerbSimple ::= Var
func (p *parser) parseVerb(paths bool) Verb {
	t := p.peek()
	if t.typ == tokVar {
		return p.parseVar()
	}
	if paths {
		return p.parsePath()
	}
	if t.typ == tokWord && t.val == "a" {
		p.next()
		return &IRI{Pos: t.pos, IRI: rdf.RDFType, Form: IRIKeywordA}
	}
	return p.parseIRI()
}

// parsePath parses a property path.
//
//	[88] Path ::= PathAlternative
//	[89] PathAlternative ::= PathSequence ( '|' PathSequence )*
func (p *parser) parsePath() Path {
	base := p.depth
	left := p.parsePathSequence()
	for p.isPunct("|") {
		pos := p.next().pos
		p.enter(pos)
		left = &PathAlternative{Pos: pos, Left: left, Right: p.parsePathSequence()}
	}
	p.depth = base
	return left
}

// parsePathSequence parses
//
//	[90] PathSequence ::= PathEltOrInverse ( '/' PathEltOrInverse )*
//
// Each step after the first adds a triple pattern (§18.2.2.4).
func (p *parser) parsePathSequence() Path {
	base := p.depth
	left := p.parsePathEltOrInverse()
	for p.isPunct("/") {
		pos := p.next().pos
		p.enter(pos)
		p.addTriples(pos, 1)
		left = &PathSequence{Pos: pos, Left: left, Right: p.parsePathEltOrInverse()}
	}
	p.depth = base
	return left
}

// parsePathEltOrInverse parses
//
//	[92] PathEltOrInverse ::= PathElt | '^' PathElt
//	[91] PathElt ::= PathPrimary PathMod?
//	[93] PathMod ::= '?' | '*' | '+'
func (p *parser) parsePathEltOrInverse() Path {
	if p.isPunct("^") {
		pos := p.next().pos
		return &PathInverse{Pos: pos, Path: p.parsePathElt()}
	}
	return p.parsePathElt()
}

func (p *parser) parsePathElt() Path {
	prim := p.parsePathPrimary()
	t := p.peek()
	if t.typ == tokPunct && (t.val == "?" || t.val == "*" || t.val == "+") {
		p.next()
		return &PathMod{Pos: t.pos, Path: prim, Mod: t.val[0]}
	}
	return prim
}

// parsePathPrimary parses
//
//	[94] PathPrimary ::= iri | 'a' | '!' PathNegatedPropertySet | '(' Path ')'
//	[95] PathNegatedPropertySet ::= PathOneInPropertySet | '(' ( PathOneInPropertySet ( '|' PathOneInPropertySet )* )? ')'
func (p *parser) parsePathPrimary() Path {
	t := p.peek()
	switch {
	case t.typ == tokWord && t.val == "a":
		p.next()
		return &IRI{Pos: t.pos, IRI: rdf.RDFType, Form: IRIKeywordA}
	case isIRIStart(t):
		return p.parseIRI()
	case t.typ == tokPunct && t.val == "!":
		p.next()
		n := &PathNegated{Pos: t.pos}
		if open := p.peek(); open.typ == tokPunct && open.val == "(" {
			p.next()
			if !p.isPunct(")") {
				for {
					n.Items = append(n.Items, p.parsePathOneInPropertySet())
					if !p.acceptPunct("|") {
						break
					}
				}
			}
			p.closeParen(open.pos, "negated property set")
		} else {
			n.Items = []*NegatedItem{p.parsePathOneInPropertySet()}
		}
		return n
	case t.typ == tokPunct && t.val == "(":
		p.next()
		p.enter(t.pos)
		defer p.leave()
		path := p.parsePath()
		p.closeParen(t.pos, "path")
		return path
	}
	p.unexpected("an IRI, 'a', '!', '^' or '(' in a property path")
	return nil
}

// parsePathOneInPropertySet parses
//
//	[96] PathOneInPropertySet ::= iri | 'a' | '^' ( iri | 'a' )
func (p *parser) parsePathOneInPropertySet() *NegatedItem {
	item := &NegatedItem{Inverse: p.acceptPunct("^")}
	t := p.peek()
	switch {
	case t.typ == tokWord && t.val == "a":
		p.next()
		item.IRI = &IRI{Pos: t.pos, IRI: rdf.RDFType, Form: IRIKeywordA}
	case isIRIStart(t):
		item.IRI = p.parseIRI()
	default:
		p.unexpected("an IRI or 'a' in a negated property set")
	}
	return item
}

// parseGraphNode parses a subject or object.
//
//	[104] GraphNode ::= VarOrTerm | TriplesNode
//	[105] GraphNodePath ::= VarOrTerm | TriplesNodePath
//	[98] TriplesNode ::= Collection | BlankNodePropertyList
//	[99] BlankNodePropertyList ::= '[' PropertyListNotEmpty ']'
//	[101] BlankNodePropertyListPath ::= '[' PropertyListPathNotEmpty ']'
//	[102] Collection ::= '(' GraphNode+ ')'
//	[103] CollectionPath ::= '(' GraphNodePath+ ')'
func (p *parser) parseGraphNode(paths bool) GraphNode {
	t := p.peek()
	if t.typ == tokPunct {
		switch t.val {
		case "(":
			p.next()
			p.enter(t.pos)
			defer p.leave()
			c := &Collection{Pos: t.pos}
			for !p.isPunct(")") {
				if p.peek().typ == tokEOF {
					p.closeParen(t.pos, "collection")
				}
				p.addTriples(p.peek().pos, 2) // rdf:first and rdf:rest (§18.2.2.1)
				c.Items = append(c.Items, p.parseGraphNode(paths))
			}
			p.next()
			return c
		case "[":
			p.next()
			if p.acceptPunct("]") {
				return &BlankNode{Pos: t.pos}
			}
			p.enter(t.pos)
			defer p.leave()
			b := &BlankNodePropertyList{Pos: t.pos, Props: p.parsePropertyListNotEmpty(paths)}
			if !p.isPunct("]") {
				p.unexpected(fmt.Sprintf("']' to close the blank node started at %s", p.at(t.pos)))
			}
			p.next()
			return b
		}
	}
	return p.parseVarOrTerm()
}

// parseVarOrTerm parses
//
//	[106] VarOrTerm ::= Var | GraphTerm
//	[109] GraphTerm ::= iri | RDFLiteral | NumericLiteral | BooleanLiteral | BlankNode | NIL
//	[138] BlankNode ::= BLANK_NODE_LABEL | ANON
func (p *parser) parseVarOrTerm() GraphNode {
	t := p.peek()
	switch {
	case t.typ == tokVar:
		return p.parseVar()
	case isIRIStart(t):
		return p.parseIRI()
	case startsLiteral(t):
		return p.parseLiteral()
	case t.typ == tokBlank:
		p.next()
		p.useLabel(t)
		return &BlankNode{Pos: t.pos, Label: t.val}
	}
	p.unexpected("a variable, an IRI, a literal or a blank node")
	return nil
}

// useLabel applies §19.6 to a blank node label.
func (p *parser) useLabel(t token) {
	if p.bgp == 0 {
		return
	}
	if u, ok := p.bnodes[t.val]; ok {
		if u.bgp != p.bgp {
			p.fail(t.pos, "blank node label _:%s is already used in another basic graph pattern, at %s", t.val, p.at(u.pos))
		}
		return
	}
	p.bnodes[t.val] = bnodeUse{bgp: p.bgp, pos: t.pos}
}

// parseVarOrIRI parses [107] VarOrIri ::= Var | iri.
func (p *parser) parseVarOrIRI() Term {
	if p.peek().typ == tokVar {
		return p.parseVar()
	}
	if !isIRIStart(p.peek()) {
		p.unexpected("a variable or an IRI")
	}
	return p.parseIRI()
}

// parseVar parses [108] Var ::= VAR1 | VAR2.
func (p *parser) parseVar() *Var {
	t := p.peek()
	if t.typ != tokVar {
		p.unexpected("a variable")
	}
	p.next()
	return &Var{Pos: t.pos, Name: t.val}
}

func startsLiteral(t token) bool {
	switch t.typ {
	case tokString, tokInteger, tokDecimal, tokDouble:
		return true
	}
	return isWordTok(t, "true") || isWordTok(t, "false")
}

// parseLiteral parses
//
//	[129] RDFLiteral ::= String ( LANGTAG | ( '^^' iri ) )?
//	[130] NumericLiteral ::= NumericLiteralUnsigned | NumericLiteralPositive | NumericLiteralNegative
//	[134] BooleanLiteral ::= 'true' | 'false'
func (p *parser) parseLiteral() *Literal {
	t := p.next()
	switch t.typ {
	case tokString:
		l := &Literal{Pos: t.pos, Form: LiteralString, Value: rdf.NewString(t.val)}
		switch n := p.peek(); {
		case n.typ == tokLangTag:
			p.next()
			l.Value = rdf.NewLangString(t.val, n.val)
		case n.typ == tokPunct && n.val == "^^":
			p.next()
			l.Datatype = p.parseIRI()
			l.Value = rdf.NewTyped(t.val, l.Datatype.IRI)
		}
		return l
	case tokInteger, tokDecimal, tokDouble:
		return numberLiteral(t)
	case tokWord:
		return &Literal{Pos: t.pos, Form: LiteralBoolean, Value: rdf.NewTyped(strings.ToLower(t.val), rdf.XSDBoolean)}
	}
	p.fail(t.pos, "expected a literal, found %s", t.describe())
	return nil
}

func numberLiteral(t token) *Literal {
	dt := rdf.XSDInteger
	switch t.typ {
	case tokDecimal:
		dt = rdf.XSDDecimal
	case tokDouble:
		dt = rdf.XSDDouble
	}
	return &Literal{Pos: t.pos, Form: LiteralNumber, Value: rdf.NewTyped(t.val, dt)}
}
