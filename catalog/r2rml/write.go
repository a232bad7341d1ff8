package r2rml

import (
	"errors"
	"fmt"
	"io"
	"strings"
	"unicode/utf8"

	"veneer/catalog"
	"veneer/catalog/rdf"
)

// Write writes cat as an R2RML mapping document in Turtle, to be read and
// edited by people: one block per triples map, its parts as nested blank node
// property lists, the shortcuts rr:subject, rr:predicate, rr:object and
// rr:graph where they apply, and IRIs shortened with the prefixes given (and
// rr:, xsd:, rdf: and rdfs:, declared when used). When the column- and
// template-valued IRI maps share a base IRI, the document declares it with
// @base. Triples maps named by an absolute IRI keep it; the others become
// blank nodes. Reading the document back (Load) gives the same catalog but for
// positions, the names of blank-node triples maps, and the base IRI of maps
// that have none (they get the new document's).
func Write(w io.Writer, cat *catalog.Catalog, prefixes ...rdf.Prefix) error {
	wr := &writer{names: map[*catalog.TriplesMap]string{}, used: map[string]bool{}}
	for _, p := range append(append([]rdf.Prefix{{Name: "rr", IRI: NS}}, prefixes...), standardPrefixes...) {
		if p.Name != "" && !rdf.IsPrefixName(p.Name) {
			return fmt.Errorf("writing R2RML: %q is not a valid prefix name", p.Name)
		}
		if !wr.declared(p) {
			wr.prefixes = append(wr.prefixes, p)
		}
	}
	base, err := sharedBase(cat)
	if err != nil {
		return err
	}
	wr.base = base
	if err := wr.nameMaps(cat); err != nil {
		return err
	}
	var body strings.Builder
	for i, tm := range cat.Maps {
		if i > 0 {
			body.WriteByte('\n')
		}
		if err := wr.triplesMap(&body, tm); err != nil {
			return fmt.Errorf("writing R2RML: triples map %s: %w", tm.Name, err)
		}
	}
	var head strings.Builder
	for _, p := range wr.prefixes {
		if wr.used[p.Name] {
			fmt.Fprintf(&head, "@prefix %s: %s .\n", p.Name, p.IRI)
		}
	}
	if base != "" {
		fmt.Fprintf(&head, "@base %s .\n", rdf.IRI(base))
	}
	head.WriteByte('\n')
	_, err = io.WriteString(w, head.String()+body.String())
	return err
}

// standardPrefixes are declared when the document uses them and the caller
// gave none of their names or namespaces.
var standardPrefixes = []rdf.Prefix{
	{Name: "xsd", IRI: rdf.XSDNS}, {Name: "rdf", IRI: rdf.RDFNS}, {Name: "rdfs", IRI: rdf.RDFSNS},
}

// sharedBase is the base IRI of the catalog's column- and template-valued IRI
// maps: empty when none has one, an error when they differ (one document has
// one base).
func sharedBase(cat *catalog.Catalog) (string, error) {
	var all []catalog.TermMap
	for _, tm := range cat.Maps {
		all = append(append(all, tm.Subject), tm.Graphs...)
		for _, pom := range tm.PredicateObjects {
			all = append(append(all, pom.Predicates...), pom.Graphs...)
			for _, om := range pom.Objects {
				if om.Term != nil {
					all = append(all, *om.Term)
				}
			}
		}
	}
	base := ""
	for _, m := range all {
		switch {
		case m.Base == "" || m.Kind == catalog.Constant:
		case base == "":
			base = m.Base
		case base != m.Base:
			return "", fmt.Errorf("writing R2RML: the term maps have different base IRIs (%s, %s), which one document cannot hold", base, m.Base)
		}
	}
	return base, nil
}

type writer struct {
	prefixes []rdf.Prefix
	used     map[string]bool
	names    map[*catalog.TriplesMap]string
	// base is the document's @base, against which IRIs may be written relative.
	base string
}

// declared reports whether p's name or namespace is taken already.
func (wr *writer) declared(p rdf.Prefix) bool {
	for _, q := range wr.prefixes {
		if q.Name == p.Name || q.IRI == p.IRI {
			return true
		}
	}
	return false
}

