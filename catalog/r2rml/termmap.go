package r2rml

import (
	"strings"

	"veneer/catalog"
	"veneer/catalog/rdf"
)

// subjectMap reads a subject map with its classes and graph maps (R2RML §6.1, §9).
func (l *loader) subjectMap(n node, pos catalog.Pos) (catalog.TermMap, []rdf.IRI, []catalog.TermMap) {
	props := l.properties(n, roleSubjectMap)
	m, _ := l.termMap(props, roleSubjectMap, pos)
	var classes []rdf.IRI
	for _, st := range props[rrClass] {
		if c, ok := l.iri(st); ok {
			classes = append(classes, c)
		}
	}
	return m, classes, l.graphMaps(props)
}

// graphMaps reads the rr:graph and rr:graphMap properties of a subject map or
// predicate-object map (R2RML §9). When every graph map is the constant
// rr:defaultGraph the result is empty, which the model reads as the default
// graph; otherwise such a constant stays, as catalog.DefaultGraph.
func (l *loader) graphMaps(props map[rdf.IRI][]stmt) []catalog.TermMap {
	var gs []catalog.TermMap
	for _, st := range props[rrGraph] {
		if m, ok := l.constantMap(st, roleGraphMap); ok {
			gs = append(gs, m)
		}
	}
	for _, st := range props[rrGraphMap] {
		if gn, ok := l.resource(st, roleGraphMap); ok {
			if m, ok := l.termMap(l.properties(gn, roleGraphMap), roleGraphMap, l.place(st, gn)); ok {
				gs = append(gs, m)
			}
		}
	}
	for _, g := range gs {
		if g.Kind != catalog.Constant || g.Constant != catalog.DefaultGraph {
			return gs
		}
	}
	return nil
}

// predicateObjectMap reads a predicate-object map (R2RML §6.3).
func (l *loader) predicateObjectMap(n node, pos catalog.Pos, tm *catalog.TriplesMap) (catalog.PredicateObjectMap, bool) {
	pom := catalog.PredicateObjectMap{Pos: pos}
	props := l.properties(n, rolePredicateObjectMap)
	for _, st := range props[rrPredicate] {
		if m, ok := l.constantMap(st, rolePredicateMap); ok {
			pom.Predicates = append(pom.Predicates, m)
		}
	}
	for _, st := range props[rrPredicateMap] {
		if pn, ok := l.resource(st, rolePredicateMap); ok {
			if m, ok := l.termMap(l.properties(pn, rolePredicateMap), rolePredicateMap, l.place(st, pn)); ok {
				pom.Predicates = append(pom.Predicates, m)
			}
		}
	}
	for _, st := range props[rrObject] {
		if m, ok := l.constantMap(st, roleObjectMap); ok {
			pom.Objects = append(pom.Objects, catalog.ObjectMap{Term: &m})
		}
	}
	for _, st := range props[rrObjectMap] {
		on, ok := l.resource(st, roleObjectMap)
		if !ok {
			continue
		}
		if l.hasProperty(on, rrParentTriplesMap) {
			if ref, ok := l.refObjectMap(on, l.place(st, on), tm); ok {
				pom.Objects = append(pom.Objects, catalog.ObjectMap{Ref: ref})
			}
			continue
		}
		if m, ok := l.termMap(l.properties(on, roleObjectMap), roleObjectMap, l.place(st, on)); ok {
			pom.Objects = append(pom.Objects, catalog.ObjectMap{Term: &m})
		}
	}
	if len(props[rrPredicate])+len(props[rrPredicateMap]) == 0 {
		l.errorf(pos, "predicate-object map has no predicate (rr:predicate or rr:predicateMap)")
	}
	if len(props[rrObject])+len(props[rrObjectMap]) == 0 {
		l.errorf(pos, "predicate-object map has no object (rr:object or rr:objectMap)")
	}
	pom.Graphs = l.graphMaps(props)
	return pom, len(pom.Predicates) > 0 && len(pom.Objects) > 0
}

