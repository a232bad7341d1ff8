package algebra

import (
	"fmt"
	"strconv"
	"strings"

	"veneer/catalog/rdf"
)

// The printed form is a parenthesised prefix notation of our own: one operator
// per line, its inputs indented below it, and expressions, terms and paths on
// one line. For example
//
//	(project (?s)
//	  (filter ((> ?o 3))
//	    (bgp
//	      (?s <http://example.org/p> ?o))))
//
// IRIs in the XSD namespace are shortened to xsd:local. Hidden variables print
// as ?_:name.

// String prints a query: its form, result variables, dataset, template or
// described resources, and the algebra.
func (q *Query) String() string {
	var b strings.Builder
	form := map[Form]string{Select: "select", Ask: "ask", Construct: "construct", Describe: "describe"}[q.Form]
	fmt.Fprintf(&b, "(%s", form)
	if q.Form == Select {
		b.WriteString(" " + varList(q.Vars))
	}
	for _, d := range q.Dataset.Default {
		b.WriteString("\n  (from " + termString(d) + ")")
	}
	for _, d := range q.Dataset.Named {
		b.WriteString("\n  (from-named " + termString(d) + ")")
	}
	if q.Form == Construct {
		b.WriteString("\n  (template")
		for _, t := range q.Template {
			b.WriteString("\n    " + tripleString(t))
		}
		b.WriteString(")")
	}
	if q.Form == Describe {
		b.WriteString("\n  (resources")
		for _, it := range q.Describe {
			b.WriteString(" " + itemString(it))
		}
		b.WriteString(")")
	}
	b.WriteString("\n")
	writeNode(&b, q.Root, 1)
	b.WriteString(")")
	return b.String()
}

// String prints an operator tree.
func String(n Node) string {
	var b strings.Builder
	writeNode(&b, n, 0)
	return b.String()
}

// ExprString prints an expression on one line.
func ExprString(e Expr) string {
	var b strings.Builder
	writeExpr(&b, e)
	return b.String()
}

// PathString prints a property path on one line.
func PathString(p Path) string {
	switch p := p.(type) {
	case PathLink:
		return termString(p.IRI)
	case PathInv:
		return "(inv " + PathString(p.Path) + ")"
	case PathSeq:
		return "(seq " + PathString(p.Left) + " " + PathString(p.Right) + ")"
	case PathAlt:
		return "(alt " + PathString(p.Left) + " " + PathString(p.Right) + ")"
	case PathZeroOrMore:
		return "(zero-or-more " + PathString(p.Path) + ")"
	case PathOneOrMore:
		return "(one-or-more " + PathString(p.Path) + ")"
	case PathZeroOrOne:
		return "(zero-or-one " + PathString(p.Path) + ")"
	case PathNegated:
		s := "(nps"
		for _, i := range p.Forward {
			s += " " + termString(i)
		}
		for _, i := range p.Inverse {
			s += " ^" + termString(i)
		}
		return s + ")"
	}
	return fmt.Sprintf("(unknown-path %T)", p)
}

func indent(b *strings.Builder, depth int) {
	b.WriteString(strings.Repeat("  ", depth))
}

