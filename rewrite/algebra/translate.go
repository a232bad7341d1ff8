package algebra

import (
	"fmt"
	"strings"

	"veneer/catalog/rdf"
	"veneer/rewrite/sparql"
)

// Translate turns a parsed query into its algebra expression as §18.2 of SPARQL
// 1.1 Query specifies, and checks the rules of §18.2.1 on variable scope (BIND
// and SELECT expressions may not rebind an in-scope variable; a grouped query
// may project only grouped variables and aggregates). The error is a
// sparql.ErrorList with positions.
//
// Variables the translation introduces are hidden (their names start with
// "_:"): blank nodes of the query keep their label ("_:a"), and fresh ones
// (for [], collections, the middle of a path sequence, and aggregate results)
// are numbered after a '#', which no label can contain ("_:#b1", "_:#p1",
// "_:#agg1").
func Translate(q *sparql.Query) (*Query, error) {
	t := &translator{src: q}
	out := t.query(q)
	if err := t.errs.Err(); err != nil {
		return nil, err
	}
	return out, nil
}

type translator struct {
	src   *sparql.Query
	errs  sparql.ErrorList
	fresh int
}

func (t *translator) errorf(pos sparql.Pos, format string, args ...any) {
	t.errs = append(t.errs, t.src.Errorf(pos, format, args...))
}

func (t *translator) freshVar(kind string) Var {
	t.fresh++
	return Var(fmt.Sprintf("_:#%s%d", kind, t.fresh))
}

func (t *translator) query(q *sparql.Query) *Query {
	out := &Query{}
	for _, d := range q.Dataset {
		if d.Named {
			out.Dataset.Named = append(out.Dataset.Named, d.IRI.IRI)
		} else {
			out.Dataset.Default = append(out.Dataset.Default, d.IRI.IRI)
		}
	}
	switch q.Form {
	case sparql.FormSelect:
		out.Form = Select
		out.Root, out.Vars = t.level(q.Select, q.Where, q.Modifiers, q.Values)
	case sparql.FormAsk:
		out.Form = Ask
		out.Root, _ = t.level(nil, q.Where, q.Modifiers, q.Values)
	case sparql.FormConstruct:
		out.Form = Construct
		var e expansion
		t.expand(&e, q.Template)
		out.Template = e.triples()
		if q.ShortConstruct {
			out.Root, _ = t.levelOver(nil, e.node(), q.Modifiers, q.Values)
		} else {
			out.Root, _ = t.level(nil, q.Where, q.Modifiers, q.Values)
		}
	case sparql.FormDescribe:
		out.Form = Describe
		if q.Where != nil {
			out.Root, _ = t.level(nil, q.Where, q.Modifiers, q.Values)
		} else {
			out.Root, _ = t.levelOver(nil, BGP{}, q.Modifiers, q.Values)
		}
		for _, d := range q.Describe {
			out.Describe = append(out.Describe, t.item(d))
		}
		if q.DescribeAll {
			for _, v := range InScope(out.Root) {
				if !v.Hidden() {
					out.Describe = append(out.Describe, v)
				}
			}
		}
	}
	out.Root = simplify(out.Root)
	return out
}

// simplify applies §18.2.2.8: the empty pattern is the identity of Join.
func simplify(n Node) Node {
	n, _ = Transform(n, func(n Node) (Node, bool) {
		j, ok := n.(Join)
		if !ok {
			return n, false
		}
		if isEmptyBGP(j.Left) {
			return j.Right, true
		}
		if isEmptyBGP(j.Right) {
			return j.Left, true
		}
		return n, false
	})
	return n
}

func isEmptyBGP(n Node) bool {
	b, ok := n.(BGP)
	return ok && len(b.Patterns) == 0
}

// level translates one query level: its pattern, then grouping, aggregates,
// HAVING, VALUES, SELECT expressions and the solution modifiers (§18.2.4,
// §18.2.5). sel is nil for ASK, CONSTRUCT and DESCRIBE. It returns the algebra
// and the projected variables.
func (t *translator) level(sel *sparql.SelectClause, where *sparql.GroupPattern, mods sparql.Modifiers, values *sparql.ValuesBlock) (Node, []Var) {
	return t.levelOver(sel, t.group(where), mods, values)
}

