package sparql

import (
	"strings"

	"veneer/catalog/rdf"
)

// String prints the query as SPARQL text that parses back into the same tree
// (positions aside). IRIs are printed resolved, or as the prefixed names they
// were written as; expressions get the parentheses their structure needs.
func (q *Query) String() string {
	pr := &printer{}
	pr.query(q)
	return pr.b.String()
}

// GroupString prints a group graph pattern as SPARQL text that stands on its
// own: prefixed names are written as full IRIs, so no prologue is needed.
func GroupString(g *GroupPattern) string {
	pr := &printer{full: true}
	pr.group(g)
	return pr.b.String()
}

type printer struct {
	b     strings.Builder
	depth int
	// full writes prefixed names as full IRIs.
	full bool
}

func (pr *printer) w(ss ...string) {
	for _, s := range ss {
		pr.b.WriteString(s)
	}
}

func (pr *printer) nl() {
	pr.b.WriteByte('\n')
	pr.w(strings.Repeat("  ", pr.depth))
}

func (pr *printer) query(q *Query) {
	for _, d := range q.Prologue {
		if d.IsPrefix {
			pr.w("PREFIX ", d.Prefix, ": ", iriRef(d.IRI))
		} else {
			pr.w("BASE ", iriRef(d.IRI))
		}
		pr.nl()
	}
	switch q.Form {
	case FormSelect:
		pr.selectClause(q.Select)
	case FormConstruct:
		pr.w("CONSTRUCT")
		if !q.ShortConstruct {
			pr.w(" ")
			pr.template(q.Template)
		}
	case FormDescribe:
		pr.w("DESCRIBE")
		if q.DescribeAll {
			pr.w(" *")
		}
		for _, d := range q.Describe {
			pr.w(" ")
			pr.node(d)
		}
	case FormAsk:
		pr.w("ASK")
	}
	for _, d := range q.Dataset {
		pr.nl()
		pr.w("FROM ")
		if d.Named {
			pr.w("NAMED ")
		}
		pr.iri(d.IRI)
	}
	switch {
	case q.ShortConstruct:
		pr.nl()
		pr.w("WHERE ")
		pr.template(q.Template)
	case q.Where != nil:
		pr.nl()
		pr.w("WHERE ")
		pr.group(q.Where)
	}
	pr.modifiers(q.Modifiers)
	pr.values(q.Values, true)
	pr.w("\n")
}

func (pr *printer) selectClause(s *SelectClause) {
	pr.w("SELECT")
	switch {
	case s.Distinct:
		pr.w(" DISTINCT")
	case s.Reduced:
		pr.w(" REDUCED")
	}
	if s.Star {
		pr.w(" *")
	}
	for _, it := range s.Items {
		pr.w(" ")
		if it.Expr == nil {
			pr.node(it.Var)
			continue
		}
		pr.w("(")
		pr.expr(it.Expr)
		pr.w(" AS ")
		pr.node(it.Var)
		pr.w(")")
	}
}

func (pr *printer) template(ts []*TriplesSameSubject) {
	pr.w("{")
	pr.depth++
	for _, t := range ts {
		pr.nl()
		pr.triples(t)
		pr.w(" .")
	}
	pr.depth--
	pr.nl()
	pr.w("}")
}

func (pr *printer) modifiers(m Modifiers) {
	if len(m.GroupBy) > 0 {
		pr.nl()
		pr.w("GROUP BY")
		for _, g := range m.GroupBy {
			pr.w(" ")
			switch e := g.Expr.(type) {
			case *Var, *Call, *FuncCall:
				if g.Var == nil {
					pr.expr(e)
					continue
				}
			}
			pr.w("(")
			pr.expr(g.Expr)
			if g.Var != nil {
				pr.w(" AS ")
				pr.node(g.Var)
			}
			pr.w(")")
		}
	}
	if len(m.Having) > 0 {
		pr.nl()
		pr.w("HAVING")
		for _, h := range m.Having {
			pr.w(" (")
			pr.expr(h)
			pr.w(")")
		}
	}
	if len(m.OrderBy) > 0 {
		pr.nl()
		pr.w("ORDER BY")
		for _, o := range m.OrderBy {
			pr.w(" ")
			if v, ok := o.Expr.(*Var); ok && !o.Desc {
				pr.node(v)
				continue
			}
			if o.Desc {
				pr.w("DESC(")
			} else {
				pr.w("ASC(")
			}
			pr.expr(o.Expr)
			pr.w(")")
		}
	}
	if m.Limit >= 0 {
		pr.nl()
		pr.w("LIMIT ", itoa(m.Limit))
	}
	if m.Offset >= 0 {
		pr.nl()
		pr.w("OFFSET ", itoa(m.Offset))
	}
}

func itoa(n int64) string {
	if n == 0 {
		return "0"
	}
	var buf [20]byte
	i := len(buf)
	for n > 0 {
		i--
		buf[i] = byte('0' + n%10)
		n /= 10
	}
	return string(buf[i:])
}

