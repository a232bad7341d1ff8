package rewrite

import (
	"fmt"
	"strings"

	"veneer/catalog"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/rewrite/algebra"
	"veneer/rewrite/sql"
)

// producer is one way the catalog makes triples: a subject, a predicate and an
// object map over the rows of one triples map's logical table, and for a
// referencing object map, the parent's rows joined to them.
type producer struct {
	tm        *catalog.TriplesMap
	predicate catalog.TermMap
	object    catalog.TermMap
	// parent is set for a referencing object map; object is then its subject map.
	parent *catalog.TriplesMap
	joins  []catalog.JoinCondition
}

// producersOf lists every producer of the catalog: rdf:type triples from rr:class,
// and one per predicate × object of each predicate-object map.
func producersOf(cat *catalog.Catalog) []producer {
	var out []producer
	typeMap := catalog.TermMap{Kind: catalog.Constant, Constant: rdf.RDFType, TermType: rdf.KindIRI}
	for _, tm := range cat.Maps {
		for _, class := range tm.Classes {
			out = append(out, producer{tm: tm, predicate: typeMap,
				object: catalog.TermMap{Kind: catalog.Constant, Constant: class, TermType: rdf.KindIRI}})
		}
		for _, pom := range tm.PredicateObjects {
			for _, pm := range pom.Predicates {
				for _, om := range pom.Objects {
					if om.Term != nil {
						out = append(out, producer{tm: tm, predicate: pm, object: *om.Term})
						continue
					}
					out = append(out, producer{tm: tm, predicate: pm, object: om.Ref.Parent.Subject,
						parent: om.Ref.Parent, joins: om.Ref.Joins})
				}
			}
		}
	}
	return out
}

// occurrence is a term map applied to the rows of one FROM alias.
type occurrence struct {
	m     catalog.TermMap
	alias string
	table catalog.LogicalTable
}

// branch is one combination of producers for the patterns of a BGP: one SELECT.
type branch struct {
	from  []sql.From
	where []sql.Expr
	vars  map[algebra.Var]occurrence
	// checks are occurrences SQL could not equate with the variable's first one.
	checks []varCheck
	seq    int
}

type varCheck struct {
	v   algebra.Var
	occ occurrence
}

// unfolded is a BGP unfolded into union branches.
type unfolded struct {
	vars     []algebra.Var // in order of first appearance
	branches []*branch
}

// unfold turns a BGP into the union of the producer combinations that can match it,
// dropping the combinations that provably cannot (constants that no map yields,
// shared variables whose maps can never give equal terms).
func (pl *Planner) unfold(bgp algebra.BGP) *unfolded {
	u := &unfolded{}
	seen := map[algebra.Var]bool{}
	for _, t := range bgp.Patterns {
		for _, it := range []algebra.Item{t.S, t.P, t.O} {
			if v, ok := it.(algebra.Var); ok && !seen[v] {
				seen[v] = true
				u.vars = append(u.vars, v)
			}
		}
	}
	var walk func(i int, b *branch)
	walk = func(i int, b *branch) {
		if i == len(bgp.Patterns) {
			u.branches = append(u.branches, b)
			return
		}
		for _, pr := range pl.producers {
			nb := b.clone()
			if pl.add(nb, bgp.Patterns[i], pr) {
				walk(i+1, nb)
			}
		}
	}
	walk(0, &branch{vars: map[algebra.Var]occurrence{}})
	return u
}

func (b *branch) clone() *branch {
	nb := &branch{
		from:   append([]sql.From(nil), b.from...),
		where:  append([]sql.Expr(nil), b.where...),
		vars:   make(map[algebra.Var]occurrence, len(b.vars)),
		checks: append([]varCheck(nil), b.checks...),
		seq:    b.seq,
	}
	for k, v := range b.vars {
		nb.vars[k] = v
	}
	return nb
}

func (b *branch) newAlias() string {
	b.seq++
	return fmt.Sprintf("t%d", b.seq)
}

func (pl *Planner) fromItem(t catalog.LogicalTable, alias string) sql.From {
	if t.Query != "" {
		return &sql.Derived{Query: t.Query, Alias: alias}
	}
	name, _ := catalog.ParseName(t.TableName) // checked when the columns were probed
	return &sql.Table{Name: name, Alias: alias}
}