func (t *translator) levelOver(sel *sparql.SelectClause, p Node, mods sparql.Modifiers, values *sparql.ValuesBlock) (Node, []Var) {
	patternScope := varSet(InScope(p))

	// Grouping and aggregation (§18.2.4.1).
	agg := &aggregation{t: t}
	grouped := len(mods.GroupBy) > 0 || (sel != nil && anyAggregate(selectExprs(sel))) ||
		anyAggregate(mods.Having) || anyAggregate(orderExprs(mods.OrderBy))
	groupVars := map[string]bool{}
	if grouped {
		g := Group{Input: p}
		for _, c := range mods.GroupBy {
			k := GroupKey{Expr: t.expr(c.Expr, nil)}
			switch {
			case c.Var != nil:
				k.Var = Var(c.Var.Name)
				if patternScope[k.Var] {
					t.errorf(c.Var.Pos, "GROUP BY (... AS ?%s): ?%s is already in scope in the query pattern", c.Var.Name, c.Var.Name)
				}
			default:
				if v, ok := c.Expr.(*sparql.Var); ok {
					k.Var = Var(v.Name)
				}
			}
			if k.Var != "" {
				groupVars[string(k.Var)] = true
			}
			g.Keys = append(g.Keys, k)
		}
		if sel != nil && sel.Star {
			t.errorf(sel.Pos, "SELECT * cannot be used in a query that groups (GROUP BY or aggregates): list the grouped variables and aggregates to project")
		}
		p = g
	}

	// Restrictions on what a grouped level may use (§11.4), checked against
	// the syntax tree for the positions.
	if grouped && sel != nil {
		aliases := map[string]bool{}
		for _, it := range sel.Items {
			if it.Expr == nil {
				if !groupVars[it.Var.Name] {
					t.errorf(it.Var.Pos, "?%s is projected but is neither grouped (GROUP BY ?%s) nor inside an aggregate", it.Var.Name, it.Var.Name)
				}
				continue
			}
			for _, v := range unaggregatedVars(it.Expr) {
				if !groupVars[v.Name] && !aliases[v.Name] {
					t.errorf(v.Pos, "?%s is used in a SELECT expression but is neither grouped nor inside an aggregate", v.Name)
				}
			}
			aliases[it.Var.Name] = true
		}
	}
	if grouped {
		for _, h := range mods.Having {
			for _, v := range unaggregatedVars(h) {
				if !groupVars[v.Name] {
					t.errorf(v.Pos, "?%s is used in HAVING but is neither grouped nor inside an aggregate", v.Name)
				}
			}
		}
	}

	// HAVING (§18.2.4.2).
	if len(mods.Having) > 0 {
		f := Filter{Input: p}
		for _, h := range mods.Having {
			f.Exprs = append(f.Exprs, t.expr(h, agg))
		}
		p = f
	}

	// VALUES (§18.2.4.3).
	if values != nil {
		p = Join{Left: p, Right: t.values(values)}
	}

	// SELECT expressions (§18.2.4.4). In a grouped level the Group node makes
	// only the grouped variables visible.
	visible := InScope(p)
	var pv []Var
	if sel != nil {
		inPV := map[Var]bool{}
		vs := varSet(visible)
		for _, it := range sel.Items {
			v := Var(it.Var.Name)
			if it.Expr != nil {
				switch {
				case vs[v] || patternScope[v]:
					t.errorf(it.Var.Pos, "SELECT (... AS ?%s): ?%s is already in scope in the query pattern", it.Var.Name, it.Var.Name)
				case inPV[v]:
					t.errorf(it.Var.Pos, "SELECT (... AS ?%s): ?%s is already used earlier in this SELECT clause", it.Var.Name, it.Var.Name)
				}
				p = Extend{Input: p, Var: v, Expr: t.expr(it.Expr, agg)}
			}
			if !inPV[v] {
				inPV[v] = true
				pv = append(pv, v)
			}
		}
		if sel.Star {
			for _, v := range visible {
				if !v.Hidden() {
					pv = append(pv, v)
				}
			}
		}
	}

	// ORDER BY (§18.2.5.1).
	var conds []OrderCond
	for _, o := range mods.OrderBy {
		conds = append(conds, OrderCond{Expr: t.expr(o.Expr, agg), Desc: o.Desc})
	}
	if grouped {
		p = replaceGroup(p, func(g Group) Group {
			g.Aggs = agg.aggs
			return g
		})
	}
	if len(conds) > 0 {
		p = OrderBy{Input: p, Conds: conds}
	}

	// Projection, DISTINCT, REDUCED, OFFSET and LIMIT (§18.2.5.2-5).
	if sel != nil {
		p = Project{Input: p, Vars: pv}
		switch {
		case sel.Distinct:
			p = Distinct{Input: p}
		case sel.Reduced:
			p = Reduced{Input: p}
		}
	}
	if mods.Limit >= 0 || mods.Offset >= 0 {
		p = Slice{Input: p, Offset: max(mods.Offset, 0), Limit: mods.Limit}
	}
	return p, pv
}