func (l *loader) hasProperty(n node, p rdf.IRI) bool {
	for _, st := range l.bySubj[n] {
		if st.P == p {
			return true
		}
	}
	return false
}

// refObjectMap reads a referencing object map (R2RML §8); its parent triples map
// is looked up by resolveRefs once every triples map is known.
func (l *loader) refObjectMap(n node, pos catalog.Pos, child *catalog.TriplesMap) (*catalog.RefObjectMap, bool) {
	ref := &catalog.RefObjectMap{Pos: pos}
	props := l.properties(n, roleRefObjectMap)
	st, _ := l.atMostOne(props[rrParentTriplesMap], roleRefObjectMap)
	parent, ok := l.resource(st, roleTriplesMap)
	if !ok {
		return nil, false
	}
	for _, jst := range props[rrJoinCondition] {
		jn, ok := l.resource(jst, roleJoin)
		if !ok {
			continue
		}
		jpos := l.place(jst, jn)
		jprops := l.properties(jn, roleJoin)
		j := catalog.JoinCondition{Pos: jpos}
		var okChild, okParent bool
		if cst, ok := l.atMostOne(jprops[rrChild], roleJoin); ok {
			j.Child, okChild = l.columnName(cst)
		} else {
			l.errorf(jpos, "join condition has no rr:child (the column of this triples map's logical table)")
		}
		if pst, ok := l.atMostOne(jprops[rrParent], roleJoin); ok {
			j.Parent, okParent = l.columnName(pst)
		} else {
			l.errorf(jpos, "join condition has no rr:parent (the column of the parent triples map's logical table)")
		}
		if okChild && okParent {
			ref.Joins = append(ref.Joins, j)
		}
	}
	l.refs = append(l.refs, pendingRef{ref: ref, child: child, parent: parent, parentPos: l.at(st.file, st.ObjectPos)})
	return ref, true
}

// resolveRefs links each referencing object map to its parent triples map.
func (l *loader) resolveRefs() {
	for _, r := range l.refs {
		parent, ok := l.maps[r.parent]
		if !ok {
			l.errorf(r.parentPos, "rr:parentTriplesMap %s: there is no triples map with that name", l.show(r.parent))
			continue
		}
		r.ref.Parent = parent
		// R2RML §8: without join conditions the child and parent rows are the same
		// rows, which only makes sense when both read the same logical table.
		// (A map without a logical table was reported already.)
		noTable := func(t catalog.LogicalTable) bool { return t.TableName == "" && t.Query == "" }
		if len(r.ref.Joins) == 0 && r.child.Table.Key() != parent.Table.Key() && !noTable(r.child.Table) && !noTable(parent.Table) {
			l.errorf(r.ref.Pos, "referencing object map has no rr:joinCondition, but its parent triples map %s reads %s, not %s: say how the rows join (rr:joinCondition [ rr:child \"...\" ; rr:parent \"...\" ])",
				l.show(r.parent), describeTable(parent.Table), describeTable(r.child.Table))
		}
	}
}

func describeTable(t catalog.LogicalTable) string {
	if t.Query != "" {
		return "a different SQL query"
	}
	return "table " + t.TableName
}

// constantMap reads a constant shortcut (rr:subject, rr:predicate, rr:object,
// rr:graph): a constant-valued term map for role r (R2RML §7.1).
func (l *loader) constantMap(st stmt, r role) (catalog.TermMap, bool) {
	c, ok := l.constant(st, r)
	if !ok {
		return catalog.TermMap{}, false
	}
	return catalog.TermMap{Kind: catalog.Constant, Pos: l.at(st.file, st.ObjectPos), Constant: c, TermType: c.Kind()}, true
}

// constant checks that the value of st may be the constant of a term map in
// role r: an IRI, or for object maps an IRI or a literal (R2RML §7.1).
func (l *loader) constant(st stmt, r role) (rdf.Term, bool) {
	switch st.O.(type) {
	case rdf.IRI:
		return st.O, true
	case rdf.Literal:
		if r == roleObjectMap {
			return st.O, true
		}
		l.errAt(st, true, "the constant of %s must be an IRI, found the literal %s", r.article(), st.O)
	default:
		l.errAt(st, true, "a blank node cannot be a constant: it names nothing outside the mapping document")
	}
	return nil, false
}

