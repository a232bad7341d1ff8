// Package r2rml reads W3C R2RML mapping documents, written in Turtle, into the
// catalog model, and checks them against every rule of the R2RML specification
// (W3C Recommendation, 2012) that can be checked without the database; CheckFiles
// adds the checks against the live schema. Errors name the file, line and
// column of the offending mapping element. Write turns a catalog back into a
// mapping document.
package r2rml

import (
	"errors"
	"fmt"
	"net/url"
	"os"
	"path/filepath"
	"strings"

	"veneer/catalog"
	"veneer/catalog/rdf"
)

// Error is a mistake in a mapping document: where it is and what is wrong.
type Error = catalog.Error

// ErrorList is the list of mistakes found in the mapping documents, in document
// order and then by position. Its Error shows the first.
type ErrorList = catalog.ErrorList

// Load reads one R2RML mapping document. name is used in positions and to make
// the base IRI relative IRIs are resolved against when the document sets none
// (a file: IRI of name made absolute). A Turtle syntax error is returned as the
// rdf.ErrorList of the reader; mapping mistakes as an ErrorList.
func Load(name string, src []byte) (*catalog.Catalog, error) {
	return load([]input{{name, src}})
}

// LoadFiles reads several R2RML mapping documents into one catalog: a triples
// map may name, as its rr:parentTriplesMap, a triples map of another document
// (by IRI; blank nodes are local to their document).
func LoadFiles(paths ...string) (*catalog.Catalog, error) {
	ins, err := readFiles(paths)
	if err != nil {
		return nil, err
	}
	return load(ins)
}

// LoadPartial reads mapping files like LoadFiles, but goes on past the mapping
// mistakes it finds, so that what it could read can be checked further (see
// CheckFiles): it returns the mistakes, sorted, and a catalog of the triples
// maps whose logical table and subject map could be read, without the term
// maps that could not and without references to triples maps left out. err is
// a file that cannot be read or a Turtle syntax error, after which there is no
// catalog.
func LoadPartial(paths ...string) (*catalog.Catalog, ErrorList, error) {
	ins, err := readFiles(paths)
	if err != nil {
		return nil, nil, err
	}
	cat, mistakes, err := read(ins)
	if err != nil {
		return nil, nil, err
	}
	return usable(cat), mistakes, nil
}

func readFiles(paths []string) ([]input, error) {
	if len(paths) == 0 {
		return nil, errors.New("loading R2RML mappings: no mapping file given")
	}
	ins := make([]input, len(paths))
	for i, p := range paths {
		src, err := os.ReadFile(p)
		if err != nil {
			return nil, fmt.Errorf("loading R2RML mapping: %w", err)
		}
		ins[i] = input{p, src}
	}
	return ins, nil
}

type input struct {
	name string
	src  []byte
}

// documentBase is the base IRI of a document read from the file name.
func documentBase(name string) string {
	p, err := filepath.Abs(name)
	if err != nil {
		p = name
	}
	p = filepath.ToSlash(p)
	if !strings.HasPrefix(p, "/") {
		p = "/" + p
	}
	return (&url.URL{Scheme: "file", Path: p}).String()
}

// node is a resource of the mapping graph. Blank nodes carry the index of their
// document, so equal labels in two documents are different nodes; file is -1
// for IRIs, which are shared by all documents.
type node struct {
	term rdf.Term
	file int
}

// stmt is a statement with the index of the document it came from.
type stmt struct {
	rdf.Statement
	file int
}

type loader struct {
	names    []string
	bases    []string // each document's base IRI, by document index
	bySubj   map[node][]stmt
	subjects []node // in order of first appearance
	maps     map[node]*catalog.TriplesMap
	refs     []pendingRef
	errs     ErrorList
}

// pendingRef is a referencing object map whose parent is looked up once every
// triples map is known.
type pendingRef struct {
	ref       *catalog.RefObjectMap
	child     *catalog.TriplesMap
	parent    node
	parentPos catalog.Pos
}

func load(ins []input) (*catalog.Catalog, error) {
	cat, mistakes, err := read(ins)
	switch {
	case err != nil:
		return nil, err
	case len(mistakes) > 0:
		return nil, mistakes
	}
	return cat, nil
}