func varSet(vs []Var) map[Var]bool {
	m := make(map[Var]bool, len(vs))
	for _, v := range vs {
		m[v] = true
	}
	return m
}

func selectExprs(sel *sparql.SelectClause) []sparql.Expr {
	var es []sparql.Expr
	for _, it := range sel.Items {
		if it.Expr != nil {
			es = append(es, it.Expr)
		}
	}
	return es
}

func orderExprs(conds []*sparql.OrderCondition) []sparql.Expr {
	es := make([]sparql.Expr, len(conds))
	for i, c := range conds {
		es[i] = c.Expr
	}
	return es
}

// anyAggregate reports whether an aggregate occurs in the expressions (not
// counting those inside EXISTS, which belong to another level).
func anyAggregate(es []sparql.Expr) bool {
	found := false
	for _, e := range es {
		walkExpr(e, func(e sparql.Expr) bool {
			if _, ok := e.(*sparql.Aggregate); ok {
				found = true
				return false
			}
			return true
		})
	}
	return found
}

// unaggregatedVars returns the variables of e that are outside aggregates.
func unaggregatedVars(e sparql.Expr) []*sparql.Var {
	var vs []*sparql.Var
	walkExpr(e, func(e sparql.Expr) bool {
		switch e := e.(type) {
		case *sparql.Aggregate:
			return false
		case *sparql.Var:
			vs = append(vs, e)
		}
		return true
	})
	return vs
}

// walkExpr calls fn on e and, while fn returns true, on its operands. It does
// not enter EXISTS patterns.
func walkExpr(e sparql.Expr, fn func(sparql.Expr) bool) {
	if e == nil || !fn(e) {
		return
	}
	switch e := e.(type) {
	case *sparql.Binary:
		walkExpr(e.Left, fn)
		walkExpr(e.Right, fn)
	case *sparql.Unary:
		walkExpr(e.Operand, fn)
	case *sparql.In:
		walkExpr(e.Expr, fn)
		for _, x := range e.List {
			walkExpr(x, fn)
		}
	case *sparql.Call:
		for _, x := range e.Args {
			walkExpr(x, fn)
		}
	case *sparql.FuncCall:
		for _, x := range e.Args {
			walkExpr(x, fn)
		}
	case *sparql.Aggregate:
		walkExpr(e.Arg, fn)
	}
}

// aggregation collects the aggregates of a level, each bound to a fresh
// variable; identical aggregates share one.
type aggregation struct {
	t     *translator
	aggs  []AggBinding
	byKey map[string]Var
}

func (a *aggregation) bind(agg Aggregate) Var {
	key := ExprString(agg)
	if v, ok := a.byKey[key]; ok {
		return v
	}
	if a.byKey == nil {
		a.byKey = map[string]Var{}
	}
	v := a.t.freshVar("agg")
	a.byKey[key] = v
	a.aggs = append(a.aggs, AggBinding{Var: v, Agg: agg})
	return v
}

