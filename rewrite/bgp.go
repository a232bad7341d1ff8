package rewrite

import (
	"math"
	"strings"
	"time"

	"veneer/catalog"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/rewrite/algebra"
	"veneer/rewrite/sql"
)

// candidate is a producer with the graph map it is read through (nil in the
// service's default graph), and the graph IRIs that map must produce (nil: any).
type candidate struct {
	p     *producer // one of the planner's
	graph *catalog.TermMap
	only  []rdf.IRI
}

// candidates lists what can produce triples in the graph context: the default
// graph (graph nil), or the named graphs matched by graph (a Var or a Const).
// A dataset (FROM, FROM NAMED) chooses the graphs: the default graph is the
// merge of the FROM graphs, and the named graphs are the FROM NAMED ones; a
// query naming only one kind has none of the other (SPARQL 1.1 Query §13.2).
func (q *query) candidates(graph algebra.Item) []candidate {
	ds := q.dataset
	given := len(ds.Default) > 0 || len(ds.Named) > 0
	if graph == nil && !given {
		return q.pl.inDefault
	}
	var out []candidate
	for i := range q.pl.producers {
		p := &q.pl.producers[i]
		switch {
		case graph == nil:
			out = append(out, named(p, ds.Default, true)...)
		case !given:
			out = append(out, named(p, nil, false)...)
		default:
			out = append(out, named(p, ds.Named, true)...)
		}
	}
	return out
}

// named lists the producer's named-graph candidates, restricted, when restrict
// is set, to the graphs only lists.
func named(p *producer, only []rdf.IRI, restrict bool) []candidate {
	if restrict && len(only) == 0 {
		return nil
	}
	var out []candidate
	for _, g := range p.namedGraphs() {
		g := g
		out = append(out, candidate{p: p, graph: &g, only: only})
	}
	return out
}

// bgp unfolds a basic graph pattern into the union of the producer combinations
// that can match it, dropping combinations that provably cannot (constants no map
// yields, shared variables whose maps never give equal terms).
func (q *query) bgp(patterns []algebra.Triple, graph algebra.Item) (*rel, error) {
	r := &rel{}
	for _, t := range patterns {
		for _, it := range []algebra.Item{t.S, t.P, t.O} {
			if v, ok := it.(algebra.Var); ok {
				r.addVar(v)
			}
		}
	}
	if v, ok := graph.(algebra.Var); ok && len(patterns) > 0 {
		r.addVar(v)
	}
	all := q.candidates(graph)
	// Each pattern's candidates, cut down first by what is cheap to compare: a
	// constant predicate, and a constant class of rdf:type.
	cands := make([][]candidate, len(patterns))
	for i, t := range patterns {
		for _, c := range all {
			if mayProduce(c.p.predicate, t.P) && (!isTypeOf(c.p, t) || mayProduce(c.p.object, t.O)) {
				cands[i] = append(cands[i], c)
			}
		}
	}
	var walk func(i int, b *branch) error
	walk = func(i int, b *branch) error {
		if i == len(patterns) {
			if len(r.branches) >= q.pl.limits.MaxUnions {
				return &TooComplex{What: "the triple patterns unfold into more than " + itoa(q.pl.limits.MaxUnions) + " union branches"}
			}
			r.branches = append(r.branches, b)
			return nil
		}
		for _, c := range cands[i] {
			if !mayJoin(b, patterns[i], c) {
				continue // addPattern would fail: spare the copy of the branch
			}
			nb := b.clone()
			if q.addPattern(nb, patterns[i], c, graph) {
				if err := walk(i+1, nb); err != nil {
					return err
				}
			}
		}
		return nil
	}
	if err := walk(0, &branch{vars: map[algebra.Var]binding{}}); err != nil {
		return nil, err
	}
	r.dedup = !q.unique(r)
	for _, b := range r.branches {
		q.eliminateSelfJoins(b)
	}
	return r, nil
}

