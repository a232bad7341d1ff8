package sparql

import (
	"fmt"
	"strings"
)

// parseExpression parses
//
//	[110] Expression ::= ConditionalOrExpression
//	[111] ConditionalOrExpression ::= ConditionalAndExpression ( '||' ConditionalAndExpression )*
//
// Each operator of a chain nests the tree one level deeper, so it counts as a
// level (Limits.MaxDepth) for the rest of the chain; the same holds in the
// other rules of binary operators.
func (p *parser) parseExpression() Expr {
	p.enter(p.peek().pos)
	defer p.leave()
	base := p.depth
	left := p.parseAnd()
	for p.isPunct("||") {
		pos := p.next().pos
		p.enter(pos)
		left = &Binary{Pos: pos, Op: "||", Left: left, Right: p.parseAnd()}
	}
	p.depth = base
	return left
}

// parseAnd parses
//
//	[112] ConditionalAndExpression ::= ValueLogical ( '&&' ValueLogical )*
//	[113] ValueLogical ::= RelationalExpression
func (p *parser) parseAnd() Expr {
	base := p.depth
	left := p.parseRelational()
	for p.isPunct("&&") {
		pos := p.next().pos
		p.enter(pos)
		left = &Binary{Pos: pos, Op: "&&", Left: left, Right: p.parseRelational()}
	}
	p.depth = base
	return left
}

// parseRelational parses
//
//	[114] RelationalExpression ::= NumericExpression ( '=' NumericExpression | '!=' NumericExpression | '<' NumericExpression | '>' NumericExpression | '<=' NumericExpression | '>=' NumericExpression | 'IN' ExpressionList | 'NOT' 'IN' ExpressionList )?
//	[115] NumericExpression ::= AdditiveExpression
func (p *parser) parseRelational() Expr {
	left := p.parseAdditive()
	t := p.peek()
	switch {
	case t.typ == tokPunct && (t.val == "=" || t.val == "!=" || t.val == "<" || t.val == ">" || t.val == "<=" || t.val == ">="):
		p.next()
		return &Binary{Pos: t.pos, Op: t.val, Left: left, Right: p.parseAdditive()}
	case isWordTok(t, "IN"):
		p.next()
		return &In{Pos: t.pos, Expr: left, List: p.parseExpressionList("IN")}
	case isWordTok(t, "NOT") && isWordTok(p.peekAt(1), "IN"):
		p.next()
		p.next()
		return &In{Pos: t.pos, Not: true, Expr: left, List: p.parseExpressionList("NOT IN")}
	}
	return left
}

// parseAdditive parses
//
//	[116] AdditiveExpression ::= MultiplicativeExpression ( '+' MultiplicativeExpression | '-' MultiplicativeExpression | ( NumericLiteralPositive | NumericLiteralNegative ) ( ( '*' UnaryExpression ) | ( '/' UnaryExpression ) )* )*
//
// A signed number right after an operand ("?x -1") is a subtraction or addition
// of the unsigned number (§19.8 notes).
func (p *parser) parseAdditive() Expr {
	base := p.depth
	left := p.parseMultiplicative()
	for {
		t := p.peek()
		switch {
		case t.typ == tokPunct && (t.val == "+" || t.val == "-"):
			p.next()
			p.enter(t.pos)
			left = &Binary{Pos: t.pos, Op: t.val, Left: left, Right: p.parseMultiplicative()}
		case isSignedNumber(t):
			p.next()
			p.enter(t.pos)
			num := numberLiteral(t)
			num.Pos++
			num.Value.Lexical = t.val[1:]
			var right Expr = num
			for p.isPunct("*") || p.isPunct("/") {
				op := p.next()
				p.enter(op.pos)
				right = &Binary{Pos: op.pos, Op: op.val, Left: right, Right: p.parseUnary()}
			}
			left = &Binary{Pos: t.pos, Op: t.val[:1], Left: left, Right: right}
		default:
			p.depth = base
			return left
		}
	}
}

func isSignedNumber(t token) bool {
	return (t.typ == tokInteger || t.typ == tokDecimal || t.typ == tokDouble) && (t.val[0] == '+' || t.val[0] == '-')
}

// parseMultiplicative parses
//
//	[117] MultiplicativeExpression ::= UnaryExpression ( '*' UnaryExpression | '/' UnaryExpression )*
func (p *parser) parseMultiplicative() Expr {
	base := p.depth
	left := p.parseUnary()
	for p.isPunct("*") || p.isPunct("/") {
		op := p.next()
		p.enter(op.pos)
		left = &Binary{Pos: op.pos, Op: op.val, Left: left, Right: p.parseUnary()}
	}
	p.depth = base
	return left
}

// parseUnary parses
//
//	[118] UnaryExpression ::= '!' PrimaryExpression | '+' PrimaryExpression | '-' PrimaryExpression | PrimaryExpression
func (p *parser) parseUnary() Expr {
	t := p.peek()
	if t.typ == tokPunct && (t.val == "!" || t.val == "+" || t.val == "-") {
		p.next()
		return &Unary{Pos: t.pos, Op: t.val, Operand: p.parsePrimary()}
	}
	return p.parsePrimary()
}