// replaceGroup rewrites the level's Group node, which sits below the nodes the
// level put on top of it (Filter for HAVING, Join with VALUES, Extend for SELECT
// expressions); it does not descend into the group's input.
func replaceGroup(p Node, f func(Group) Group) Node {
	switch n := p.(type) {
	case Group:
		return f(n)
	case Filter:
		n.Input = replaceGroup(n.Input, f)
		return n
	case Join:
		n.Left = replaceGroup(n.Left, f)
		return n
	case Extend:
		n.Input = replaceGroup(n.Input, f)
		return n
	}
	return p
}

// group translates a group graph pattern (§18.2.2.6) without the final
// simplification, which runs once over the whole query.
func (t *translator) group(g *sparql.GroupPattern) Node {
	if g.Sub != nil {
		s := g.Sub
		n, _ := t.level(s.Select, s.Where, s.Modifiers, s.Values)
		return n
	}
	var filters []Expr
	var g0 Node = BGP{}
	var pending expansion
	flush := func() {
		if len(pending.items) > 0 {
			g0 = join(g0, pending.node())
			pending = expansion{}
		}
	}
	for _, e := range g.Elems {
		switch e := e.(type) {
		case *sparql.TriplesBlock:
			t.expand(&pending, e.Triples)
			continue
		case *sparql.Filter:
			filters = append(filters, t.expr(e.Expr, nil))
			continue
		}
		flush()
		switch e := e.(type) {
		case *sparql.Optional:
			a := t.group(e.Pattern)
			if f, ok := a.(Filter); ok {
				g0 = LeftJoin{Left: g0, Right: f.Input, Expr: conjunction(f.Exprs)}
			} else {
				g0 = LeftJoin{Left: g0, Right: a}
			}
		case *sparql.Minus:
			g0 = Minus{Left: g0, Right: t.group(e.Pattern)}
		case *sparql.Bind:
			v := Var(e.Var.Name)
			for _, in := range InScope(g0) {
				if in == v {
					t.errorf(e.Var.Pos, "BIND (... AS ?%s): ?%s is already in scope in this group", e.Var.Name, e.Var.Name)
					break
				}
			}
			g0 = Extend{Input: g0, Var: v, Expr: t.expr(e.Expr, nil)}
		case *sparql.GroupOrUnion:
			var a Node
			for i, gp := range e.Groups {
				if i == 0 {
					a = t.group(gp)
				} else {
					a = Union{Left: a, Right: t.group(gp)}
				}
			}
			g0 = join(g0, a)
		case *sparql.Graph:
			g0 = join(g0, Graph{Name: t.item(e.Name), Input: t.group(e.Pattern)})
		case *sparql.Service:
			g0 = join(g0, Service{Endpoint: t.item(e.Name), Silent: e.Silent, Input: t.group(e.Pattern),
				Pattern: sparql.GroupString(e.Pattern)})
		case *sparql.InlineData:
			g0 = join(g0, t.values(e.Values))
		}
	}
	flush()
	if len(filters) > 0 {
		g0 = Filter{Exprs: filters, Input: g0}
	}
	return g0
}

func join(l, r Node) Node { return Join{Left: l, Right: r} }

// conjunction joins expressions with &&.
func conjunction(es []Expr) Expr {
	e := es[0]
	for _, x := range es[1:] {
		e = Call{Op: "&&", Args: []Expr{e, x}}
	}
	return e
}

func (t *translator) values(v *sparql.ValuesBlock) Values { return InlineData(v) }

// InlineData translates one VALUES block of a query.
func InlineData(v *sparql.ValuesBlock) Values {
	out := Values{Vars: make([]Var, len(v.Vars)), Rows: make([][]rdf.Term, len(v.Rows)), Block: v.Block}
	for i, x := range v.Vars {
		out.Vars[i] = Var(x.Name)
	}
	for i, row := range v.Rows {
		r := make([]rdf.Term, len(row))
		for j, val := range row {
			switch val := val.(type) {
			case *sparql.IRI:
				r[j] = val.IRI
			case *sparql.Literal:
				r[j] = val.Value
			}
		}
		out.Rows[i] = r
	}
	return out
}