// termMap reads a term map in role r from its properties (R2RML §7).
func (l *loader) termMap(props map[rdf.IRI][]stmt, r role, pos catalog.Pos) (catalog.TermMap, bool) {
	m := catalog.TermMap{Pos: pos}
	var given []string
	for _, p := range []rdf.IRI{rrConstant, rrColumn, rrTemplate} {
		if len(props[p]) > 0 {
			given = append(given, short(p))
		}
	}
	switch len(given) {
	case 0:
		l.errorf(pos, "%s needs one of rr:constant, rr:column or rr:template", r.describe())
		return m, false
	case 1:
	default:
		l.errorf(pos, "%s has %s; give only one of them", r.describe(), strings.Join(given, " and "))
		return m, false
	}
	ok := true
	if st, has := l.atMostOne(props[rrConstant], r); has {
		m.Kind = catalog.Constant
		if m.Constant, ok = l.constant(st, r); ok {
			m.TermType = m.Constant.Kind()
		}
	}
	if st, has := l.atMostOne(props[rrColumn], r); has {
		m.Kind = catalog.Column
		m.Column, ok = l.columnName(st)
	}
	tpl, hasTemplate := l.atMostOne(props[rrTemplate], r)
	if hasTemplate {
		m.Kind = catalog.TemplateMap
		m.Template, ok = l.template(tpl)
	}
	for _, st := range props[rrInverseExpression] {
		// The inverse expression is an optional hint for query rewriting that
		// veneer does not use (it decodes templates itself); it is only checked.
		if m.Kind == catalog.Constant {
			l.errAt(st, false, "rr:inverseExpression only applies to a column- or template-valued term map")
		} else if _, good := l.template(st); !good {
			ok = false
		}
	}
	if !l.termType(&m, props, r, len(props[rrLanguage])+len(props[rrDatatype]) > 0) {
		ok = false
	}
	if !l.literalOptions(&m, props, r) {
		ok = false
	}
	if ok && hasTemplate && m.TermType == rdf.KindIRI {
		if err := m.Template.CheckIRI(); err != nil {
			l.errAt(tpl, true, "rr:template: %v", err)
			ok = false
		}
	}
	if m.TermType == rdf.KindIRI && m.Kind != catalog.Constant {
		m.Base = l.baseOf(pos.File)
	}
	return m, ok
}

// baseOf is the base IRI of the document with the given name.
func (l *loader) baseOf(file string) string {
	for i, n := range l.names {
		if n == file {
			return l.bases[i]
		}
	}
	return ""
}

// termType sets the term type of m (R2RML §7.4): rr:termType if given, else the
// kind of the constant, else rr:Literal for object maps that are column-valued
// or have a language tag or datatype, else rr:IRI.
func (l *loader) termType(m *catalog.TermMap, props map[rdf.IRI][]stmt, r role, literalOptions bool) bool {
	st, given := l.atMostOne(props[rrTermType], r)
	if !given {
		switch {
		case m.Kind == catalog.Constant:
		case r == roleObjectMap && (m.Kind == catalog.Column || literalOptions):
			m.TermType = rdf.KindLiteral
		default:
			m.TermType = rdf.KindIRI
		}
		return true
	}
	v, ok := l.iri(st)
	if !ok {
		return false
	}
	kind := map[rdf.IRI]rdf.Kind{rrIRI: rdf.KindIRI, rrBlankNode: rdf.KindBlank, rrLiteral: rdf.KindLiteral}[v]
	switch {
	case kind == 0:
		l.errAt(st, true, "rr:termType must be rr:IRI, rr:BlankNode or rr:Literal, found %s", short(v))
		return false
	case r == roleSubjectMap && kind == rdf.KindLiteral:
		l.errAt(st, true, "a subject map cannot have rr:termType rr:Literal: subjects are IRIs or blank nodes")
		return false
	case (r == rolePredicateMap || r == roleGraphMap) && kind != rdf.KindIRI:
		l.errAt(st, true, "%s cannot have rr:termType %s: it must produce IRIs", r.article(), short(v))
		return false
	case m.Kind == catalog.Constant && m.Constant != nil && m.Constant.Kind() != kind:
		l.errAt(st, true, "rr:termType %s contradicts the constant %s", short(v), m.Constant)
		return false
	}
	m.TermType = kind
	return true
}