// parsePrimary parses
//
//	[119] PrimaryExpression ::= BrackettedExpression | BuiltInCall | iriOrFunction | RDFLiteral | NumericLiteral | BooleanLiteral | Var
//	[128] iriOrFunction ::= iri ArgList?
func (p *parser) parsePrimary() Expr {
	t := p.peek()
	switch {
	case t.typ == tokPunct && t.val == "(":
		return p.parseBrackettedExpression()
	case t.typ == tokVar:
		return p.parseVar()
	case isIRIStart(t):
		iri := p.parseIRI()
		if p.isPunct("(") {
			return p.parseArgList(iri)
		}
		return iri
	case startsLiteral(t):
		return p.parseLiteral()
	case p.startsBuiltIn():
		return p.parseBuiltInCall()
	}
	p.unexpected("an expression")
	return nil
}

// parseBrackettedExpression parses [120] BrackettedExpression ::= '(' Expression ')'.
func (p *parser) parseBrackettedExpression() Expr {
	open := p.expectPunct("(").pos
	e := p.parseExpression()
	p.closeParen(open, "expression")
	return e
}

// parseFunctionCall parses [70] FunctionCall ::= iri ArgList.
func (p *parser) parseFunctionCall() Expr {
	iri := p.parseIRI()
	if !p.isPunct("(") {
		p.unexpected("'(' to call the function " + iri.IRI.String())
	}
	return p.parseArgList(iri)
}

// parseArgList parses the arguments of a function named by an IRI.
//
//	[71] ArgList ::= NIL | '(' 'DISTINCT'? Expression ( ',' Expression )* ')'
func (p *parser) parseArgList(iri *IRI) *FuncCall {
	open := p.expectPunct("(").pos
	f := &FuncCall{Pos: iri.Pos, IRI: iri}
	if p.acceptPunct(")") {
		return f
	}
	f.Distinct = p.acceptWord("DISTINCT")
	for {
		f.Args = append(f.Args, p.parseExpression())
		if !p.acceptPunct(",") {
			break
		}
	}
	p.closeParen(open, "argument list")
	return f
}

// parseExpressionList parses [72] ExpressionList ::= NIL | '(' Expression ( ',' Expression )* ')'.
func (p *parser) parseExpressionList(what string) []Expr {
	if !p.isPunct("(") {
		p.unexpected("'(' after " + what)
	}
	open := p.next().pos
	list := []Expr{}
	if p.acceptPunct(")") {
		return list
	}
	for {
		list = append(list, p.parseExpression())
		if !p.acceptPunct(",") {
			break
		}
	}
	p.closeParen(open, what+" list")
	return list
}

// builtIn gives the number of arguments a built-in function takes; max -1
// means any number (an ExpressionList).
type builtIn struct{ min, max int }

// builtIns are the functions of rule [121] BuiltInCall other than aggregates,
// BOUND, EXISTS and NOT EXISTS, by upper-case name:
//
//	'STR' '(' Expression ')' | 'LANG' '(' Expression ')' | 'LANGMATCHES' '(' Expression ',' Expression ')'
//	| 'DATATYPE' '(' Expression ')' | 'IRI' '(' Expression ')' | 'URI' '(' Expression ')'
//	| 'BNODE' ( '(' Expression ')' | NIL ) | 'RAND' NIL | 'ABS' '(' Expression ')' | ...
//	[122] RegexExpression ::= 'REGEX' '(' Expression ',' Expression ( ',' Expression )? ')'
//	[123] SubstringExpression ::= 'SUBSTR' '(' Expression ',' Expression ( ',' Expression )? ')'
//	[124] StrReplaceExpression ::= 'REPLACE' '(' Expression ',' Expression ',' Expression ( ',' Expression )? ')'
var builtIns = map[string]builtIn{
	"STR": {1, 1}, "LANG": {1, 1}, "LANGMATCHES": {2, 2}, "DATATYPE": {1, 1},
	"IRI": {1, 1}, "URI": {1, 1}, "BNODE": {0, 1}, "RAND": {0, 0},
	"ABS": {1, 1}, "CEIL": {1, 1}, "FLOOR": {1, 1}, "ROUND": {1, 1},
	"CONCAT": {0, -1}, "SUBSTR": {2, 3}, "STRLEN": {1, 1}, "REPLACE": {3, 4},
	"UCASE": {1, 1}, "LCASE": {1, 1}, "ENCODE_FOR_URI": {1, 1},
	"CONTAINS": {2, 2}, "STRSTARTS": {2, 2}, "STRENDS": {2, 2}, "STRBEFORE": {2, 2}, "STRAFTER": {2, 2},
	"YEAR": {1, 1}, "MONTH": {1, 1}, "DAY": {1, 1}, "HOURS": {1, 1}, "MINUTES": {1, 1},
	"SECONDS": {1, 1}, "TIMEZONE": {1, 1}, "TZ": {1, 1},
	"NOW": {0, 0}, "UUID": {0, 0}, "STRUUID": {0, 0},
	"MD5": {1, 1}, "SHA1": {1, 1}, "SHA256": {1, 1}, "SHA384": {1, 1}, "SHA512": {1, 1},
	"COALESCE": {0, -1}, "IF": {3, 3}, "STRLANG": {2, 2}, "STRDT": {2, 2}, "SAMETERM": {2, 2},
	"ISIRI": {1, 1}, "ISURI": {1, 1}, "ISBLANK": {1, 1}, "ISLITERAL": {1, 1}, "ISNUMERIC": {1, 1},
	"REGEX": {2, 3},
}