// writeNode writes n at the given depth; the caller has written nothing of the
// current line.
func writeNode(b *strings.Builder, n Node, depth int) {
	indent(b, depth)
	head := func(s string) { b.WriteString("(" + s) }
	kids := func(ns ...Node) {
		for _, k := range ns {
			b.WriteString("\n")
			writeNode(b, k, depth+1)
		}
		b.WriteString(")")
	}
	switch n := n.(type) {
	case BGP:
		head("bgp")
		for _, t := range n.Patterns {
			b.WriteString("\n")
			indent(b, depth+1)
			b.WriteString(tripleString(t))
		}
		b.WriteString(")")
	case PathPattern:
		head("path " + itemString(n.S) + " " + PathString(n.Path) + " " + itemString(n.O) + ")")
	case Join:
		head("join")
		kids(n.Left, n.Right)
	case LeftJoin:
		head("left-join")
		if n.Expr != nil {
			b.WriteString(" " + ExprString(n.Expr))
		}
		kids(n.Left, n.Right)
	case Filter:
		head("filter (" + exprList(n.Exprs) + ")")
		kids(n.Input)
	case Union:
		head("union")
		kids(n.Left, n.Right)
	case Minus:
		head("minus")
		kids(n.Left, n.Right)
	case Graph:
		head("graph " + itemString(n.Name))
		kids(n.Input)
	case Extend:
		head("extend (" + itemString(n.Var) + " " + ExprString(n.Expr) + ")")
		kids(n.Input)
	case Values:
		head("values " + varList(n.Vars))
		for _, row := range n.Rows {
			b.WriteString("\n")
			indent(b, depth+1)
			cells := make([]string, len(row))
			for i, c := range row {
				if c == nil {
					cells[i] = "undef"
				} else {
					cells[i] = termString(c)
				}
			}
			b.WriteString("(" + strings.Join(cells, " ") + ")")
		}
		b.WriteString(")")
	case Table:
		if n.Empty {
			head("table empty)")
		} else {
			head("table unit)")
		}
	case Service:
		s := "service "
		if n.Silent {
			s += "silent "
		}
		head(s + itemString(n.Endpoint))
		kids(n.Input)
	case Group:
		keys := make([]string, len(n.Keys))
		for i, k := range n.Keys {
			switch {
			case k.Var == "":
				keys[i] = ExprString(k.Expr)
			case k.Expr == Expr(k.Var):
				keys[i] = itemString(k.Var)
			default:
				keys[i] = "(" + itemString(k.Var) + " " + ExprString(k.Expr) + ")"
			}
		}
		aggs := make([]string, len(n.Aggs))
		for i, a := range n.Aggs {
			aggs[i] = "(" + itemString(a.Var) + " " + ExprString(a.Agg) + ")"
		}
		head("group (" + strings.Join(keys, " ") + ") (" + strings.Join(aggs, " ") + ")")
		kids(n.Input)
	case OrderBy:
		conds := make([]string, len(n.Conds))
		for i, c := range n.Conds {
			if c.Desc {
				conds[i] = "(desc " + ExprString(c.Expr) + ")"
			} else {
				conds[i] = "(asc " + ExprString(c.Expr) + ")"
			}
		}
		head("order-by (" + strings.Join(conds, " ") + ")")
		kids(n.Input)
	case Project:
		head("project " + varList(n.Vars))
		kids(n.Input)
	case Distinct:
		head("distinct")
		kids(n.Input)
	case Reduced:
		head("reduced")
		kids(n.Input)
	case Slice:
		limit := "all"
		if n.Limit >= 0 {
			limit = strconv.FormatInt(n.Limit, 10)
		}
		head(fmt.Sprintf("slice %d %s", n.Offset, limit))
		kids(n.Input)
	default:
		head(fmt.Sprintf("unknown %T)", n))
	}
}

func varList(vs []Var) string {
	s := make([]string, len(vs))
	for i, v := range vs {
		s[i] = itemString(v)
	}
	return "(" + strings.Join(s, " ") + ")"
}

func exprList(es []Expr) string {
	s := make([]string, len(es))
	for i, e := range es {
		s[i] = ExprString(e)
	}
	return strings.Join(s, " ")
}

func tripleString(t Triple) string {
	return "(" + itemString(t.S) + " " + itemString(t.P) + " " + itemString(t.O) + ")"
}

func itemString(it Item) string {
	switch it := it.(type) {
	case Var:
		return "?" + string(it)
	case Const:
		return termString(it.Term)
	}
	return "nil"
}

// termString writes a term in N-Triples form, with XSD datatypes shortened.
func termString(t rdf.Term) string {
	switch t := t.(type) {
	case rdf.IRI:
		if local, ok := strings.CutPrefix(string(t), rdf.XSDNS); ok {
			return "xsd:" + local
		}
		return t.String()
	case rdf.Literal:
		s := `"` + rdf.EscapeString(t.Lexical) + `"`
		switch {
		case t.Lang != "":
			return s + "@" + t.Lang
		case t.Datatype == "" || t.Datatype == rdf.XSDString:
			return s
		}
		return s + "^^" + termString(t.Datatype)
	case nil:
		return "undef"
	}
	return t.String()
}

func writeExpr(b *strings.Builder, e Expr) {
	switch e := e.(type) {
	case Var, Const:
		b.WriteString(itemString(e.(Item)))
	case Call:
		b.WriteByte('(')
		if e.IRI != "" {
			b.WriteString(termString(rdf.IRI(e.IRI)))
		} else {
			b.WriteString(e.Op)
		}
		for _, a := range e.Args {
			b.WriteByte(' ')
			writeExpr(b, a)
		}
		b.WriteByte(')')
	case Exists:
		if e.Not {
			b.WriteString("(not-exists ")
		} else {
			b.WriteString("(exists ")
		}
		// Raw line breaks come only from the layout (literals escape theirs).
		lines := strings.Split(String(e.Pattern), "\n")
		for i, l := range lines {
			lines[i] = strings.TrimLeft(l, " ")
		}
		b.WriteString(strings.Join(lines, " "))
		b.WriteByte(')')
	case Aggregate:
		b.WriteString("(" + e.Name)
		if e.Distinct {
			b.WriteString(" distinct")
		}
		if e.Arg == nil {
			b.WriteString(" *")
		} else {
			b.WriteByte(' ')
			writeExpr(b, e.Arg)
		}
		if e.Name == "GROUP_CONCAT" && e.Separator != " " {
			b.WriteString(" (separator " + strconv.Quote(e.Separator) + ")")
		}
		b.WriteByte(')')
	default:
		fmt.Fprintf(b, "(unknown %T)", e)
	}
}