// add extends the branch with producer pr for triple pattern t; false means the
// producer cannot match the pattern given what the branch already binds.
func (pl *Planner) add(b *branch, t algebra.Triple, pr producer) bool {
	childAlias := b.newAlias()
	objAlias, objTable := childAlias, pr.tm.Table
	b.from = append(b.from, pl.fromItem(pr.tm.Table, childAlias))
	if pr.parent != nil && len(pr.joins) > 0 {
		objAlias, objTable = b.newAlias(), pr.parent.Table
		b.from = append(b.from, pl.fromItem(pr.parent.Table, objAlias))
		for _, j := range pr.joins {
			b.where = append(b.where, sql.Binary{Op: "=", Exact: stringKind(pl.kind(pr.tm.Table, j.Child)),
				L: pl.colRef(childAlias, pr.tm.Table, j.Child),
				R: pl.colRef(objAlias, pr.parent.Table, j.Parent)})
		}
	}
	occs := []struct {
		it  algebra.Item
		occ occurrence
	}{
		{t.S, occurrence{pr.tm.Subject, childAlias, pr.tm.Table}},
		{t.P, occurrence{pr.predicate, childAlias, pr.tm.Table}},
		{t.O, occurrence{pr.object, objAlias, objTable}},
	}
	for _, o := range occs {
		b.where = append(b.where, pl.notNull(o.occ)...)
		switch it := o.it.(type) {
		case algebra.Const:
			conds, ok := pl.constConds(o.occ, it.Term)
			if !ok {
				return false
			}
			b.where = append(b.where, conds...)
		case algebra.Var:
			first, bound := b.vars[it]
			if !bound {
				b.vars[it] = o.occ
				continue
			}
			conds, exact, ok := pl.unify(first, o.occ)
			if !ok {
				return false
			}
			b.where = append(b.where, conds...)
			if !exact {
				b.checks = append(b.checks, varCheck{it, o.occ})
			}
		}
	}
	return true
}

// colRef refers to a mapping column by the name the database gave it, delimited,
// so that case folding cannot change it.
func (pl *Planner) colRef(alias string, t catalog.LogicalTable, name string) sql.ColumnRef {
	col, err := pl.cols.Lookup(t, name)
	if err != nil {
		// ProbeColumns checked every column the catalog names.
		panic(fmt.Sprintf("rewrite: unchecked column: %v", err))
	}
	return sql.ColumnRef{Table: alias, Column: catalog.Ident{Name: col.Name, Quoted: true}}
}

func (pl *Planner) kind(t catalog.LogicalTable, name string) source.TypeKind {
	col, err := pl.cols.Lookup(t, name)
	if err != nil {
		panic(fmt.Sprintf("rewrite: unchecked column: %v", err))
	}
	return col.Kind
}

// notNull says that every column of the term map is not NULL: a term map with a
// NULL column produces no term, so the row yields no triple (R2RML §11).
func (pl *Planner) notNull(o occurrence) []sql.Expr {
	var out []sql.Expr
	for _, c := range o.m.Columns() {
		out = append(out, sql.IsNull{X: pl.colRef(o.alias, o.table, c), Not: true})
	}
	return out
}

// literalType is the datatype and language of the literals a map produces.
func (pl *Planner) literalType(o occurrence) (rdf.IRI, string) {
	switch {
	case o.m.Language != "":
		return rdf.RDFLangString, strings.ToLower(o.m.Language)
	case o.m.Datatype != "":
		return o.m.Datatype, ""
	case o.m.Kind == catalog.Column:
		if dt := catalog.NaturalDatatype(pl.kind(o.table, o.m.Column)); dt != "" {
			return dt, ""
		}
	}
	return rdf.XSDString, ""
}

