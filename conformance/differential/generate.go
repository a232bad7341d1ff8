package differential

import (
	"fmt"
	"math/rand/v2"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"unicode/utf8"

	"veneer/catalog/rdf"
)

// Generate makes n queries over the graph g, drawn from a PCG stream seeded with
// seed: the same graph, seed and n give the same queries. The queries use the
// vocabulary the graph uses and constants from its data, and are kept small:
// anchored on constants or limited, so that a run stays quick.
func Generate(g *Graph, seed uint64, n int) []Query {
	gen := &generator{r: rand.New(rand.NewPCG(seed, 0x646966)), sh: shapeOf(g)}
	total := 0
	for _, f := range families {
		total += f.weight
	}
	qs := make([]Query, 0, n)
	for len(qs) < n {
		pick := gen.r.IntN(total)
		f := families[0]
		for _, f = range families {
			if pick < f.weight {
				break
			}
			pick -= f.weight
		}
		gen.vars = 0
		q, ok := f.make(gen)
		if !ok {
			continue // the data gave this family nothing to work with this time
		}
		q.ID = len(qs) + 1
		qs = append(qs, q)
	}
	return qs
}

// families are the query generators and their weights.
var families = []struct {
	weight int
	make   func(*generator) (Query, bool)
}{
	{10, (*generator).star},
	{8, (*generator).chain},
	{9, (*generator).optional},
	{6, (*generator).union},
	{6, (*generator).minus},
	{12, (*generator).filter},
	{8, (*generator).bind},
	{11, (*generator).aggregate},
	{8, (*generator).orderLimit},
	{5, (*generator).distinct},
	{8, (*generator).path},
	{5, (*generator).ask},
	{3, (*generator).construct},
	{3, (*generator).subquery},
	{4, (*generator).exists},
}

// maxRows bounds the solutions an anchored pattern is meant to have.
const maxRows = 120

type generator struct {
	r    *rand.Rand
	sh   *shape
	vars int
}

func (g *generator) chance(p float64) bool { return g.r.Float64() < p }

func pick[T any](g *generator, xs []T) T { return xs[g.r.IntN(len(xs))] }

// subset returns up to n distinct elements of xs in random order.
func (g *generator) subset(xs []string, n int) []string {
	ys := slices.Clone(xs)
	g.r.Shuffle(len(ys), func(i, j int) { ys[i], ys[j] = ys[j], ys[i] })
	return ys[:min(n, len(ys))]
}

// fresh returns a new variable named after base.
func (g *generator) fresh(base string) string {
	g.vars++
	return "?" + base + strconv.Itoa(g.vars)
}

// varFor returns a new variable named after a property.
func (g *generator) varFor(p *property) string { return g.fresh(localName(p.iri)) }

func localName(iri rdf.IRI) string {
	s := string(iri)
	if i := strings.LastIndexAny(s, "#/"); i >= 0 {
		s = s[i+1:]
	}
	var b strings.Builder
	for _, r := range s {
		if 'a' <= r && r <= 'z' || 'A' <= r && r <= 'Z' {
			b.WriteRune(r)
		}
	}
	if b.Len() == 0 {
		return "v"
	}
	return strings.ToLower(b.String()[:1]) + b.String()[1:]
}

// ---- classes, properties and anchors ----

// classWith returns a random class for which ok holds, or nil.
func (g *generator) classWith(ok func(*class) bool) *class {
	var cs []*class
	for _, c := range g.sh.classes {
		if ok(c) {
			cs = append(cs, c)
		}
	}
	if len(cs) == 0 {
		return nil
	}
	return pick(g, cs)
}

// props returns up to n distinct properties of c for which ok holds, in random order.
func (g *generator) props(c *class, n int, ok func(*property) bool) []*property {
	var ps []*property
	for _, p := range c.props {
		if ok == nil || ok(p) {
			ps = append(ps, p)
		}
	}
	g.r.Shuffle(len(ps), func(i, j int) { ps[i], ps[j] = ps[j], ps[i] })
	return ps[:min(n, len(ps))]
}

// anchor returns patterns that restrict the members of c bound to s to at most
// max (none when c is that small already).
func (g *generator) anchor(c *class, s string, max int) []string {
	if len(c.subjects) <= max {
		return nil
	}
	type option struct {
		p *property
		o rdf.Term
	}
	var opts []option
	for _, p := range c.props {
		if !p.functional {
			continue
		}
		// A few objects per property, so that unique ones do not crowd out the rest.
		for range 3 {
			o := pick(g, p.distinct)
			if len(p.inverse[o]) <= max {
				opts = append(opts, option{p, o})
			}
		}
	}
	if len(opts) == 0 {
		s0 := pick(g, c.subjects)
		return []string{fmt.Sprintf("FILTER(%s = %s)", s, term(s0))}
	}
	o := pick(g, opts)
	return []string{fmt.Sprintf("%s %s %s", s, term(o.p.iri), term(o.o))}
}

// uniqueOf returns a random unique property of c, or nil.
func (g *generator) uniqueOf(c *class) *property {
	ps := g.props(c, 1, func(p *property) bool { return p.unique && p.total && p.kind != kindLang })
	if len(ps) == 0 {
		return nil
	}
	return ps[0]
}

// ---- SPARQL text of terms ----

var prefixes = []struct{ name, ns string }{
	{"wf", "https://vocab.veneer.example/windfarm#"},
	{"rdf", rdf.RDFNS},
	{"rdfs", rdf.RDFSNS},
	{"xsd", rdf.XSDNS},
}