// read reads the documents into a catalog of every triples map found, parts
// with mistakes included, and the mistakes.
func read(ins []input) (*catalog.Catalog, ErrorList, error) {
	l := &loader{bySubj: map[node][]stmt{}, maps: map[node]*catalog.TriplesMap{}}
	for i, in := range ins {
		doc, err := rdf.ParseTurtle(in.name, in.src, documentBase(in.name))
		if err != nil {
			return nil, nil, err
		}
		l.names = append(l.names, in.name)
		l.bases = append(l.bases, doc.Base)
		for _, st := range doc.Statements {
			s := stmt{st, i}
			n := l.nodeOf(st.S, i)
			if _, seen := l.bySubj[n]; !seen {
				l.subjects = append(l.subjects, n)
			}
			l.bySubj[n] = append(l.bySubj[n], s)
			l.checkVocabulary(s)
		}
	}
	cat := &catalog.Catalog{}
	var order []node
	for _, n := range l.subjects {
		if l.isTriplesMap(n) {
			first := l.bySubj[n][0]
			l.maps[n] = &catalog.TriplesMap{Name: l.name(n), Pos: l.at(first.file, first.SubjectPos)}
			order = append(order, n)
		}
	}
	for _, n := range order {
		l.triplesMap(n, l.maps[n])
		cat.Maps = append(cat.Maps, l.maps[n])
	}
	l.resolveRefs()
	if len(cat.Maps) == 0 && len(l.errs) == 0 {
		l.errorf(catalog.Pos{File: strings.Join(l.names, ", ")},
			"no triples maps found: a triples map is a resource with an rr:logicalTable and a subject map (rr:subjectMap or rr:subject)")
	}
	if len(l.errs) > 0 {
		return cat, l.sortedErrors(), nil
	}
	return cat, nil, nil
}

// usable returns the part of a catalog read with mistakes that can be checked
// against a database: the triples maps with a well-formed logical table and a
// subject map, and of their object maps those whose parent is one of them.
func usable(cat *catalog.Catalog) *catalog.Catalog {
	kept := map[*catalog.TriplesMap]bool{}
	out := &catalog.Catalog{}
	for _, tm := range cat.Maps {
		t := tm.Table
		if _, err := catalog.ParseName(t.TableName); (err != nil && t.Query == "") || tm.Subject.Kind == 0 {
			continue
		}
		kept[tm] = true
		out.Maps = append(out.Maps, tm)
	}
	for _, tm := range out.Maps {
		poms := tm.PredicateObjects[:0]
		for _, pom := range tm.PredicateObjects {
			objs := pom.Objects[:0]
			for _, om := range pom.Objects {
				if om.Ref == nil || kept[om.Ref.Parent] {
					objs = append(objs, om)
				}
			}
			if pom.Objects = objs; len(objs) > 0 {
				poms = append(poms, pom)
			}
		}
		tm.PredicateObjects = poms
	}
	return out
}

func (l *loader) nodeOf(t rdf.Term, file int) node {
	if _, ok := t.(rdf.BlankNode); ok {
		return node{t, file}
	}
	return node{t, -1}
}

// name is how a resource is shown: an IRI as it is, a blank node as "_:label".
func (l *loader) name(n node) string {
	if iri, ok := n.term.(rdf.IRI); ok {
		return string(iri)
	}
	return n.term.String()
}

// show is how a resource is shown in messages.
func (l *loader) show(n node) string {
	if iri, ok := n.term.(rdf.IRI); ok {
		return "<" + string(iri) + ">"
	}
	return n.term.String()
}

func (l *loader) at(file int, p rdf.Pos) catalog.Pos {
	return catalog.Pos{File: l.names[file], Line: p.Line, Col: p.Col}
}

func (l *loader) errorf(pos catalog.Pos, format string, args ...any) {
	l.errs = append(l.errs, &Error{Pos: pos, Msg: fmt.Sprintf(format, args...)})
}

// errAt reports an error at the predicate (or, with object set, the object) of st.
func (l *loader) errAt(st stmt, object bool, format string, args ...any) {
	p := st.PredicatePos
	if object {
		p = st.ObjectPos
	}
	l.errorf(l.at(st.file, p), format, args...)
}

// sortedErrors sorts the errors in document order and drops repeats (a
// resource shared by several maps is checked once for each).
func (l *loader) sortedErrors() ErrorList { return l.errs.Sorted(l.names...) }