// values prints a VALUES block, on a line of its own when nl is set.
func (pr *printer) values(v *ValuesBlock, nl bool) {
	if v == nil {
		return
	}
	if nl {
		pr.nl()
	}
	pr.w("VALUES (")
	for i, x := range v.Vars {
		if i > 0 {
			pr.w(" ")
		}
		pr.node(x)
	}
	pr.w(") {")
	pr.depth++
	for _, row := range v.Rows {
		pr.nl()
		pr.w("(")
		for i, val := range row {
			if i > 0 {
				pr.w(" ")
			}
			if val == nil {
				pr.w("UNDEF")
			} else {
				pr.node(val)
			}
		}
		pr.w(")")
	}
	pr.depth--
	pr.nl()
	pr.w("}")
}

func (pr *printer) group(g *GroupPattern) {
	pr.w("{")
	pr.depth++
	if g.Sub != nil {
		pr.nl()
		pr.selectClause(g.Sub.Select)
		pr.nl()
		pr.w("WHERE ")
		pr.group(g.Sub.Where)
		pr.modifiers(g.Sub.Modifiers)
		pr.values(g.Sub.Values, true)
	}
	for _, e := range g.Elems {
		pr.nl()
		pr.pattern(e)
	}
	pr.depth--
	pr.nl()
	pr.w("}")
}

func (pr *printer) pattern(p Pattern) {
	switch p := p.(type) {
	case *TriplesBlock:
		for i, t := range p.Triples {
			if i > 0 {
				pr.nl()
			}
			pr.triples(t)
			pr.w(" .")
		}
	case *GroupOrUnion:
		for i, g := range p.Groups {
			if i > 0 {
				pr.w(" UNION ")
			}
			pr.group(g)
		}
	case *Optional:
		pr.w("OPTIONAL ")
		pr.group(p.Pattern)
	case *Minus:
		pr.w("MINUS ")
		pr.group(p.Pattern)
	case *Graph:
		pr.w("GRAPH ")
		pr.node(p.Name)
		pr.w(" ")
		pr.group(p.Pattern)
	case *Service:
		pr.w("SERVICE ")
		if p.Silent {
			pr.w("SILENT ")
		}
		pr.node(p.Name)
		pr.w(" ")
		pr.group(p.Pattern)
	case *Filter:
		pr.w("FILTER (")
		pr.expr(p.Expr)
		pr.w(")")
	case *Bind:
		pr.w("BIND (")
		pr.expr(p.Expr)
		pr.w(" AS ")
		pr.node(p.Var)
		pr.w(")")
	case *InlineData:
		pr.values(p.Values, false)
	}
}

func (pr *printer) triples(t *TriplesSameSubject) {
	pr.node(t.Subject)
	if len(t.Props) > 0 {
		pr.w(" ")
		pr.props(t.Props)
	}
}

func (pr *printer) props(ps []*Property) {
	for i, p := range ps {
		if i > 0 {
			pr.w(" ; ")
		}
		pr.verb(p.Verb)
		for j, o := range p.Objects {
			if j > 0 {
				pr.w(" ,")
			}
			pr.w(" ")
			pr.node(o)
		}
	}
}

func (pr *printer) verb(v Verb) {
	switch v := v.(type) {
	case *Var:
		pr.node(v)
	case Path:
		pr.path(v, 0)
	}
}

// Levels of property path syntax, loosest first: rules [89] PathAlternative,
// [90] PathSequence, [92] PathEltOrInverse, [91] PathElt, [94] PathPrimary.
const (
	levelAlt = iota
	levelSeq
	levelInverse
	levelElt
	levelPrimary
)

// path prints p where the grammar expects level; looser paths get parentheses.
func (pr *printer) path(p Path, level int) {
	own := levelPrimary
	switch p.(type) {
	case *PathAlternative:
		own = levelAlt
	case *PathSequence:
		own = levelSeq
	case *PathInverse:
		own = levelInverse
	case *PathMod:
		own = levelElt
	}
	if own < level {
		pr.w("(")
		pr.path(p, levelAlt)
		pr.w(")")
		return
	}
	switch p := p.(type) {
	case *IRI:
		pr.iri(p)
	case *PathAlternative:
		pr.path(p.Left, levelAlt)
		pr.w(" | ")
		pr.path(p.Right, levelSeq)
	case *PathSequence:
		pr.path(p.Left, levelSeq)
		pr.w(" / ")
		pr.path(p.Right, levelInverse)
	case *PathInverse:
		pr.w("^")
		pr.path(p.Path, levelElt)
	case *PathMod:
		pr.path(p.Path, levelPrimary)
		pr.w(string(p.Mod))
	case *PathNegated:
		pr.w("!(")
		for i, it := range p.Items {
			if i > 0 {
				pr.w(" | ")
			}
			if it.Inverse {
				pr.w("^")
			}
			pr.iri(it.IRI)
		}
		pr.w(")")
	}
}