var simpleLocal = regexp.MustCompile(`^[A-Za-z][A-Za-z0-9]*$`)

// term writes an RDF term in SPARQL syntax.
func term(t rdf.Term) string {
	switch x := t.(type) {
	case rdf.IRI:
		for _, p := range prefixes {
			if local, ok := strings.CutPrefix(string(x), p.ns); ok && simpleLocal.MatchString(local) {
				return p.name + ":" + local
			}
		}
		return "<" + string(x) + ">"
	case rdf.Literal:
		switch {
		case x.Lang != "":
			return quote(x.Lexical) + "@" + x.Lang
		case x.Datatype == rdf.XSDString:
			return quote(x.Lexical)
		case x.Datatype == rdf.XSDInteger, x.Datatype == rdf.XSDBoolean:
			return x.Lexical
		}
		return quote(x.Lexical) + "^^" + term(x.Datatype)
	}
	return t.String()
}

// quote writes a SPARQL string literal.
func quote(s string) string {
	r := strings.NewReplacer(`\`, `\\`, `"`, `\"`, "\n", `\n`, "\r", `\r`, "\t", `\t`)
	return `"` + r.Replace(s) + `"`
}

// lexicalOf is the lexical form of a literal, or the IRI's text.
func lexicalOf(t rdf.Term) string {
	switch x := t.(type) {
	case rdf.Literal:
		return x.Lexical
	case rdf.IRI:
		return string(x)
	}
	return ""
}

// prefixOf returns the first n characters of s (fewer if s is shorter).
func prefixOf(s string, n int) string {
	i := 0
	for j := range s {
		if i == n {
			return s[:j]
		}
		i++
	}
	return s
}

// piece returns a substring of s of up to n characters, at a random place.
func (g *generator) piece(s string, n int) string {
	runes := []rune(s)
	if len(runes) <= n {
		return s
	}
	start := g.r.IntN(len(runes) - n + 1)
	return string(runes[start : start+n])
}

// ---- expressions ----

// condition returns a filter condition on the variable v, which holds values
// of property p.
func (g *generator) condition(v string, p *property) string {
	c := pick(g, p.distinct)
	lex := lexicalOf(c)
	switch p.kind {
	case kindInteger, kindDecimal, kindDouble:
		op := pick(g, []string{"<", "<=", ">", ">=", "=", "!="})
		switch g.r.IntN(6) {
		case 0:
			return fmt.Sprintf("%s * 2 %s %s", v, op, number(p.kind, lex, 2))
		case 1:
			return fmt.Sprintf("%s + 10 %s %s", v, op, number(p.kind, lex, 1))
		case 2:
			return fmt.Sprintf("ABS(%s - %s) < %s", v, term(c), pick(g, []string{"1", "10", "100"}))
		case 3:
			if p.kind == kindInteger {
				return fmt.Sprintf("%s IN (%s, %s, %s)", v, term(c), term(pick(g, p.distinct)), term(pick(g, p.distinct)))
			}
		}
		return fmt.Sprintf("%s %s %s", v, op, term(c))
	case kindString:
		switch g.r.IntN(12) {
		case 0:
			return fmt.Sprintf("%s != %s", v, term(c))
		case 1:
			return fmt.Sprintf("%s IN (%s, %s)", v, term(c), term(pick(g, p.distinct)))
		case 2:
			return fmt.Sprintf("STRSTARTS(%s, %s)", v, quote(prefixOf(lex, 1+g.r.IntN(4))))
		case 3:
			return fmt.Sprintf("CONTAINS(%s, %s)", v, quote(g.piece(lex, 2+g.r.IntN(3))))
		case 4:
			runes := []rune(lex)
			return fmt.Sprintf("STRENDS(%s, %s)", v, quote(string(runes[max(0, len(runes)-1-g.r.IntN(3)):])))
		case 5:
			return fmt.Sprintf("REGEX(%s, %s)", v, quote("^"+regexp.QuoteMeta(prefixOf(lex, 1+g.r.IntN(3)))))
		case 6:
			return fmt.Sprintf("REGEX(%s, %s, \"i\")", v, quote(regexp.QuoteMeta(strings.ToLower(g.piece(lex, 3)))))
		case 7:
			return fmt.Sprintf("STRLEN(%s) %s %d", v, pick(g, []string{"<", ">", ">="}), utf8.RuneCountInString(lex))
		case 8:
			return fmt.Sprintf("UCASE(%s) = UCASE(%s)", v, term(c))
		case 9:
			return fmt.Sprintf("SUBSTR(%s, 1, 3) = %s", v, quote(prefixOf(lex, 3)))
		case 10:
			return fmt.Sprintf("%s %s %s", v, pick(g, []string{"<", ">="}), term(c))
		}
		return fmt.Sprintf("%s = %s", v, term(c))
	case kindLang:
		switch g.r.IntN(5) {
		case 0:
			return fmt.Sprintf("LANG(%s) = %s", v, quote(c.(rdf.Literal).Lang))
		case 1:
			return fmt.Sprintf("LANGMATCHES(LANG(%s), \"EN\")", v)
		case 2:
			return fmt.Sprintf("CONTAINS(%s, %s)", v, quote(g.piece(lex, 4)))
		case 3:
			return fmt.Sprintf("REGEX(%s, %s, \"i\")", v, quote(regexp.QuoteMeta(strings.ToUpper(g.piece(lex, 5)))))
		}
		return fmt.Sprintf("STRSTARTS(%s, %s)", v, quote(prefixOf(lex, 6)))
	case kindBoolean:
		return pick(g, []string{v, "!" + v, v + " = " + lex, v + " != " + lex})
	case kindDate, kindDateTime:
		switch g.r.IntN(4) {
		case 0:
			return fmt.Sprintf("YEAR(%s) = %s", v, lex[:4])
		case 1:
			return fmt.Sprintf("MONTH(%s) <= %d", v, 1+g.r.IntN(12))
		}
		return fmt.Sprintf("%s %s %s", v, pick(g, []string{"<", "<=", ">", ">="}), term(c))
	case kindBinary:
		if g.chance(0.5) {
			return fmt.Sprintf("STRSTARTS(STR(%s), %s)", v, quote(lex[:1]))
		}
		return fmt.Sprintf("%s = %s", v, term(c))
	}
	// IRIs
	switch g.r.IntN(4) {
	case 0:
		return fmt.Sprintf("%s != %s", v, term(c))
	case 1:
		return fmt.Sprintf("%s IN (%s, %s)", v, term(c), term(pick(g, p.distinct)))
	case 2:
		return fmt.Sprintf("STRSTARTS(STR(%s), %s)", v, quote(lex[:len(lex)-1]))
	}
	return fmt.Sprintf("%s = %s", v, term(c))
}

// number writes a constant near lex·factor of the property's kind.
func number(k kind, lex string, factor int) string {
	f, _ := strconv.ParseFloat(lex, 64)
	switch k {
	case kindInteger:
		return strconv.FormatInt(int64(f)*int64(factor), 10)
	case kindDecimal:
		return strconv.FormatFloat(f*float64(factor), 'f', 2, 64)
	}
	return strconv.FormatFloat(f*float64(factor), 'E', 3, 64)
}

// combine joins one or two conditions, sometimes negated or as alternatives.
func (g *generator) combine(conds ...string) string {
	if len(conds) == 1 {
		if g.chance(0.15) {
			return "!(" + conds[0] + ")"
		}
		return conds[0]
	}
	op := pick(g, []string{" && ", " || "})
	return "(" + strings.Join(conds, ")"+op+"(") + ")"
}

// binding returns an expression over v (values of p) for BIND or a SELECT
// expression, and whether its value is approximate. Numbers never go through
// STR or another string function: the reference engine keeps numeric literals
// by value and writes its own lexical forms (STR of "1.98E0"^^xsd:double is
// "1.98" there), so the string of a number would compare its forms, not veneer.
func (g *generator) binding(v string, p *property) (string, bool) {
	switch p.kind {
	case kindInteger, kindDecimal, kindDouble:
		switch g.r.IntN(8) {
		case 0:
			return fmt.Sprintf("%s / 4", v), true
		case 1:
			return fmt.Sprintf("ABS(%s)", v), false
		case 2:
			if p.kind == kindDouble {
				return fmt.Sprintf("ROUND(%s * 10)", v), false
			}
			return fmt.Sprintf("ROUND(%s)", v), false
		case 3:
			return fmt.Sprintf("CEIL(%s)", v), false
		case 4:
			return fmt.Sprintf("FLOOR(-%s)", v), false
		case 5:
			return fmt.Sprintf("%s - 1", v), false
		case 6:
			return fmt.Sprintf("IF(%s > %s, \"high\", \"low\")", v, term(pick(g, p.distinct))), false
		}
		return fmt.Sprintf("%s * 3", v), false
	case kindString, kindLang:
		switch g.r.IntN(10) {
		case 0:
			return fmt.Sprintf("UCASE(%s)", v), false
		case 1:
			return fmt.Sprintf("LCASE(%s)", v), false
		case 2:
			return fmt.Sprintf("STRLEN(%s)", v), false
		case 3:
			return fmt.Sprintf("SUBSTR(%s, 2, 4)", v), false
		case 4:
			return fmt.Sprintf("CONCAT(%s, \" / \", %s)", v, v), false
		case 5:
			return fmt.Sprintf("STRBEFORE(%s, %s)", v, quote(g.piece(lexicalOf(pick(g, p.distinct)), 1))), false
		case 6:
			return fmt.Sprintf("STRAFTER(%s, %s)", v, quote(g.piece(lexicalOf(pick(g, p.distinct)), 1))), false
		case 7:
			return fmt.Sprintf("REPLACE(%s, \"e\", \"E\")", v), false
		case 8:
			return fmt.Sprintf("ENCODE_FOR_URI(%s)", v), false
		}
		return fmt.Sprintf("STR(%s)", v), false
	case kindDate, kindDateTime:
		if p.kind == kindDateTime && g.chance(0.3) {
			return fmt.Sprintf("HOURS(%s)", v), false
		}
		return pick(g, []string{"YEAR(%s)", "MONTH(%s)", "DAY(%s)", "STR(%s)", "DATATYPE(%s)"}), false
	case kindBoolean:
		return fmt.Sprintf("IF(%s, 1, 0)", v), false
	case kindBinary:
		return fmt.Sprintf("STRLEN(STR(%s))", v), false
	}
	return pick(g, []string{"STR(%s)", "isIRI(%s)", "STRLEN(STR(%s))"}), false
}

// expand fills the %s of a binding template; templates without one are whole.
func expand(tmpl, v string) string {
	if strings.Contains(tmpl, "%s") {
		return strings.ReplaceAll(tmpl, "%s", v)
	}
	return tmpl
}

// ---- query families ----

// starPart is a star of triple patterns on one subject variable.
type starPart struct {
	c     *class
	s     string
	where []string
	// typed says the star has "?s a C".
	typed bool
	// vars are the object variables, with their properties.
	vars  []string
	props []*property
	// oneToOne says each solution is one subject: no subject that matches has
	// two values for a property used.
	oneToOne bool
}

// starOf makes a star of up to n properties on a member of c, anchored to at
// most maxRows members, and sometimes typed ("?s a C").
func (g *generator) starOf(c *class, n int, ok func(*property) bool) *starPart {
	st := &starPart{c: c, s: g.fresh(localName(c.iri)), oneToOne: true, typed: g.chance(0.5)}
	if st.typed {
		st.where = append(st.where, st.s+" a "+term(c.iri))
	}
	anchor := g.anchor(c, st.s, maxRows)
	for _, p := range g.props(c, n, ok) {
		v := g.varFor(p)
		st.where = append(st.where, fmt.Sprintf("%s %s %s", st.s, term(p.iri), v))
		st.vars, st.props = append(st.vars, v), append(st.props, p)
		st.oneToOne = st.oneToOne && p.functional && g.sh.functional[p.iri]
	}
	st.where = append(st.where, anchor...)
	return st
}

// orderKey returns a variable whose values are one per solution of a star that
// is oneToOne: the subject, or the variable of a unique property, if the star
// matches members of the class only.
func (st *starPart) orderKey(g *generator) string {
	keys := []string{st.s}
	for i, p := range st.props {
		if p.unique && p.kind != kindLang && (st.typed || p.exclusive) {
			keys = append(keys, st.vars[i])
		}
	}
	return pick(g, keys)
}

func (g *generator) star() (Query, bool) {
	if g.chance(0.15) {
		// Everything about one resource.
		c := pick(g, g.sh.classes)
		s := pick(g, c.subjects)
		q := &selectQuery{where: []string{term(s) + " ?p ?o"}}
		if g.chance(0.5) {
			q.where = append(q.where, "FILTER(?p != rdf:type)")
		}
		return q.query("star/resource"), true
	}
	c := pick(g, g.sh.classes)
	st := g.starOf(c, 1+g.r.IntN(4), nil)
	q := &selectQuery{where: st.where}
	if g.chance(0.5) {
		q.project = append([]string{st.s}, st.vars...)
		if len(q.project) > 1 && g.chance(0.5) {
			q.project = q.project[1:]
		}
	}
	if st.oneToOne && g.chance(0.4) {
		key := st.orderKey(g)
		if slices.Contains(q.project, key) || len(q.project) == 0 {
			q.orderBy = []string{pick(g, []string{key, "DESC(" + key + ")"})}
			q.total = true
			if g.chance(0.5) {
				q.limit = 1 + g.r.IntN(10)
			}
		}
	}
	return q.query("star"), true
}

// chainOf follows up to hops functional references from a member of c.
func (g *generator) chainOf(c *class, hops int) (nodes []*class, refs []*property) {
	nodes = []*class{c}
	for range hops {
		var next []*property
		for _, p := range nodes[len(nodes)-1].refs() {
			if p.functional && g.sh.functional[p.iri] && !slices.Contains(nodes, p.target) {
				next = append(next, p)
			}
		}
		if len(next) == 0 {
			break
		}
		p := pick(g, next)
		refs, nodes = append(refs, p), append(nodes, p.target)
	}
	return nodes, refs
}

func (g *generator) chain() (Query, bool) {
	c := g.classWith(func(c *class) bool { return len(c.refs()) > 0 })
	if c == nil {
		return Query{}, false
	}
	nodes, refs := g.chainOf(c, 1+g.r.IntN(3))
	vars := make([]string, len(nodes))
	for i, n := range nodes {
		vars[i] = g.fresh(localName(n.iri))
	}
	q := &selectQuery{}
	for i, p := range refs {
		q.where = append(q.where, fmt.Sprintf("%s %s %s", vars[i], term(p.iri), vars[i+1]))
	}
	var project []string
	for i, n := range nodes {
		for _, p := range g.props(n, g.r.IntN(3), func(p *property) bool {
			return p.functional && g.sh.functional[p.iri] && p.kind != kindIRI
		}) {
			v := g.varFor(p)
			q.where = append(q.where, fmt.Sprintf("%s %s %s", vars[i], term(p.iri), v))
			project = append(project, v)
		}
	}
	// Anchor the chain at one node by a constant: count the chain's starts that
	// reach it, and take one that keeps the answer small.
	i := g.r.IntN(len(nodes))
	if i == 0 {
		a := g.anchor(c, vars[0], maxRows)
		q.where = append(q.where, a...)
	} else {
		reach := map[rdf.Term]int{}
		for _, s := range c.subjects {
			var at rdf.Term = s
			for _, p := range refs[:i] {
				vs := p.values[at.(rdf.IRI)]
				if len(vs) == 0 {
					at = nil
					break
				}
				at = vs[0]
			}
			if at != nil {
				reach[at]++
			}
		}
		var small []rdf.Term
		for t, n := range reach {
			if n <= maxRows {
				small = append(small, t)
			}
		}
		slices.SortFunc(small, func(a, b rdf.Term) int { return strings.Compare(a.String(), b.String()) })
		if len(small) == 0 {
			q.limit = 20
		} else {
			q.where = append(q.where, fmt.Sprintf("FILTER(%s = %s)", vars[i], term(pick(g, small))))
		}
	}
	if len(project) > 0 && g.chance(0.6) {
		q.project = append([]string{vars[0]}, project...)
	}
	if g.chance(0.4) || q.limit > 0 {
		q.orderBy, q.total = []string{vars[0]}, true
	}
	return q.query("chain"), true
}

func (g *generator) optional() (Query, bool) {
	c := g.classWith(func(c *class) bool { return len(c.props) > 2 })
	st := g.starOf(c, 1+g.r.IntN(2), func(p *property) bool { return p.total && p.functional })
	q := &selectQuery{where: st.where}
	oneToOne := st.oneToOne
	var opt string
	switch g.r.IntN(5) {
	case 0, 1:
		// An attribute some members lack.
		ps := g.props(c, 1, func(p *property) bool { return !p.total })
		if len(ps) == 0 {
			ps = g.props(c, 1, nil)
		}
		p := ps[0]
		opt = g.varFor(p)
		inner := fmt.Sprintf("%s %s %s", st.s, term(p.iri), opt)
		if g.chance(0.35) {
			inner += " FILTER(" + g.condition(opt, p) + ")"
		}
		q.where = append(q.where, "OPTIONAL { "+inner+" }")
		oneToOne = oneToOne && p.functional && g.sh.functional[p.iri]
		switch g.r.IntN(4) {
		case 0:
			q.where = append(q.where, fmt.Sprintf("FILTER(!BOUND(%s))", opt))
		case 1:
			q.where = append(q.where, fmt.Sprintf("FILTER(BOUND(%s))", opt))
		case 2:
			q.where = append(q.where, fmt.Sprintf("BIND(COALESCE(%s, \"none\") AS %s)", opt, g.fresh("c")))
		}
	case 2:
		// A referenced member and one of its attributes.
		refs := c.refs()
		if len(refs) == 0 {
			return Query{}, false
		}
		p := pick(g, refs)
		x := g.fresh(localName(p.target.iri))
		attrs := g.props(p.target, 1, func(p *property) bool { return p.kind != kindIRI && p.functional })
		if len(attrs) == 0 {
			return Query{}, false
		}
		opt = g.varFor(attrs[0])
		q.where = append(q.where, fmt.Sprintf("OPTIONAL {\n  %s %s %s .\n  %s %s %s\n}", st.s, term(p.iri), x,
			x, term(attrs[0].iri), opt))
		oneToOne = oneToOne && p.functional && g.sh.functional[p.iri] && g.sh.functional[attrs[0].iri]
	case 3:
		// Members of other classes that point at this one.
		in := g.sh.incoming(c)
		if len(in) == 0 {
			return Query{}, false
		}
		p := pick(g, in)
		opt = g.fresh(localName(p.of.iri))
		q.where = append(q.where, fmt.Sprintf("OPTIONAL { %s %s %s }", opt, term(p.iri), st.s))
		oneToOne = false
	default:
		// Two optional parts, the second depending on the first.
		ps := g.props(c, 2, func(p *property) bool { return p.functional })
		if len(ps) < 2 {
			return Query{}, false
		}
		a, b := g.varFor(ps[0]), g.varFor(ps[1])
		opt = b
		q.where = append(q.where,
			fmt.Sprintf("OPTIONAL { %s %s %s FILTER(%s) }", st.s, term(ps[0].iri), a, g.condition(a, ps[0])),
			fmt.Sprintf("OPTIONAL { %s %s %s }", st.s, term(ps[1].iri), b))
	}
	if oneToOne && g.chance(0.5) {
		q.orderBy, q.total = []string{opt, st.s}, true
		if g.chance(0.5) {
			q.orderBy[0] = "DESC(" + opt + ")"
		}
	}
	return q.query("optional"), true
}

func (g *generator) union() (Query, bool) {
	branch := func() (*starPart, []string) {
		c := pick(g, g.sh.classes)
		st := g.starOf(c, 1+g.r.IntN(2), nil)
		return st, st.where
	}
	a, wa := branch()
	b, wb := branch()
	// Share the subject variable, and sometimes a value variable, between branches.
	rename := func(where []string, from, to string) []string {
		out := make([]string, len(where))
		re := regexp.MustCompile(regexp.QuoteMeta(from) + `\b`)
		for i, w := range where {
			out[i] = re.ReplaceAllString(w, to)
		}
		return out
	}
	wb = rename(wb, b.s, a.s)
	if len(a.vars) > 0 && len(b.vars) > 0 && g.chance(0.6) {
		wb = rename(wb, b.vars[0], a.vars[0])
	}
	q := &selectQuery{where: []string{
		"{\n" + indent(wa) + "}\nUNION\n{\n" + indent(wb) + "}",
	}}
	if g.chance(0.3) {
		q.where = append(q.where, fmt.Sprintf("FILTER(isIRI(%s))", a.s))
	}
	return q.query("union"), true
}

func indent(elems []string) string {
	var b strings.Builder
	writeGroup(&b, elems, "  ")
	return b.String()
}

func (g *generator) minus() (Query, bool) {
	c := pick(g, g.sh.classes)
	st := g.starOf(c, 1+g.r.IntN(2), nil)
	q := &selectQuery{where: st.where}
	var inner string
	switch g.r.IntN(4) {
	case 0:
		p := pick(g, c.props)
		inner = fmt.Sprintf("%s %s %s", st.s, term(p.iri), term(pick(g, p.distinct)))
	case 1:
		ps := g.props(c, 1, func(p *property) bool { return !p.total })
		if len(ps) == 0 {
			ps = g.props(c, 1, nil)
		}
		inner = fmt.Sprintf("%s %s %s", st.s, term(ps[0].iri), g.fresh("z"))
	case 2:
		refs := c.refs()
		if len(refs) == 0 {
			return Query{}, false
		}
		p := pick(g, refs)
		attrs := p.target.attrs()
		if len(attrs) == 0 {
			return Query{}, false
		}
		a := pick(g, attrs)
		x := g.fresh("x")
		inner = fmt.Sprintf("%s %s %s .\n  %s %s %s", st.s, term(p.iri), x, x, term(a.iri), term(pick(g, a.distinct)))
	default:
		// No variable in common: MINUS removes nothing (SPARQL 1.1 §8.3.2).
		p := pick(g, c.props)
		inner = fmt.Sprintf("%s %s %s", g.fresh("other"), term(p.iri), term(pick(g, p.distinct)))
	}
	q.where = append(q.where, "MINUS {\n  "+inner+"\n}")
	return q.query("minus"), true
}

func (g *generator) filter() (Query, bool) {
	c := pick(g, g.sh.classes)
	st := g.starOf(c, 1+g.r.IntN(3), nil)
	if len(st.vars) == 0 {
		return Query{}, false
	}
	q := &selectQuery{where: st.where}
	var conds []string
	for range 1 + g.r.IntN(2) {
		i := g.r.IntN(len(st.vars))
		conds = append(conds, g.condition(st.vars[i], st.props[i]))
	}
	q.where = append(q.where, "FILTER("+g.combine(conds...)+")")
	if g.chance(0.15) {
		i := g.r.IntN(len(st.vars))
		vals := []string{term(pick(g, st.props[i].distinct)), term(pick(g, st.props[i].distinct))}
		q.where = append(q.where, fmt.Sprintf("VALUES %s { %s }", st.vars[i], strings.Join(vals, " ")))
	}
	if st.oneToOne && g.chance(0.3) {
		q.orderBy, q.total = []string{st.orderKey(g)}, true
	}
	return q.query("filter"), true
}

func (g *generator) bind() (Query, bool) {
	c := pick(g, g.sh.classes)
	st := g.starOf(c, 1+g.r.IntN(3), func(p *property) bool { return p.kind != kindDouble || g.chance(0.3) })
	if len(st.vars) == 0 {
		return Query{}, false
	}
	q := &selectQuery{where: st.where}
	var out Query
	var approx []string
	for range 1 + g.r.IntN(2) {
		i := g.r.IntN(len(st.vars))
		expr, inexact := g.binding(st.vars[i], st.props[i])
		b := g.fresh("b")
		if inexact {
			approx = append(approx, b[1:])
		}
		if g.chance(0.3) {
			q.project = append(q.project, fmt.Sprintf("(%s AS %s)", expand(expr, st.vars[i]), b))
			continue
		}
		q.where = append(q.where, fmt.Sprintf("BIND(%s AS %s)", expand(expr, st.vars[i]), b))
		q.project = append(q.project, b)
	}
	q.project = append([]string{st.s}, q.project...)
	out = q.query("bind")
	out.Approx = approx
	return out, true
}

// groupable reports whether p's values make a handful of groups.
func groupable(p *property) bool {
	return p.functional && p.kind != kindLang && len(p.distinct) <= 15
}

func (g *generator) aggregate() (Query, bool) {
	c := g.classWith(func(c *class) bool { return len(c.props) > 1 })
	q := &selectQuery{}
	s := g.fresh(localName(c.iri))
	q.where = append(q.where, s+" a "+term(c.iri))
	var key string
	switch g.r.IntN(4) {
	case 0: // no grouping: one solution
	case 1:
		// A key on a referenced class: the site of a turbine, the model of a work order's turbine.
		refs := c.refs()
		if len(refs) == 0 {
			return Query{}, false
		}
		p := pick(g, refs)
		kp := g.props(p.target, 1, groupable)
		if len(kp) == 0 {
			return Query{}, false
		}
		x := g.fresh("x")
		key = g.varFor(kp[0])
		q.where = append(q.where, fmt.Sprintf("%s %s %s .\n%s %s %s", s, term(p.iri), x, x, term(kp[0].iri), key))
	default:
		kp := g.props(c, 1, groupable)
		if len(kp) == 0 {
			return Query{}, false
		}
		key = g.varFor(kp[0])
		q.where = append(q.where, fmt.Sprintf("%s %s %s", s, term(kp[0].iri), key))
	}
	var out Query
	aggs := []string{}
	for _, p := range g.props(c, 1+g.r.IntN(2), func(p *property) bool { return p.functional && p.kind != kindLang }) {
		v := g.varFor(p)
		if p.total {
			q.where = append(q.where, fmt.Sprintf("%s %s %s", s, term(p.iri), v))
		} else {
			q.where = append(q.where, fmt.Sprintf("OPTIONAL { %s %s %s }", s, term(p.iri), v))
		}
		a := g.fresh(localName(p.iri) + "Agg")
		// No SAMPLE: it may pick any value of a group, so its answer cannot be compared.
		fns := []string{"COUNT(%s)", "COUNT(DISTINCT %s)"}
		switch {
		case p.kind.numeric():
			fns = append(fns, "SUM(%s)", "AVG(%s)", "MIN(%s)", "MAX(%s)")
		case p.kind == kindString || p.kind == kindDate || p.kind == kindDateTime:
			fns = append(fns, "MIN(%s)", "MAX(%s)")
		}
		if p.kind == kindString && len(p.distinct) <= 30 {
			fns = append(fns, "GROUP_CONCAT(DISTINCT %s; SEPARATOR=\"|\")")
		}
		fn := pick(g, fns)
		switch {
		case strings.HasPrefix(fn, "AVG"), strings.HasPrefix(fn, "SUM") && p.kind == kindDouble:
			out.Approx = append(out.Approx, a[1:])
		case strings.HasPrefix(fn, "GROUP_CONCAT"):
			if out.Concat == nil {
				out.Concat = map[string]string{}
			}
			out.Concat[a[1:]] = "|"
		}
		aggs = append(aggs, fmt.Sprintf("(%s AS %s)", expand(fn, v), a))
	}
	if g.chance(0.5) {
		aggs = append(aggs, fmt.Sprintf("(COUNT(*) AS %s)", g.fresh("n")))
	}
	if key != "" {
		q.project = append([]string{key}, aggs...)
		q.groupBy = []string{key}
		if g.chance(0.25) {
			q.having = []string{fmt.Sprintf("(COUNT(*) > %d)", 1+g.r.IntN(50))}
		}
		if g.chance(0.6) {
			q.orderBy, q.total = []string{pick(g, []string{key, "DESC(" + key + ")"})}, true
		}
	} else {
		q.project = aggs
		if g.chance(0.5) {
			// A filter, so that not every aggregate is over the whole class.
			ps := g.props(c, 1, func(p *property) bool { return p.functional && p.total })
			if len(ps) > 0 {
				v := g.varFor(ps[0])
				q.where = append(q.where, fmt.Sprintf("%s %s %s", s, term(ps[0].iri), v),
					"FILTER("+g.condition(v, ps[0])+")")
			}
		}
	}
	qq := q.query("aggregate")
	qq.Approx, qq.Concat = out.Approx, out.Concat
	return qq, true
}

func (g *generator) orderLimit() (Query, bool) {
	c := pick(g, g.sh.classes)
	s := g.fresh(localName(c.iri))
	q := &selectQuery{where: []string{s + " a " + term(c.iri)}}
	var vars []string
	unique := map[string]bool{}
	for _, p := range g.props(c, 1+g.r.IntN(3), func(p *property) bool { return p.functional && p.total }) {
		v := g.varFor(p)
		q.where = append(q.where, fmt.Sprintf("%s %s %s", s, term(p.iri), v))
		vars = append(vars, v)
		unique[v] = p.unique && p.kind != kindLang
	}
	if len(vars) == 0 {
		return Query{}, false
	}
	// Each solution is one member of c: a key that tells members apart (the
	// subject, or a unique property) makes the order total.
	for _, v := range g.subset(vars, 1+g.r.IntN(2)) {
		q.total = q.total || unique[v]
		if g.chance(0.3) {
			v = "DESC(" + v + ")"
		}
		q.orderBy = append(q.orderBy, v)
	}
	if g.chance(0.5) {
		q.orderBy, q.total = append(q.orderBy, s), true
	}
	q.limit = 1 + g.r.IntN(15)
	if g.chance(0.3) {
		q.offset = g.r.IntN(10)
	}
	return q.query("order-limit"), true
}

func (g *generator) distinct() (Query, bool) {
	c := pick(g, g.sh.classes)
	ps := g.props(c, 1+g.r.IntN(2), func(p *property) bool { return len(p.distinct) <= 200 && p.functional })
	if len(ps) == 0 {
		return Query{}, false
	}
	s := g.fresh(localName(c.iri))
	q := &selectQuery{distinct: g.chance(0.8)}
	for _, p := range ps {
		v := g.varFor(p)
		q.where = append(q.where, fmt.Sprintf("%s %s %s", s, term(p.iri), v))
		q.project = append(q.project, v)
	}
	if !q.distinct {
		a := g.anchor(c, s, maxRows)
		q.where = append(q.where, a...)
	}
	if g.chance(0.3) {
		q.where = append(q.where, s+" a "+term(c.iri))
	}
	return q.query("distinct"), true
}

func (g *generator) path() (Query, bool) {
	c := g.classWith(func(c *class) bool { return len(c.refs()) > 0 })
	if c == nil {
		return Query{}, false
	}
	nodes, refs := g.chainOf(c, 3)
	if len(refs) == 0 {
		return Query{}, false
	}
	// A start that has the first reference.
	var starts []rdf.IRI
	for _, s := range c.subjects {
		if len(refs[0].values[s]) > 0 {
			starts = append(starts, s)
		}
	}
	s := pick(g, starts)
	seq := make([]string, len(refs))
	for i, p := range refs {
		seq[i] = term(p.iri)
	}
	q := &selectQuery{}
	x := g.fresh("x")
	switch g.r.IntN(7) {
	case 0:
		// A sequence, ending in an attribute.
		last := nodes[len(nodes)-1]
		attrs := last.attrs()
		path := strings.Join(seq, "/")
		if len(attrs) > 0 {
			path += "/" + term(pick(g, attrs).iri)
		}
		q.where = []string{fmt.Sprintf("%s %s %s", term(s), path, x)}
	case 1:
		// An inverse sequence from a referenced member back to the members of c.
		p := refs[0]
		o := p.values[s][0]
		q.where = []string{fmt.Sprintf("%s ^%s %s", term(o), term(p.iri), x)}
		if attrs := c.attrs(); len(attrs) > 0 && g.chance(0.6) {
			q.where[0] = fmt.Sprintf("%s ^%s/%s %s", term(o), term(p.iri), term(pick(g, attrs).iri), x)
		}
	case 2:
		// Alternatives of references that reach the same class.
		target := refs[0].target
		in := g.sh.incoming(target)
		alts := []string{}
		for _, p := range in {
			if !slices.Contains(alts, term(p.iri)) {
				alts = append(alts, term(p.iri))
			}
		}
		o := refs[0].values[s][0]
		q.where = []string{fmt.Sprintf("%s (%s) %s", x, strings.Join(alts, "|"), term(o))}
	case 3:
		// One or more steps along any of the references.
		q.where = []string{fmt.Sprintf("%s (%s)+ %s", term(s), strings.Join(seq, "|"), x)}
	case 4:
		// Zero or more: the start itself is among the answers.
		q.where = []string{fmt.Sprintf("%s (%s)* %s", term(s), strings.Join(seq, "/"), x)}
	case 5:
		q.where = []string{fmt.Sprintf("%s %s? %s", term(s), seq[0], x)}
	default:
		// A negated property set.
		q.where = []string{fmt.Sprintf("%s !(rdf:type|%s) %s", term(s), seq[0], x)}
	}
	return q.query("path"), true
}

func (g *generator) ask() (Query, bool) {
	c := pick(g, g.sh.classes)
	s := pick(g, c.subjects)
	ps := g.props(c, 1+g.r.IntN(2), nil)
	x := g.fresh("x")
	var pats []string
	for _, p := range ps {
		var o rdf.Term
		if vs := p.values[s]; len(vs) > 0 && g.chance(0.6) {
			o = vs[0]
		} else {
			o = pick(g, p.distinct) // may or may not be the member's value
		}
		pats = append(pats, fmt.Sprintf("%s %s %s", x, term(p.iri), term(o)))
	}
	if g.chance(0.3) {
		pats = append(pats, fmt.Sprintf("FILTER(%s != %s)", x, term(s)))
	}
	text := prologue + "ASK {\n" + indent(pats) + "}\n"
	return Query{Family: "ask", Text: text}, true
}

func (g *generator) construct() (Query, bool) {
	c := pick(g, g.sh.classes)
	st := g.starOf(c, 1+g.r.IntN(2), nil)
	if len(st.vars) == 0 {
		return Query{}, false
	}
	var tmpl []string
	switch g.r.IntN(3) {
	case 0:
		for i, v := range st.vars {
			tmpl = append(tmpl, fmt.Sprintf("%s %s %s .", st.s, term(st.props[i].iri), v))
		}
	case 1:
		tmpl = append(tmpl, fmt.Sprintf("%s <urn:x-veneer-test:value> %s .", st.vars[0], st.s))
	default:
		// A blank node per solution.
		tmpl = append(tmpl, fmt.Sprintf("%s <urn:x-veneer-test:has> [ <urn:x-veneer-test:value> %s ] .", st.s, st.vars[0]))
	}
	text := prologue + "CONSTRUCT {\n" + indent(tmpl) + "} WHERE {\n" + indent(st.where) + "}\n"
	return Query{Family: "construct", Text: text, Graph: true}, true
}

func (g *generator) subquery() (Query, bool) {
	// Members of a referenced class with their number of referrers.
	var cands []*property
	for _, c := range g.sh.classes {
		for _, p := range c.refs() {
			if p.functional && g.uniqueOf(p.target) != nil {
				cands = append(cands, p)
			}
		}
	}
	if len(cands) == 0 {
		return Query{}, false
	}
	p := pick(g, cands)
	u := g.uniqueOf(p.target)
	child, parent, n, key := g.fresh("child"), g.fresh("parent"), g.fresh("n"), g.varFor(u)
	q := &selectQuery{
		project: []string{key, n},
		where: []string{
			fmt.Sprintf("{\n  SELECT %s (COUNT(%s) AS %s) WHERE { %s %s %s }\n  GROUP BY %s\n}", parent, child, n, child, term(p.iri), parent, parent),
			fmt.Sprintf("%s %s %s", parent, term(u.iri), key),
		},
		orderBy: []string{"DESC(" + n + ")", key},
		total:   true,
		limit:   1 + g.r.IntN(10),
	}
	return q.query("subquery"), true
}

func (g *generator) exists() (Query, bool) {
	c := pick(g, g.sh.classes)
	st := g.starOf(c, 1+g.r.IntN(2), nil)
	q := &selectQuery{where: st.where}
	not := pick(g, []string{"", "NOT "})
	var inner string
	if in := g.sh.incoming(c); len(in) > 0 && g.chance(0.6) {
		p := pick(g, in)
		inner = fmt.Sprintf("%s %s %s", g.fresh("y"), term(p.iri), st.s)
	} else {
		p := pick(g, c.props)
		inner = fmt.Sprintf("%s %s %s", st.s, term(p.iri), term(pick(g, p.distinct)))
	}
	q.where = append(q.where, fmt.Sprintf("FILTER(%sEXISTS { %s })", not, inner))
	return q.query("exists"), true
}