// mayJoin reports whether candidate c can produce pattern t in branch b as
// far as the cheap tests of unify tell: a subject or object variable that b
// binds with one term map must meet a term map of the same term type, and two
// templates must share their shape or a leading text. false means addPattern
// would fail; true that it may succeed.
func mayJoin(b *branch, t algebra.Triple, c candidate) bool {
	for _, pos := range []struct {
		it algebra.Item
		m  catalog.TermMap
	}{{t.S, c.p.tm.Subject}, {t.O, c.p.object}} {
		v, ok := pos.it.(algebra.Var)
		bd, bound := b.vars[v]
		if !ok || !bound || len(bd.alts) != 1 {
			continue
		}
		m := bd.alts[0].m
		if m.TermType != pos.m.TermType {
			return false
		}
		if m.Kind == catalog.TemplateMap && pos.m.Kind == catalog.TemplateMap &&
			!catalog.SameShape(m.Template, pos.m.Template) && !prefixCompatible(m.Template, pos.m.Template) {
			return false
		}
	}
	return true
}

// base returns the occurrence of term map m over the rows of FROM alias.
func (q *query) base(m catalog.TermMap, alias string, t catalog.LogicalTable) occurrence {
	o := occurrence{m: m}
	for _, c := range m.Columns() {
		col, err := q.pl.cols.Lookup(t, c)
		if err != nil {
			// ProbeColumns checked every column the catalog names.
			panic("rewrite: unchecked column: " + err.Error())
		}
		o.exprs = append(o.exprs, sql.ColumnRef{Table: alias, Column: catalog.Ident{Name: col.Name, Quoted: true}})
		o.cols = append(o.cols, col)
	}
	return o
}

func (q *query) fromItem(t catalog.LogicalTable, alias string) sql.From {
	if t.Query != "" {
		return &sql.Derived{Query: t.Query, Alias: alias}
	}
	name, _ := catalog.ParseName(t.TableName) // checked when the columns were probed
	return &sql.Table{Name: name, Alias: alias, Key: t.Key()}
}

// addPattern extends the branch with candidate c for triple pattern t; false means
// c cannot match the pattern given what the branch already binds.
func (q *query) addPattern(b *branch, t algebra.Triple, c candidate, graph algebra.Item) bool {
	pr := c.p
	child := q.alias("t")
	b.from = append(b.from, q.fromItem(pr.tm.Table, child))
	objAlias, objTable := child, pr.tm.Table
	objOcc, viaFK := q.fkObject(pr, child)
	if pr.parent != nil && len(pr.joins) > 0 && !viaFK {
		objAlias, objTable = q.alias("t"), pr.parent.Table
		b.from = append(b.from, q.fromItem(pr.parent.Table, objAlias))
		for _, j := range pr.joins {
			l, lc := q.base(catalog.TermMap{Kind: catalog.Column, Column: j.Child}, child, pr.tm.Table).col(j.Child)
			r, rc := q.base(catalog.TermMap{Kind: catalog.Column, Column: j.Parent}, objAlias, pr.parent.Table).col(j.Parent)
			b.where = append(b.where, q.eq(l, lc, r, rc))
		}
	}
	positions := []struct {
		it  algebra.Item
		occ occurrence
	}{
		{t.S, q.base(pr.tm.Subject, child, pr.tm.Table)},
		{t.P, q.base(pr.predicate, child, pr.tm.Table)},
		{t.O, q.base(pr.object, objAlias, objTable)},
	}
	if viaFK {
		positions[2].occ = objOcc
	}
	if c.graph != nil {
		g := q.base(*c.graph, child, pr.tm.Table)
		if c.only != nil {
			// The graph must be one the dataset names.
			var options []sql.Expr
			for _, iri := range c.only {
				if conds, ok := q.constConds(g, iri); ok {
					options = append(options, sql.And(conds...))
				}
			}
			if len(options) == 0 {
				return false
			}
			if cond := or(options...); cond != nil {
				b.where = append(b.where, cond)
			}
		}
		if graph != nil {
			positions = append(positions, struct {
				it  algebra.Item
				occ occurrence
			}{graph, g})
		} else if a := g.active(); a != nil {
			b.where = append(b.where, a)
		}
	}
	for _, pos := range positions {
		if a := pos.occ.active(); a != nil {
			// A term map with a NULL column yields no term, so the row no triple.
			b.where = append(b.where, a)
		}
		switch it := pos.it.(type) {
		case algebra.Const:
			conds, ok := q.constConds(pos.occ, it.Term)
			if !ok {
				return false
			}
			b.where = append(b.where, conds...)
		case algebra.Var:
			bd, bound := b.vars[it]
			if !bound {
				b.vars[it] = binding{alts: []occurrence{pos.occ}}
				continue
			}
			conds, exact, ok := q.unify(bd.alts[0], pos.occ)
			if !ok {
				return false
			}
			b.where = append(b.where, conds...)
			if !exact {
				b.checks = append(b.checks, varCheck{it, pos.occ})
			}
		}
	}
	return true
}