// literalOptions reads rr:language and rr:datatype (R2RML §7.5, §7.6).
func (l *loader) literalOptions(m *catalog.TermMap, props map[rdf.IRI][]stmt, r role) bool {
	lang, hasLang := l.atMostOne(props[rrLanguage], r)
	dt, hasDatatype := l.atMostOne(props[rrDatatype], r)
	ok := true
	for _, st := range []stmt{lang, dt} {
		switch {
		case st.P == nil:
		case m.Kind == catalog.Constant:
			l.errAt(st, false, "%s does not apply to a constant: write the language tag or datatype on the constant literal itself", short(st.P.(rdf.IRI)))
			ok = false
		case m.TermType != rdf.KindLiteral && m.TermType != 0:
			l.errAt(st, false, "%s only applies to a term map that produces literals; this one has rr:termType %s", short(st.P.(rdf.IRI)), termTypeName(m.TermType))
			ok = false
		}
	}
	if hasLang && hasDatatype {
		l.errAt(dt, false, "rr:language (line %d) and rr:datatype cannot both be given: a literal has a language tag or a datatype, not both", lang.PredicatePos.Line)
		ok = false
	}
	if hasLang {
		if s, good := l.str(lang); !good {
			ok = false
		} else if !languageTag.MatchString(s) {
			l.errAt(lang, true, "rr:language %q is not a valid language tag (BCP 47, such as \"en\" or \"pt-BR\")", s)
			ok = false
		} else {
			m.Language = s
		}
	}
	if hasDatatype {
		if d, good := l.iri(dt); good {
			m.Datatype = d
		} else {
			ok = false
		}
	}
	// A template-valued literal without language tag or datatype is a plain
	// string (R2RML §7.4); only column values get a natural datatype (§10.2).
	if m.Kind == catalog.TemplateMap && m.TermType == rdf.KindLiteral && m.Language == "" && m.Datatype == "" {
		m.Datatype = rdf.XSDString
	}
	return ok
}

func termTypeName(k rdf.Kind) string {
	return map[rdf.Kind]string{rdf.KindIRI: "rr:IRI", rdf.KindBlank: "rr:BlankNode", rdf.KindLiteral: "rr:Literal"}[k]
}

// columnName reads a column name (rr:column, rr:child, rr:parent), which must
// be an SQL identifier, regular or delimited.
func (l *loader) columnName(st stmt) (string, bool) {
	s, ok := l.str(st)
	if !ok {
		return "", false
	}
	if _, err := catalog.ColumnIdent(s); err != nil {
		l.errAt(st, true, "%s: %v", short(st.P.(rdf.IRI)), err)
		return "", false
	}
	return s, true
}

// template reads and parses an rr:template (or rr:inverseExpression) string.
func (l *loader) template(st stmt) (catalog.Template, bool) {
	s, ok := l.str(st)
	if !ok {
		return catalog.Template{}, false
	}
	t, err := ParseTemplate(s)
	if err != nil {
		l.errAt(st, true, "%s: %v", short(st.P.(rdf.IRI)), err)
		return catalog.Template{}, false
	}
	for _, c := range t.Columns() {
		if _, err := catalog.ColumnIdent(c); err != nil {
			l.errAt(st, true, "%s: column {%s}: %v", short(st.P.(rdf.IRI)), c, err)
			return catalog.Template{}, false
		}
	}
	return t, true
}