// checkVocabulary reports properties and classes of the R2RML namespace that
// the vocabulary does not have, wherever they are used.
func (l *loader) checkVocabulary(st stmt) {
	if p := st.P.(rdf.IRI); strings.HasPrefix(string(p), NS) {
		if _, ok := homeRole[p]; !ok {
			l.errAt(st, false, "unknown R2RML property %s%s", short(p), suggest(p))
		}
	}
	if o, ok := st.O.(rdf.IRI); ok && st.P == rdf.RDFType && strings.HasPrefix(string(o), NS) && !knownClasses[o] {
		l.errAt(st, true, "unknown R2RML class %s", short(o))
	}
}

// isTriplesMap reports whether n is a triples map: typed rr:TriplesMap, or with
// a property only triples maps have.
func (l *loader) isTriplesMap(n node) bool {
	for _, st := range l.bySubj[n] {
		switch st.P {
		case rrLogicalTable, rrSubjectMap, rrSubject, rrPredicateObjectMap:
			return true
		case rdf.RDFType:
			if st.O == rrTriplesMap {
				return true
			}
		}
	}
	return false
}

// properties returns the R2RML properties of n by predicate, after checking that
// each is allowed on a resource playing role r (and that n is not typed with a
// class of another role). Properties outside the vocabulary's namespace are
// not R2RML's business and are ignored.
func (l *loader) properties(n node, r role) map[rdf.IRI][]stmt {
	props := map[rdf.IRI][]stmt{}
	for _, st := range l.bySubj[n] {
		p := st.P.(rdf.IRI)
		if p == rdf.RDFType {
			if c, ok := st.O.(rdf.IRI); ok && knownClasses[c] && !contains(roleClasses[r], c) {
				l.errAt(st, true, "%s is typed %s but is used as %s", l.show(n), short(c), r.article())
			}
			continue
		}
		home, known := homeRole[p]
		switch {
		case !known:
			continue
		case !contains(roleProps[r], p):
			l.errAt(st, false, "%s is not allowed on %s (it belongs on %s)", short(p), r.article(), home.article())
			continue
		}
		props[p] = append(props[p], st)
	}
	return props
}

func contains(list []rdf.IRI, x rdf.IRI) bool {
	for _, y := range list {
		if x == y {
			return true
		}
	}
	return false
}

// atMostOne returns the only statement of sts, reporting extra ones.
func (l *loader) atMostOne(sts []stmt, r role) (stmt, bool) {
	if len(sts) == 0 {
		return stmt{}, false
	}
	for _, extra := range sts[1:] {
		l.errAt(extra, false, "%s may have only one %s; another one is at line %d", r.article(), short(extra.P.(rdf.IRI)), sts[0].PredicatePos.Line)
	}
	return sts[0], true
}

// str returns the value of st, which must be a string literal.
func (l *loader) str(st stmt) (string, bool) {
	if lit, ok := st.O.(rdf.Literal); ok && lit.Datatype == rdf.XSDString {
		return lit.Lexical, true
	}
	l.errAt(st, true, "%s needs a string literal, found %s", short(st.P.(rdf.IRI)), st.O)
	return "", false
}

// iri returns the value of st, which must be an IRI.
func (l *loader) iri(st stmt) (rdf.IRI, bool) {
	if iri, ok := st.O.(rdf.IRI); ok {
		return iri, true
	}
	l.errAt(st, true, "%s needs an IRI, found %s", short(st.P.(rdf.IRI)), st.O)
	return "", false
}

// resource returns the resource st points to, which must describe a part of
// the mapping (an IRI or a blank node, not a literal).
func (l *loader) resource(st stmt, r role) (node, bool) {
	if _, ok := st.O.(rdf.Literal); ok {
		l.errAt(st, true, "%s needs a resource describing the %s ([ ... ] or an IRI), found the literal %s", short(st.P.(rdf.IRI)), r.describe(), st.O)
		return node{}, false
	}
	return l.nodeOf(st.O, st.file), true
}

// place returns the position of the resource st points to: where it is first
// described, or where st names it when it is not described at all.
func (l *loader) place(st stmt, n node) catalog.Pos {
	if sts := l.bySubj[n]; len(sts) > 0 {
		return l.at(sts[0].file, sts[0].SubjectPos)
	}
	return l.at(st.file, st.ObjectPos)
}