// eq compares two columns for equality, exactly (by code point) for strings.
func (q *query) eq(l sql.Expr, lc source.Column, r sql.Expr, rc source.Column) sql.Expr {
	return sql.Binary{Op: "=", L: l, R: r, Exact: stringKind(lc.Kind) || stringKind(rc.Kind)}
}

// stringKind reports whether values of the kind compare as strings, where an exact
// (code point) comparison must be asked for.
func stringKind(k source.TypeKind) bool { return k == source.TypeString || k == source.TypeOther }

// literalType is the datatype and language of the literals an occurrence yields.
func literalType(o occurrence) (rdf.IRI, string) {
	switch {
	case o.m.Language != "":
		return rdf.RDFLangString, strings.ToLower(o.m.Language)
	case o.m.Datatype != "":
		return o.m.Datatype, ""
	case o.m.Kind == catalog.Column:
		if dt := catalog.NaturalDatatype(o.cols[0].Kind); dt != "" {
			return dt, ""
		}
	}
	return rdf.XSDString, ""
}

// constConds are the SQL conditions under which the occurrence yields term c; false
// means it never does.
func (q *query) constConds(o occurrence, c rdf.Term) ([]sql.Expr, bool) {
	m := o.m
	if m.Kind == catalog.Constant {
		if !rdf.SameTerm(m.Constant, c) {
			return nil, false
		}
		if a := o.active(); a != nil {
			return []sql.Expr{a}, true
		}
		return nil, true
	}
	if c.Kind() != m.TermType {
		return nil, false
	}
	var lexicals []string
	switch c := c.(type) {
	case rdf.IRI:
		// A value that is not an absolute IRI was joined to the map's base.
		lexicals = m.Unbase(string(c))
	case rdf.Literal:
		dt, lang := literalType(o)
		if c.Datatype != dt || !strings.EqualFold(c.Lang, lang) {
			return nil, false
		}
		lexicals = []string{c.Lexical}
	default:
		// Blank nodes of a query are variables; a blank node constant never occurs.
		return nil, false
	}
	var options [][]sql.Expr
	for _, lexical := range lexicals {
		var values map[string]string
		switch m.Kind {
		case catalog.Column:
			values = map[string]string{m.Column: lexical}
		case catalog.TemplateMap:
			var ok bool
			if values, ok = m.Template.Match(lexical, m.TermType == rdf.KindIRI); !ok {
				continue
			}
		}
		if conds, ok := q.valueConds(o, values); ok {
			options = append(options, conds)
		}
	}
	switch len(options) {
	case 0:
		return nil, false
	case 1:
		return options[0], true
	}
	var alts []sql.Expr
	for _, conds := range options {
		alts = append(alts, sql.And(conds...))
	}
	return []sql.Expr{or(alts...)}, true
}

// valueConds equate columns with the values whose lexical forms are given; a value
// that the column's type cannot hold means no match.
func (q *query) valueConds(o occurrence, lexicals map[string]string) ([]sql.Expr, bool) {
	var out []sql.Expr
	for _, name := range o.m.Columns() {
		e, col := o.col(name)
		v, ok := catalog.ParseLexical(lexicals[name], col.Kind)
		if !ok || !q.pl.holds(col, v) {
			return nil, false
		}
		out = append(out, sql.Binary{Op: "=", Exact: stringKind(col.Kind), L: e, R: sql.Param{Value: q.pl.param(v, col)}})
	}
	return out, true
}