// item translates a term of the syntax tree.
func (t *translator) item(n sparql.GraphNode) Item {
	switch n := n.(type) {
	case *sparql.Var:
		return Var(n.Name)
	case *sparql.IRI:
		return Const{Term: n.IRI}
	case *sparql.Literal:
		return Const{Term: n.Value}
	case *sparql.BlankNode:
		if n.Label == "" {
			return t.freshVar("b")
		}
		return Var("_:" + n.Label)
	}
	panic(fmt.Sprintf("algebra: unexpected term %T", n))
}

// expansion accumulates the triple patterns and path patterns that a run of
// triples expands into (§18.2.2.1, §18.2.2.3, §18.2.2.4), in order.
type expansion struct {
	items []Node // BGP of one triple, or PathPattern
}

func (e *expansion) add(s Item, p Item, o Item) {
	e.items = append(e.items, BGP{Patterns: []Triple{{S: s, P: p, O: o}}})
}

// triples returns the triple patterns (for a template, where there are no paths).
func (e *expansion) triples() []Triple {
	var ts []Triple
	for _, it := range e.items {
		if b, ok := it.(BGP); ok {
			ts = append(ts, b.Patterns...)
		}
	}
	return ts
}

// node turns the expansion into algebra: adjacent triple patterns form one BGP
// (§18.2.2.5), and the BGPs and path patterns are joined in order.
func (e *expansion) node() Node {
	var out Node
	var cur []Triple
	push := func(n Node) {
		if out == nil {
			out = n
		} else {
			out = Join{Left: out, Right: n}
		}
	}
	for _, it := range e.items {
		if b, ok := it.(BGP); ok {
			cur = append(cur, b.Patterns...)
			continue
		}
		if len(cur) > 0 {
			push(BGP{Patterns: cur})
			cur = nil
		}
		push(it)
	}
	if len(cur) > 0 || out == nil {
		push(BGP{Patterns: cur})
	}
	return out
}

// expand expands the abbreviations of triples into e.
func (t *translator) expand(e *expansion, triples []*sparql.TriplesSameSubject) {
	for _, ts := range triples {
		s := t.node(e, ts.Subject)
		t.props(e, s, ts.Props)
	}
}

func (t *translator) props(e *expansion, s Item, props []*sparql.Property) {
	for _, pr := range props {
		for _, o := range pr.Objects {
			obj := t.node(e, o)
			switch v := pr.Verb.(type) {
			case *sparql.Var:
				e.add(s, Var(v.Name), obj)
			case sparql.Path:
				t.pathPattern(e, s, t.path(v), obj)
			}
		}
	}
}

// node expands a subject or object, adding the triples of collections and blank
// node property lists, and returns the term that stands for it.
func (t *translator) node(e *expansion, n sparql.GraphNode) Item {
	switch n := n.(type) {
	case *sparql.Collection:
		if len(n.Items) == 0 {
			return Const{Term: rdf.RDFNil}
		}
		head := t.freshVar("b")
		cur := head
		for i, it := range n.Items {
			e.add(cur, Const{Term: rdf.RDFFirst}, t.node(e, it))
			if i == len(n.Items)-1 {
				e.add(cur, Const{Term: rdf.RDFRest}, Const{Term: rdf.RDFNil})
			} else {
				next := t.freshVar("b")
				e.add(cur, Const{Term: rdf.RDFRest}, next)
				cur = next
			}
		}
		return head
	case *sparql.BlankNodePropertyList:
		b := t.freshVar("b")
		t.props(e, b, n.Props)
		return b
	}
	return t.item(n)
}

// path translates a property path expression (§18.2.2.3). A negated property
// set becomes one PathNegated, which stands for the spec's NPS, inv(NPS) or
// alt(NPS, inv(NPS)) according to which of its lists are non-empty.
func (t *translator) path(p sparql.Path) Path {
	switch p := p.(type) {
	case *sparql.IRI:
		return PathLink{IRI: p.IRI}
	case *sparql.PathInverse:
		return PathInv{Path: t.path(p.Path)}
	case *sparql.PathSequence:
		return PathSeq{Left: t.path(p.Left), Right: t.path(p.Right)}
	case *sparql.PathAlternative:
		return PathAlt{Left: t.path(p.Left), Right: t.path(p.Right)}
	case *sparql.PathMod:
		inner := t.path(p.Path)
		switch p.Mod {
		case '*':
			return PathZeroOrMore{Path: inner}
		case '+':
			return PathOneOrMore{Path: inner}
		default:
			return PathZeroOrOne{Path: inner}
		}
	case *sparql.PathNegated:
		var n PathNegated
		for _, it := range p.Items {
			if it.Inverse {
				n.Inverse = append(n.Inverse, it.IRI.IRI)
			} else {
				n.Forward = append(n.Forward, it.IRI.IRI)
			}
		}
		return n
	}
	panic(fmt.Sprintf("algebra: unexpected path %T", p))
}