// nameMaps chooses the resource each triples map is written as.
func (wr *writer) nameMaps(cat *catalog.Catalog) error {
	taken := map[string]bool{}
	for i, tm := range cat.Maps {
		if !rdf.IsAbsoluteIRI(tm.Name) || !validIRI(tm.Name) {
			wr.names[tm] = fmt.Sprintf("_:map%d", i+1)
			continue
		}
		if taken[tm.Name] {
			return fmt.Errorf("writing R2RML: two triples maps are named %s", tm.Name)
		}
		taken[tm.Name] = true
		wr.names[tm] = wr.iri(rdf.IRI(tm.Name))
	}
	return nil
}

func validIRI(s string) bool {
	for _, r := range s {
		if !rdf.IsIRIChar(r) {
			return false
		}
	}
	return s != ""
}

// prop is one predicate of a property list with its objects, each a term
// written out or a nested property list.
type prop struct {
	pred string
	objs []any // string or plist
}

type plist []prop

func (l *plist) add(pred string, objs ...any) { *l = append(*l, prop{pred, objs}) }

// merged joins neighbouring properties of one predicate whose objects are
// terms into an object list; nested property lists stay one a line.
func (l plist) merged() plist {
	terms := func(p prop) bool {
		for _, o := range p.objs {
			if _, ok := o.(string); !ok {
				return false
			}
		}
		return true
	}
	var out plist
	for _, p := range l {
		if n := len(out); n > 0 && out[n-1].pred == p.pred && terms(out[n-1]) && terms(p) {
			out[n-1].objs = append(out[n-1].objs, p.objs...)
			continue
		}
		out = append(out, prop{p.pred, append([]any(nil), p.objs...)})
	}
	return out
}

// triplesMap writes one triples map as a Turtle statement block.
func (wr *writer) triplesMap(b *strings.Builder, tm *catalog.TriplesMap) error {
	var props plist
	props.add("a", wr.iri(rrTriplesMap))
	table, err := wr.logicalTable(tm.Table)
	if err != nil {
		return err
	}
	props.add(wr.iri(rrLogicalTable), table)
	subject, err := wr.subject(tm)
	if err != nil {
		return err
	}
	props = append(props, subject)
	for _, pom := range tm.PredicateObjects {
		l, err := wr.predicateObjectMap(pom)
		if err != nil {
			return err
		}
		props.add(wr.iri(rrPredicateObjectMap), l)
	}
	b.WriteString(wr.names[tm])
	for i, p := range props.merged() {
		if i > 0 {
			b.WriteString(" ;\n   ")
		}
		b.WriteByte(' ')
		writeProp(b, p, 1)
	}
	b.WriteString(" .\n")
	return nil
}

func (wr *writer) logicalTable(t catalog.LogicalTable) (plist, error) {
	var l plist
	switch {
	case t.Query != "":
		l.add(wr.iri(rrSQLQuery), longString(t.Query))
		for _, v := range t.SQLVersions {
			if !validIRI(string(v)) {
				return nil, fmt.Errorf("rr:sqlVersion %q is not an IRI", string(v))
			}
			l.add(wr.iri(rrSQLVersion), wr.iri(v))
		}
	case t.TableName != "":
		l.add(wr.iri(rrTableName), quote(t.TableName))
	default:
		return nil, errors.New("the logical table has neither a table name nor a query")
	}
	return l, nil
}

// subject writes the subject map with the classes and graph maps, or the
// rr:subject shortcut for a constant subject that has neither.
func (wr *writer) subject(tm *catalog.TriplesMap) (prop, error) {
	m := tm.Subject
	if m.Kind == catalog.Constant && len(tm.Classes) == 0 && len(tm.Graphs) == 0 {
		c, err := wr.term(m.Constant)
		return prop{wr.iri(rrSubject), []any{c}}, err
	}
	l, err := wr.termMap(m, roleSubjectMap)
	if err != nil {
		return prop{}, err
	}
	for _, c := range tm.Classes {
		t, err := wr.term(c)
		if err != nil {
			return prop{}, err
		}
		l.add(wr.iri(rrClass), t)
	}
	if err := wr.graphs(&l, tm.Graphs); err != nil {
		return prop{}, err
	}
	return prop{wr.iri(rrSubjectMap), []any{l}}, nil
}

func (wr *writer) graphs(l *plist, graphs []catalog.TermMap) error {
	for _, g := range graphs {
		if err := wr.shortcut(l, g, rrGraph, rrGraphMap, roleGraphMap); err != nil {
			return err
		}
	}
	return nil
}