// constConds are the SQL conditions under which the occurrence yields term c; false
// means it never does.
func (pl *Planner) constConds(o occurrence, c rdf.Term) ([]sql.Expr, bool) {
	m := o.m
	if m.Kind == catalog.Constant {
		return nil, rdf.SameTerm(m.Constant, c)
	}
	if c.Kind() != m.TermType {
		return nil, false
	}
	var lexical string
	switch c := c.(type) {
	case rdf.IRI:
		lexical = string(c)
	case rdf.Literal:
		dt, lang := pl.literalType(o)
		if c.Datatype != dt || !strings.EqualFold(c.Lang, lang) {
			return nil, false
		}
		lexical = c.Lexical
	default:
		// Blank nodes of a query are variables; a blank node constant cannot occur.
		return nil, false
	}
	switch m.Kind {
	case catalog.Column:
		return pl.valueConds(o, map[string]string{m.Column: lexical})
	case catalog.TemplateMap:
		values, ok := m.Template.Match(lexical, m.TermType == rdf.KindIRI)
		if !ok {
			return nil, false
		}
		return pl.valueConds(o, values)
	}
	return nil, false
}

// valueConds equate columns with the values whose lexical forms are given; a value
// that the column's type cannot hold means no match.
func (pl *Planner) valueConds(o occurrence, lexicals map[string]string) ([]sql.Expr, bool) {
	var out []sql.Expr
	for _, col := range o.m.Columns() {
		k := pl.kind(o.table, col)
		v, ok := catalog.ParseLexical(lexicals[col], k)
		if !ok {
			return nil, false
		}
		out = append(out, sql.Binary{Op: "=", Exact: stringKind(k), L: pl.colRef(o.alias, o.table, col), R: sql.Param{Value: pl.paramValue(v)}})
	}
	return out, true
}

// paramValue adapts a normalised value to what the dialect's driver binds well.
func (pl *Planner) paramValue(v any) any {
	return v
}

// unify returns the SQL conditions under which occurrences a and b yield the same
// term. exact is false when SQL cannot decide it fully and the row must be checked
// in-process; ok is false when they never yield the same term.
func (pl *Planner) unify(a, b occurrence) (conds []sql.Expr, exact, ok bool) {
	if a.m.TermType != b.m.TermType {
		return nil, true, false
	}
	if a.m.Kind == catalog.Constant {
		a, b = b, a
	}
	if b.m.Kind == catalog.Constant {
		c, ok := pl.constConds(a, b.m.Constant)
		return c, true, ok
	}
	if a.m.TermType == rdf.KindLiteral {
		da, la := pl.literalType(a)
		db, lb := pl.literalType(b)
		if da != db || la != lb {
			return nil, true, false
		}
	}
	switch {
	case a.m.Kind == catalog.Column && b.m.Kind == catalog.Column:
		return pl.equateColumns(a, a.m.Column, b, b.m.Column)
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
			c, ex, _ := pl.equateColumns(a, p.Column, b, b.m.Template.Parts[i].Column)
			conds = append(conds, c...)
			exact = exact && ex
		}
		return conds, exact, true
	}
	return nil, false, true
}

// equateColumns compares two columns whose lexical forms must be equal. Columns of
// the same type family compare directly; integers and strings compare as text;
// other mixes are left to the in-process check.
func (pl *Planner) equateColumns(a occurrence, ca string, b occurrence, cb string) ([]sql.Expr, bool, bool) {
	ka, kb := pl.kind(a.table, ca), pl.kind(b.table, cb)
	l, r := sql.Expr(pl.colRef(a.alias, a.table, ca)), sql.Expr(pl.colRef(b.alias, b.table, cb))
	if ka != kb {
		if !textual(ka) || !textual(kb) {
			return nil, false, true
		}
		l, r = pl.asText(l, ka), pl.asText(r, kb)
	}
	return []sql.Expr{sql.Binary{Op: "=", Exact: stringKind(ka) || stringKind(kb), L: l, R: r}}, true, true
}

// stringKind reports whether values of the kind compare as strings, where an exact
// (code point) comparison must be asked for.
func stringKind(k source.TypeKind) bool { return k == source.TypeString || k == source.TypeOther }

func textual(k source.TypeKind) bool {
	return k == source.TypeInteger || k == source.TypeString || k == source.TypeOther
}

func (pl *Planner) asText(e sql.Expr, k source.TypeKind) sql.Expr {
	if k != source.TypeInteger {
		return e
	}
	return sql.Cast{X: e, Type: pl.textType()}
}

func (pl *Planner) textType() string {
	if pl.dialect == source.MySQL {
		return "CHAR"
	}
	return "TEXT"
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