// pathPattern applies §18.2.2.4 to X path Y.
func (t *translator) pathPattern(e *expansion, x Item, p Path, y Item) {
	switch p := p.(type) {
	case PathLink:
		e.add(x, Const{Term: p.IRI}, y)
	case PathInv:
		if l, ok := p.Path.(PathLink); ok {
			e.add(y, Const{Term: l.IRI}, x)
			return
		}
		e.items = append(e.items, PathPattern{S: x, Path: p, O: y})
	case PathSeq:
		v := t.freshVar("p")
		t.pathPattern(e, x, p.Left, v)
		t.pathPattern(e, v, p.Right, y)
	default:
		e.items = append(e.items, PathPattern{S: x, Path: p, O: y})
	}
}

// expr translates an expression. agg collects aggregates where they are
// allowed (nil elsewhere; the parser has already rejected them there).
func (t *translator) expr(e sparql.Expr, agg *aggregation) Expr {
	switch e := e.(type) {
	case *sparql.Var:
		return Var(e.Name)
	case *sparql.IRI:
		return Const{Term: e.IRI}
	case *sparql.Literal:
		return Const{Term: e.Value}
	case *sparql.Binary:
		return Call{Op: e.Op, Args: []Expr{t.expr(e.Left, agg), t.expr(e.Right, agg)}}
	case *sparql.Unary:
		op := e.Op
		if op != "!" {
			op = "u" + op
		}
		return Call{Op: op, Args: []Expr{t.expr(e.Operand, agg)}}
	case *sparql.In:
		op := "IN"
		if e.Not {
			op = "NOT IN"
		}
		args := []Expr{t.expr(e.Expr, agg)}
		for _, x := range e.List {
			args = append(args, t.expr(x, agg))
		}
		return Call{Op: op, Args: args}
	case *sparql.Call:
		return Call{Op: canonicalBuiltIn(e.Name), Args: t.exprs(e.Args, agg)}
	case *sparql.FuncCall:
		if e.Distinct {
			t.errorf(e.Pos, "DISTINCT in the call of %s: custom aggregate functions are not supported", e.IRI.IRI.String())
		}
		return Call{IRI: string(e.IRI.IRI), Args: t.exprs(e.Args, agg)}
	case *sparql.Exists:
		return Exists{Not: e.Not, Pattern: simplify(t.group(e.Pattern))}
	case *sparql.Aggregate:
		a := Aggregate{Name: e.Name, Distinct: e.Distinct, Separator: " "}
		if e.HasSeparator {
			a.Separator = e.Separator
		}
		if e.Arg != nil {
			a.Arg = t.expr(e.Arg, nil)
		}
		if agg == nil {
			t.errorf(e.Pos, "aggregate %s is not allowed here", e.Name)
			return a
		}
		return agg.bind(a)
	}
	panic(fmt.Sprintf("algebra: unexpected expression %T", e))
}

func (t *translator) exprs(es []sparql.Expr, agg *aggregation) []Expr {
	out := make([]Expr, len(es))
	for i, e := range es {
		out[i] = t.expr(e, agg)
	}
	return out
}

// canonicalBuiltIn maps the synonyms URI and isURI to IRI and ISIRI (§17.4.2.8,
// §17.4.2.1), so that later stages see one name per function.
func canonicalBuiltIn(name string) string {
	switch name := strings.ToUpper(name); name {
	case "URI":
		return "IRI"
	case "ISURI":
		return "ISIRI"
	default:
		return name
	}
}