// aggregates are the names of rule [127].
var aggregates = map[string]bool{
	"COUNT": true, "SUM": true, "MIN": true, "MAX": true, "AVG": true, "SAMPLE": true, "GROUP_CONCAT": true,
}

func (p *parser) startsBuiltIn() bool {
	t := p.peek()
	if t.typ != tokWord {
		return false
	}
	name := strings.ToUpper(t.val)
	if _, ok := builtIns[name]; ok {
		return true
	}
	return aggregates[name] || name == "BOUND" || name == "EXISTS" ||
		(name == "NOT" && isWordTok(p.peekAt(1), "EXISTS"))
}

// parseBuiltInCall parses [121] BuiltInCall.
//
//	'BOUND' '(' Var ')'
//	[125] ExistsFunc ::= 'EXISTS' GroupGraphPattern
//	[126] NotExistsFunc ::= 'NOT' 'EXISTS' GroupGraphPattern
func (p *parser) parseBuiltInCall() Expr {
	t := p.next()
	name := strings.ToUpper(t.val)
	switch {
	case aggregates[name]:
		return p.parseAggregate(t, name)
	case name == "BOUND":
		open := p.expectPunct("(").pos
		v := p.parseVar()
		p.closeParen(open, "BOUND")
		return &Call{Pos: t.pos, Name: name, Args: []Expr{v}}
	case name == "EXISTS":
		return &Exists{Pos: t.pos, Pattern: p.expectGroup("EXISTS")}
	case name == "NOT":
		p.next()
		return &Exists{Pos: t.pos, Not: true, Pattern: p.expectGroup("NOT EXISTS")}
	}
	spec := builtIns[name]
	if spec.max < 0 {
		return &Call{Pos: t.pos, Name: name, Args: p.parseExpressionList(name)}
	}
	if !p.isPunct("(") {
		p.unexpected("'(' after " + name)
	}
	open := p.next().pos
	c := &Call{Pos: t.pos, Name: name, Args: []Expr{}}
	if spec.min == 0 && p.acceptPunct(")") {
		return c
	}
	if spec.max == 0 {
		p.unexpected("')': " + name + " takes no arguments")
	}
	for {
		c.Args = append(c.Args, p.parseExpression())
		if len(c.Args) == spec.max || !p.isPunct(",") {
			break
		}
		p.next()
	}
	if len(c.Args) < spec.min {
		p.unexpected(fmt.Sprintf("',' and another argument: %s takes %s", name, arity(spec)))
	}
	if !p.isPunct(")") {
		p.unexpected(fmt.Sprintf("')' to close the call of %s started at %s (%s takes %s)", name, p.at(open), name, arity(spec)))
	}
	p.next()
	return c
}

func arity(b builtIn) string {
	switch {
	case b.min == b.max && b.min == 1:
		return "1 argument"
	case b.min == b.max:
		return fmt.Sprintf("%d arguments", b.min)
	}
	return fmt.Sprintf("%d or %d arguments", b.min, b.max)
}

// parseAggregate parses
//
//	[127] Aggregate ::= 'COUNT' '(' 'DISTINCT'? ( '*' | Expression ) ')' | 'SUM' '(' 'DISTINCT'? Expression ')' | ...
//	| 'GROUP_CONCAT' '(' 'DISTINCT'? Expression ( ';' 'SEPARATOR' '=' String )? ')'
func (p *parser) parseAggregate(t token, name string) Expr {
	if !p.aggOK {
		p.fail(t.pos, "aggregate %s is not allowed here: aggregates may be used only in SELECT, HAVING and ORDER BY, and not inside another aggregate", name)
	}
	open := p.expectPunct("(").pos
	a := &Aggregate{Pos: t.pos, Name: name, Distinct: p.acceptWord("DISTINCT")}
	p.aggOK = false
	defer func() { p.aggOK = true }()
	if name == "COUNT" && p.acceptPunct("*") {
		p.closeParen(open, "COUNT")
		return a
	}
	a.Arg = p.parseExpression()
	if name == "GROUP_CONCAT" && p.acceptPunct(";") {
		p.expectWord("SEPARATOR")
		p.expectPunct("=")
		s := p.peek()
		if s.typ != tokString {
			p.unexpected("a string after SEPARATOR =")
		}
		p.next()
		a.Separator, a.HasSeparator = s.val, true
	}
	p.closeParen(open, name)
	return a
}