func (pr *printer) node(n GraphNode) {
	switch n := n.(type) {
	case *Var:
		pr.w("?", n.Name)
	case *IRI:
		pr.iri(n)
	case *Literal:
		pr.literal(n)
	case *BlankNode:
		if n.Label == "" {
			pr.w("[]")
		} else {
			pr.w("_:", n.Label)
		}
	case *Collection:
		pr.w("(")
		for i, it := range n.Items {
			if i > 0 {
				pr.w(" ")
			}
			pr.node(it)
		}
		pr.w(")")
	case *BlankNodePropertyList:
		pr.w("[ ")
		pr.props(n.Props)
		pr.w(" ]")
	}
}

func (pr *printer) iri(i *IRI) {
	switch i.Form {
	case IRIKeywordA:
		pr.w("a")
	case IRIPrefixed:
		if pr.full {
			pr.w(iriRef(i.IRI))
			return
		}
		pr.w(i.Prefix, ":", escapeLocal(i.Local))
	default:
		pr.w(iriRef(i.IRI))
	}
}

// iriRef writes an IRI in angle brackets; the lexer admits no character that
// would need escaping.
func iriRef(i rdf.IRI) string { return "<" + string(i) + ">" }

// escapeLocal writes the local part of a prefixed name with the escapes
// (rule [173] PN_LOCAL_ESC) that its characters need where they stand.
func escapeLocal(s string) string {
	var b strings.Builder
	rs := []rune(s)
	for i, r := range rs {
		last := i == len(rs)-1
		switch {
		case r == '%' && i+2 < len(rs) && hexRune(rs[i+1]) && hexRune(rs[i+2]):
			b.WriteRune(r) // the start of a PERCENT escape, kept as written
		case r == ':' || ('0' <= r && r <= '9') || rdf.IsPNCharsU(r):
			b.WriteRune(r)
		case i > 0 && rdf.IsPNChars(r):
			b.WriteRune(r)
		case r == '.' && i > 0 && !last:
			b.WriteRune(r)
		default:
			b.WriteByte('\\')
			b.WriteRune(r)
		}
	}
	return b.String()
}

func hexRune(r rune) bool { return r < 0x80 && hexValue(byte(r)) >= 0 }

func (pr *printer) literal(l *Literal) {
	switch l.Form {
	case LiteralNumber, LiteralBoolean:
		pr.w(l.Value.Lexical)
		return
	}
	pr.w(`"`, rdf.EscapeString(l.Value.Lexical), `"`)
	switch {
	case l.Value.Lang != "":
		pr.w("@", l.Value.Lang)
	case l.Datatype != nil:
		pr.w("^^")
		pr.iri(l.Datatype)
	}
}

// expr prints an expression; operands that are themselves operations are
// parenthesised, so no precedence rule is needed to read the text back.
func (pr *printer) expr(e Expr) {
	switch e := e.(type) {
	case *Var:
		pr.node(e)
	case *IRI:
		pr.iri(e)
	case *Literal:
		pr.literal(e)
	case *Binary:
		pr.operand(e.Left)
		pr.w(" ", e.Op, " ")
		pr.operand(e.Right)
	case *Unary:
		pr.w(e.Op)
		switch e.Operand.(type) {
		case *Var, *Call, *FuncCall, *Aggregate, *Exists:
			pr.expr(e.Operand)
		default:
			pr.w("(")
			pr.expr(e.Operand)
			pr.w(")")
		}
	case *In:
		pr.operand(e.Expr)
		if e.Not {
			pr.w(" NOT")
		}
		pr.w(" IN ")
		pr.args(e.List)
	case *Call:
		pr.w(e.Name)
		pr.args(e.Args)
	case *FuncCall:
		pr.iri(e.IRI)
		pr.w("(")
		if e.Distinct {
			pr.w("DISTINCT ")
		}
		pr.list(e.Args)
		pr.w(")")
	case *Exists:
		if e.Not {
			pr.w("NOT ")
		}
		pr.w("EXISTS ")
		pr.group(e.Pattern)
	case *Aggregate:
		pr.w(e.Name, "(")
		if e.Distinct {
			pr.w("DISTINCT ")
		}
		if e.Arg == nil {
			pr.w("*")
		} else {
			pr.expr(e.Arg)
		}
		if e.HasSeparator {
			pr.w(` ; SEPARATOR = "`, rdf.EscapeString(e.Separator), `"`)
		}
		pr.w(")")
	}
}

func (pr *printer) operand(e Expr) {
	switch e.(type) {
	case *Binary, *In, *Unary:
		pr.w("(")
		pr.expr(e)
		pr.w(")")
	default:
		pr.expr(e)
	}
}

func (pr *printer) args(es []Expr) {
	pr.w("(")
	pr.list(es)
	pr.w(")")
}

func (pr *printer) list(es []Expr) {
	for i, e := range es {
		if i > 0 {
			pr.w(", ")
		}
		pr.expr(e)
	}
}