// shortcut adds a term map: constants with the shortcut property, others as a
// property list under the long one.
func (wr *writer) shortcut(l *plist, m catalog.TermMap, short, long rdf.IRI, r role) error {
	if m.Kind == catalog.Constant {
		c, err := wr.term(m.Constant)
		l.add(wr.iri(short), c)
		return err
	}
	tl, err := wr.termMap(m, r)
	l.add(wr.iri(long), tl)
	return err
}

func (wr *writer) predicateObjectMap(pom catalog.PredicateObjectMap) (plist, error) {
	var l plist
	for _, p := range pom.Predicates {
		if err := wr.shortcut(&l, p, rrPredicate, rrPredicateMap, rolePredicateMap); err != nil {
			return nil, err
		}
	}
	for _, om := range pom.Objects {
		if om.Ref == nil {
			if err := wr.shortcut(&l, *om.Term, rrObject, rrObjectMap, roleObjectMap); err != nil {
				return nil, err
			}
			continue
		}
		parent, ok := wr.names[om.Ref.Parent]
		if !ok {
			return nil, errors.New("a referencing object map's parent is not a triples map of the catalog")
		}
		var ref plist
		ref.add(wr.iri(rrParentTriplesMap), parent)
		for _, j := range om.Ref.Joins {
			var jl plist
			jl.add(wr.iri(rrChild), quote(j.Child))
			jl.add(wr.iri(rrParent), quote(j.Parent))
			ref.add(wr.iri(rrJoinCondition), jl)
		}
		l.add(wr.iri(rrObjectMap), ref)
	}
	if err := wr.graphs(&l, pom.Graphs); err != nil {
		return nil, err
	}
	return l, nil
}

// termMap writes the properties of a term map in role r, leaving out the term
// type where the loader infers the same one (R2RML §7.4).
func (wr *writer) termMap(m catalog.TermMap, r role) (plist, error) {
	var l plist
	switch m.Kind {
	case catalog.Constant:
		c, err := wr.term(m.Constant)
		if err != nil {
			return nil, err
		}
		l.add(wr.iri(rrConstant), c)
		return l, nil
	case catalog.Column:
		l.add(wr.iri(rrColumn), quote(m.Column))
	case catalog.TemplateMap:
		l.add(wr.iri(rrTemplate), quote(templateString(m.Template)))
	default:
		return nil, errors.New("a term map is neither constant-, column- nor template-valued")
	}
	// A template-valued literal without language is a plain string whether or
	// not it says xsd:string; the loader adds that datatype itself.
	datatype := m.Datatype
	if m.Kind == catalog.TemplateMap && datatype == rdf.XSDString && m.Language == "" {
		datatype = ""
	}
	inferred := rdf.KindIRI
	if r == roleObjectMap && (m.Kind == catalog.Column || m.Language != "" || datatype != "") {
		inferred = rdf.KindLiteral
	}
	if m.TermType != inferred {
		t, ok := map[rdf.Kind]rdf.IRI{rdf.KindIRI: rrIRI, rdf.KindBlank: rrBlankNode, rdf.KindLiteral: rrLiteral}[m.TermType]
		if !ok {
			return nil, fmt.Errorf("a term map has no term type")
		}
		l.add(wr.iri(rrTermType), wr.iri(t))
	}
	if m.Language != "" {
		l.add(wr.iri(rrLanguage), quote(m.Language))
	}
	if datatype != "" {
		if !validIRI(string(datatype)) {
			return nil, fmt.Errorf("datatype %q is not an IRI", string(datatype))
		}
		l.add(wr.iri(rrDatatype), wr.iri(datatype))
	}
	return l, nil
}

// term writes a constant: an IRI, or a literal with its language or datatype.
func (wr *writer) term(t rdf.Term) (string, error) {
	switch t := t.(type) {
	case rdf.IRI:
		if !validIRI(string(t)) {
			return "", fmt.Errorf("constant %q is not an IRI", string(t))
		}
		return wr.iri(t), nil
	case rdf.Literal:
		s := quote(t.Lexical)
		switch {
		case t.Lang != "":
			return s + "@" + t.Lang, nil
		case t.Datatype != "" && t.Datatype != rdf.XSDString:
			if !validIRI(string(t.Datatype)) {
				return "", fmt.Errorf("datatype %q is not an IRI", string(t.Datatype))
			}
			return s + "^^" + wr.iri(t.Datatype), nil
		}
		return s, nil
	}
	return "", fmt.Errorf("%v cannot be a constant of a mapping", t)
}