// triplesMap fills tm from the resource n (R2RML §6).
func (l *loader) triplesMap(n node, tm *catalog.TriplesMap) {
	props := l.properties(n, roleTriplesMap)
	if len(props[rrLogicalTable]) == 0 {
		l.errorf(tm.Pos, "triples map %s has no rr:logicalTable: say which table (rr:tableName) or query (rr:sqlQuery) it reads", l.show(n))
	}
	if st, ok := l.atMostOne(props[rrLogicalTable], roleTriplesMap); ok {
		if ln, ok := l.resource(st, roleLogicalTable); ok {
			tm.Table = l.logicalTable(ln, l.place(st, ln))
		}
	}

	var subjects []stmt // in document order, so that the extra ones are reported
	for _, st := range l.bySubj[n] {
		if st.P == rrSubjectMap || st.P == rrSubject {
			subjects = append(subjects, st)
		}
	}
	switch {
	case len(subjects) == 0:
		l.errorf(tm.Pos, "triples map %s has no subject map (rr:subjectMap or rr:subject)", l.show(n))
	case len(subjects) > 1:
		for _, extra := range subjects[1:] {
			l.errAt(extra, false, "triples map %s has more than one subject map (another one is at line %d); it must have exactly one", l.show(n), subjects[0].PredicatePos.Line)
		}
	default:
		st := subjects[0]
		if st.P == rrSubject {
			tm.Subject, _ = l.constantMap(st, roleSubjectMap)
		} else if sn, ok := l.resource(st, roleSubjectMap); ok {
			tm.Subject, tm.Classes, tm.Graphs = l.subjectMap(sn, l.place(st, sn))
		}
	}

	for _, st := range props[rrPredicateObjectMap] {
		if pn, ok := l.resource(st, rolePredicateObjectMap); ok {
			if pom, ok := l.predicateObjectMap(pn, l.place(st, pn), tm); ok {
				tm.PredicateObjects = append(tm.PredicateObjects, pom)
			}
		}
	}
}

// logicalTable reads a logical table (R2RML §5): a table or view name, or an
// SQL query (an R2RML view) with optional SQL version identifiers. A query is
// kept without the white space and semicolons that may end it, so that it can
// be used as a subquery.
func (l *loader) logicalTable(n node, pos catalog.Pos) catalog.LogicalTable {
	var t catalog.LogicalTable
	props := l.properties(n, roleLogicalTable)
	names, queries := props[rrTableName], props[rrSQLQuery]
	switch {
	case len(names) == 0 && len(queries) == 0:
		l.errorf(pos, "logical table has neither rr:tableName nor rr:sqlQuery; give one of them")
	case len(names) > 0 && len(queries) > 0:
		l.errAt(queries[0], false, "logical table has both rr:tableName (line %d) and rr:sqlQuery; give only one", names[0].PredicatePos.Line)
		return t
	}
	if st, ok := l.atMostOne(names, roleLogicalTable); ok {
		t.Pos = l.at(st.file, st.ObjectPos)
		if s, ok := l.str(st); ok {
			if _, err := catalog.ParseName(s); err != nil {
				l.errAt(st, true, "rr:tableName: %v", err)
			}
			t.TableName = s
		}
	}
	if st, ok := l.atMostOne(queries, roleLogicalTable); ok {
		t.Pos = l.at(st.file, st.ObjectPos)
		if s, ok := l.str(st); ok {
			s = strings.TrimSpace(strings.TrimRight(strings.TrimSpace(s), ";"))
			if s == "" {
				l.errAt(st, true, "rr:sqlQuery is empty")
			}
			t.Query = s
		}
	}
	for _, st := range props[rrSQLVersion] {
		if len(queries) == 0 {
			l.errAt(st, false, "rr:sqlVersion only applies to an R2RML view (a logical table with rr:sqlQuery)")
			continue
		}
		if v, ok := l.iri(st); ok {
			if strings.HasPrefix(string(v), NS) && !sqlVersions[v] {
				l.errAt(st, true, "%s is not a known SQL version identifier (the standard one is rr:SQL2008)", short(v))
				continue
			}
			t.SQLVersions = append(t.SQLVersions, v)
		}
	}
	return t
}