// holds reports whether the column can hold v, the value ParseLexical read for
// its kind: PostgreSQL's text cannot hold NUL, its INTEGER and SMALLINT hold 32
// and 16 bits, and no source keeps a date before year 1 (the year 0 of XSD 1.1
// is 1 BCE, which the dialects spell differently, if at all). A value a column
// cannot hold equals none of its values; bound as a parameter the database
// would refuse it.
func (pl *Planner) holds(col source.Column, v any) bool {
	switch v := v.(type) {
	case string:
		return pl.dialect != source.Postgres || strings.IndexByte(v, 0) < 0
	case int64:
		if pl.dialect != source.Postgres {
			return true
		}
		switch strings.ToUpper(col.DatabaseType) {
		case "INTEGER", "INT", "INT4", "SERIAL":
			return v >= math.MinInt32 && v <= math.MaxInt32
		case "SMALLINT", "INT2", "SMALLSERIAL":
			return v >= math.MinInt16 && v <= math.MaxInt16
		}
	case time.Time:
		return v.Year() >= 1
	}
	return true
}

// param adapts a normalised value to what the column's driver compares it with.
// SQLite keeps dates and timestamps as text, so they are bound in its text form.
func (pl *Planner) param(v any, col source.Column) any {
	if pl.dialect == source.SQLite {
		switch col.Kind {
		case source.TypeDate:
			return catalog.Lexical(v, col.Kind)
		case source.TypeTimestamp, source.TypeTimestampTZ:
			return strings.Replace(catalog.Lexical(v, col.Kind), "T", " ", 1)
		}
	}
	return v
}

// unify returns the SQL conditions under which occurrences a and b yield the same
// term. exact is false when SQL cannot decide it fully and the row must be checked
// in-process; ok is false when they never yield the same term.
func (q *query) unify(a, b occurrence) (conds []sql.Expr, exact, ok bool) {
	if a.m.TermType != b.m.TermType {
		return nil, true, false
	}
	if a.m.Kind == catalog.Constant {
		a, b = b, a
	}
	if b.m.Kind == catalog.Constant {
		c, ok := q.constConds(a, b.m.Constant)
		if ok && b.marker != nil {
			c = append(c, b.active())
		}
		return c, true, ok
	}
	if a.m.TermType == rdf.KindLiteral {
		da, la := literalType(a)
		db, lb := literalType(b)
		if da != db || la != lb {
			return nil, true, false
		}
	}
	switch {
	case a.m.Kind == catalog.Column && b.m.Kind == catalog.Column:
		return q.equateColumns(a, a.m.Column, b, b.m.Column)
	case a.m.Kind == catalog.TemplateMap && b.m.Kind == catalog.TemplateMap:
		if !catalog.SameShape(a.m.Template, b.m.Template) {
			if !prefixCompatible(a.m.Template, b.m.Template) {
				return nil, true, false
			}
			return nil, false, true
		}
		exact = true
		for i, p := range a.m.Template.Parts {
			if p.Column == "" {
				continue
			}
			c, ex, _ := q.equateColumns(a, p.Column, b, b.m.Template.Parts[i].Column)
			conds = append(conds, c...)
			exact = exact && ex
		}
		return conds, exact, true
	}
	return nil, false, true
}

// equateColumns compares two columns whose lexical forms must be equal. Columns of
// one type family compare directly; integers and strings compare as text; other
// mixes are left to the in-process check.
func (q *query) equateColumns(a occurrence, ca string, b occurrence, cb string) ([]sql.Expr, bool, bool) {
	l, lc := a.col(ca)
	r, rc := b.col(cb)
	if lc.Kind != rc.Kind {
		if !textual(lc.Kind) || !textual(rc.Kind) {
			return nil, false, true
		}
		l, r = q.asText(l, lc.Kind), q.asText(r, rc.Kind)
	}
	return []sql.Expr{q.eq(l, lc, r, rc)}, true, true
}

func textual(k source.TypeKind) bool {
	return k == source.TypeInteger || k == source.TypeString || k == source.TypeOther
}

func (q *query) asText(e sql.Expr, k source.TypeKind) sql.Expr {
	if k != source.TypeInteger {
		return e
	}
	if q.pl.dialect == source.MySQL {
		return sql.Cast{X: e, Type: "CHAR"}
	}
	return sql.Cast{X: e, Type: "TEXT"}
}

// prefixCompatible reports whether two templates of different shapes might still
// produce the same string: their leading texts must agree as far as both go.
func prefixCompatible(a, b catalog.Template) bool {
	lead := func(t catalog.Template) string {
		if len(t.Parts) > 0 && t.Parts[0].Column == "" {
			return t.Parts[0].Text
		}
		return ""
	}
	la, lb := lead(a), lead(b)
	return strings.HasPrefix(la, lb) || strings.HasPrefix(lb, la)
}