// iri writes an IRI as a prefixed name where a prefix fits (the longest
// namespace wins), else relative to the document's base where that reads back
// as the same IRI, else in full.
func (wr *writer) iri(i rdf.IRI) string {
	best := -1
	for k, p := range wr.prefixes {
		rest, ok := strings.CutPrefix(string(i), string(p.IRI))
		if ok && rdf.IsLocalName(rest) && (best < 0 || len(p.IRI) > len(wr.prefixes[best].IRI)) {
			best = k
		}
	}
	if best >= 0 {
		p := wr.prefixes[best]
		wr.used[p.Name] = true
		return p.Name + ":" + strings.TrimPrefix(string(i), string(p.IRI))
	}
	if rest, ok := strings.CutPrefix(string(i), wr.base); ok && wr.base != "" && rest != "" {
		if back, err := rdf.ResolveIRI(wr.base, rest); err == nil && back == string(i) {
			return rdf.IRI(rest).String()
		}
	}
	return i.String()
}

// templateString writes a template as rr:template spells it (R2RML §7.4),
// with '{', '}' and '\' escaped in its text and column names.
func templateString(t catalog.Template) string {
	esc := strings.NewReplacer(`\`, `\\`, "{", `\{`, "}", `\}`)
	var b strings.Builder
	for _, p := range t.Parts {
		if p.Column != "" {
			b.WriteString("{" + esc.Replace(p.Column) + "}")
		} else {
			b.WriteString(esc.Replace(p.Text))
		}
	}
	return b.String()
}

// quote writes s as a one-line Turtle string. Mappings are full of SQL's
// double-quoted identifiers, so a string with double quotes and no single
// quote goes between single quotes, where a double quote needs no escape.
func quote(s string) string {
	escaped := rdf.EscapeString(s)
	if strings.Contains(s, `"`) && !strings.Contains(s, "'") {
		return "'" + strings.ReplaceAll(escaped, `\"`, `"`) + "'"
	}
	return `"` + escaped + `"`
}

// longString writes an SQL query as a Turtle long string, on lines of its own,
// which the loader trims again; a query that a long string cannot hold as it
// is (it has `"""`, or a carriage return an editor might drop) is written as a
// one-line string.
func longString(s string) string {
	if strings.Contains(s, `"""`) || strings.ContainsRune(s, '\r') {
		return quote(s)
	}
	return "\"\"\"\n        " + strings.ReplaceAll(s, `\`, `\\`) + "\n        \"\"\""
}

// writeProp writes a predicate and its objects at the given nesting depth.
func writeProp(b *strings.Builder, p prop, depth int) {
	b.WriteString(p.pred)
	for i, o := range p.objs {
		if i > 0 {
			b.WriteByte(',')
		}
		b.WriteByte(' ')
		switch o := o.(type) {
		case string:
			b.WriteString(o)
		case plist:
			writeList(b, o, depth)
		}
	}
}

// maxLine is the width, in characters, up to which a property list stays on
// the line it starts on.
const maxLine = 100

// writeList writes a nested property list, on one line when it fits and
// holds no query, else one property a line.
func writeList(b *strings.Builder, l plist, depth int) {
	var line strings.Builder
	l = l.merged()
	line.WriteString("[ ")
	for i, p := range l {
		if i > 0 {
			line.WriteString(" ; ")
		}
		writeProp(&line, p, depth+1)
	}
	line.WriteString(" ]")
	sofar := b.String()
	col := utf8.RuneCountInString(sofar[strings.LastIndexByte(sofar, '\n')+1:])
	// The 2 leaves room for the " ;" or " ." that may follow.
	if s := line.String(); !strings.Contains(s, "\n") && col+utf8.RuneCountInString(s)+2 <= maxLine {
		b.WriteString(s)
		return
	}
	indent := strings.Repeat("    ", depth+1)
	b.WriteString("[")
	for i, p := range l {
		if i > 0 {
			b.WriteString(" ;")
		}
		b.WriteString("\n" + indent)
		writeProp(b, p, depth+1)
	}
	b.WriteString("\n" + strings.Repeat("    ", depth) + "]")
}