// fkObject reads a referencing object map's object, the parent's subject, from
// the child row itself when a foreign key makes the join redundant: the join
// conditions are exactly the constraint's columns and the parent's subject uses
// only joined columns, so each child row with non-NULL join columns has exactly
// one parent row, whose subject is built from values the child row holds.
// SQLite enforces foreign keys only when asked to, so there the join stays.
func (q *query) fkObject(pr *producer, child string) (occurrence, bool) {
	if pr.parent == nil || len(pr.joins) == 0 || q.pl.dialect == source.SQLite ||
		pr.tm.Table.Query != "" || pr.parent.Table.Query != "" {
		return occurrence{}, false
	}
	parentName, err := catalog.ParseName(pr.parent.Table.TableName)
	if err != nil || len(parentName) != 1 {
		return occurrence{}, false
	}
	dbName := func(t catalog.LogicalTable, c string) string {
		col, err := q.pl.cols.Lookup(t, c)
		if err != nil {
			return ""
		}
		return col.Name
	}
	pairs := map[string]string{} // parent column (database name) → child column (mapping name)
	for _, j := range pr.joins {
		pairs[dbName(pr.parent.Table, j.Parent)] = j.Child
	}
	var fkFound bool
	for _, fk := range q.pl.cols.ForeignKeys(pr.tm.Table) {
		if !parentName[0].Matches(fk.RefTable) || len(fk.Columns) != len(pr.joins) || len(pairs) != len(pr.joins) {
			continue
		}
		match := true
		for i, c := range fk.Columns {
			childCol, ok := pairs[fk.RefColumns[i]]
			match = match && ok && dbName(pr.tm.Table, childCol) == c
		}
		fkFound = fkFound || match
	}
	if !fkFound {
		return occurrence{}, false
	}
	subject := pr.parent.Subject
	o := occurrence{m: subject}
	for _, c := range subject.Columns() {
		childCol, ok := pairs[dbName(pr.parent.Table, c)]
		if !ok {
			return occurrence{}, false
		}
		e, col := q.base(catalog.TermMap{Kind: catalog.Column, Column: childCol}, child, pr.tm.Table).col(childCol)
		o.exprs = append(o.exprs, e)
		o.cols = append(o.cols, col)
	}
	return o, true
}

// graphNames binds v to the name of each named graph of the dataset: the terms
// the catalog's graph maps produce (R2RML §9), each once.
func (q *query) graphNames(v algebra.Var) *rel {
	r := &rel{vars: []algebra.Var{v}, dedup: true}
	for _, c := range q.candidates(v) {
		b := &branch{vars: map[algebra.Var]binding{}}
		alias := q.alias("t")
		b.from = append(b.from, q.fromItem(c.p.tm.Table, alias))
		g := q.base(*c.graph, alias, c.p.tm.Table)
		if a := g.active(); a != nil {
			b.where = append(b.where, a)
		}
		if c.only != nil {
			var options []sql.Expr
			for _, iri := range c.only {
				if conds, ok := q.constConds(g, iri); ok {
					options = append(options, sql.And(conds...))
				}
			}
			if len(options) == 0 {
				continue
			}
			if cond := or(options...); cond != nil {
				b.where = append(b.where, cond)
			}
		}
		b.vars[v] = binding{alts: []occurrence{g}}
		r.branches = append(r.branches, b)
	}
	return r
}

// mayProduce is a quick test: false when m is a constant map whose term is not
// the constant it, so the candidate cannot match; true otherwise.
func mayProduce(m catalog.TermMap, it algebra.Item) bool {
	c, isConst := it.(algebra.Const)
	if !isConst || m.Kind != catalog.Constant {
		return true
	}
	return rdf.SameTerm(m.Constant, c.Term)
}

// isTypeOf reports whether the pattern asks for rdf:type and the producer makes
// rdf:type triples, so that the class can be compared early.
func isTypeOf(p *producer, t algebra.Triple) bool {
	c, ok := t.P.(algebra.Const)
	return ok && c.Term == rdf.RDFType && p.predicate.Kind == catalog.Constant && p.predicate.Constant == rdf.RDFType
}
