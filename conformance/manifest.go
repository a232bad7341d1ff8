package conformance

import (
	"fmt"
	"net/url"
	"os"
	"path/filepath"
	"strings"

	"veneer/catalog/rdf"
)

// Manifest is a test manifest: a Turtle document describing tests as
// resources with properties. The suites' vocabularies differ (the RDB2RDF
// tests type each test and give its files as literals; the SPARQL and RDF
// suites list tests in an mf:entries collection and give files as IRIs), so a
// Manifest offers the graph and lets each suite read its own terms.
type Manifest struct {
	// Path is the manifest's file.
	Path string
	// Dir is the directory the manifest's relative file names start from.
	Dir     string
	order   []rdf.Term
	props   map[rdf.Term]map[rdf.IRI][]rdf.Term
	firstAt map[rdf.Term]rdf.Pos
}

// ReadManifest reads a manifest in Turtle. Relative IRIs in it resolve against
// the file: IRI of the manifest, so that File can turn them back into paths.
func ReadManifest(path string) (*Manifest, error) {
	src, err := os.ReadFile(path)
	if err != nil {
		return nil, fmt.Errorf("reading the manifest: %w", err)
	}
	base, err := fileIRI(path)
	if err != nil {
		return nil, fmt.Errorf("reading the manifest: %w", err)
	}
	doc, err := rdf.ParseTurtle(path, src, base)
	if err != nil {
		return nil, fmt.Errorf("reading the manifest: %w", err)
	}
	m := &Manifest{
		Path:    path,
		Dir:     filepath.Dir(path),
		props:   map[rdf.Term]map[rdf.IRI][]rdf.Term{},
		firstAt: map[rdf.Term]rdf.Pos{},
	}
	for _, st := range doc.Statements {
		p, ok := st.P.(rdf.IRI)
		if !ok {
			continue
		}
		byPred := m.props[st.S]
		if byPred == nil {
			byPred = map[rdf.IRI][]rdf.Term{}
			m.props[st.S] = byPred
			m.order = append(m.order, st.S)
			m.firstAt[st.S] = st.SubjectPos
		}
		byPred[p] = append(byPred[p], st.O)
	}
	return m, nil
}

// Errorf makes an error about a resource of the manifest, placed at the first
// statement about it.
func (m *Manifest) Errorf(subject rdf.Term, format string, args ...any) error {
	pos, ok := m.firstAt[subject]
	where := m.Path
	if ok {
		where = fmt.Sprintf("%s:%d:%d", m.Path, pos.Line, pos.Col)
	}
	return fmt.Errorf("%s: %s: %s", where, subject, fmt.Sprintf(format, args...))
}

// OfType returns the resources with rdf:type class, in the order the document
// first mentions them.
func (m *Manifest) OfType(class rdf.IRI) []rdf.Term {
	var out []rdf.Term
	for _, s := range m.order {
		for _, t := range m.props[s][rdf.RDFType] {
			if t == rdf.Term(class) {
				out = append(out, s)
				break
			}
		}
	}
	return out
}

// Objects returns the objects of subject's statements with predicate p, in
// document order.
func (m *Manifest) Objects(subject rdf.Term, p rdf.IRI) []rdf.Term {
	return m.props[subject][p]
}

// Object returns the one object of subject with predicate p, an error if there
// are several, and nil without error if there is none.
func (m *Manifest) Object(subject rdf.Term, p rdf.IRI) (rdf.Term, error) {
	objs := m.Objects(subject, p)
	switch len(objs) {
	case 0:
		return nil, nil
	case 1:
		return objs[0], nil
	}
	return nil, m.Errorf(subject, "has %d values for %s, want one", len(objs), p)
}

// String returns the lexical form of the one literal object of subject with
// predicate p; its absence is an error.
func (m *Manifest) String(subject rdf.Term, p rdf.IRI) (string, error) {
	o, err := m.Object(subject, p)
	if err != nil {
		return "", err
	}
	lit, ok := o.(rdf.Literal)
	if !ok {
		if o == nil {
			return "", m.Errorf(subject, "has no %s", p)
		}
		return "", m.Errorf(subject, "%s is %s, not a literal", p, o)
	}
	return lit.Lexical, nil
}

// Bool returns the one xsd:boolean object of subject with predicate p.
func (m *Manifest) Bool(subject rdf.Term, p rdf.IRI) (bool, error) {
	o, err := m.Object(subject, p)
	if err != nil {
		return false, err
	}
	lit, ok := o.(rdf.Literal)
	if !ok || lit.Datatype != rdf.XSDBoolean {
		if o == nil {
			return false, m.Errorf(subject, "has no %s", p)
		}
		return false, m.Errorf(subject, "%s is %s, not an xsd:boolean", p, o)
	}
	switch lit.Lexical {
	case "true", "1":
		return true, nil
	case "false", "0":
		return false, nil
	}
	return false, m.Errorf(subject, "%s is %s, not a valid xsd:boolean", p, o)
}

// File returns the path of the file that the one object of subject with
// predicate p names: a literal is a file name relative to the manifest's
// directory, an IRI a file: IRI.
func (m *Manifest) File(subject rdf.Term, p rdf.IRI) (string, error) {
	o, err := m.Object(subject, p)
	if err != nil {
		return "", err
	}
	switch o := o.(type) {
	case rdf.Literal:
		if !filepath.IsLocal(filepath.FromSlash(o.Lexical)) {
			return "", m.Errorf(subject, "%s %s is not a file name inside the suite", p, o)
		}
		return filepath.Join(m.Dir, filepath.FromSlash(o.Lexical)), nil
	case rdf.IRI:
		u, err := url.Parse(string(o))
		if err != nil || u.Scheme != "file" {
			return "", m.Errorf(subject, "%s %s is not a file: IRI", p, o)
		}
		return filepath.FromSlash(u.Path), nil
	case nil:
		return "", m.Errorf(subject, "has no %s", p)
	}
	return "", m.Errorf(subject, "%s is %s, not a file name", p, o)
}

// List returns the members of the RDF collection that starts at head
// (rdf:first / rdf:rest, ending in rdf:nil), as manifests use for mf:entries.
func (m *Manifest) List(head rdf.Term) ([]rdf.Term, error) {
	var out []rdf.Term
	seen := map[rdf.Term]bool{}
	for n := head; n != rdf.Term(rdf.RDFNil); {
		if seen[n] {
			return nil, m.Errorf(head, "the collection loops back on %s", n)
		}
		seen[n] = true
		first, err := m.Object(n, rdf.RDFFirst)
		if err != nil {
			return nil, err
		}
		rest, err := m.Object(n, rdf.RDFRest)
		if err != nil {
			return nil, err
		}
		if first == nil || rest == nil {
			return nil, m.Errorf(n, "is not a collection node (needs rdf:first and rdf:rest)")
		}
		out = append(out, first)
		n = rest
	}
	return out, nil
}

// Entries returns the tests the manifest lists, in order: the members of the
// mf:entries collection of its one mf:Manifest, which it returns too.
func (m *Manifest) Entries() (rdf.Term, []rdf.Term, error) {
	manifests := m.OfType(mfManifest)
	if len(manifests) != 1 {
		return nil, nil, fmt.Errorf("%s: %d resources of type mf:Manifest, want one", m.Path, len(manifests))
	}
	head, err := m.Object(manifests[0], mfEntries)
	if err != nil {
		return nil, nil, err
	}
	if head == nil {
		return nil, nil, m.Errorf(manifests[0], "has no mf:entries")
	}
	entries, err := m.List(head)
	return manifests[0], entries, err
}

// Name returns a test's name: the fragment of its IRI, which the SPARQL and
// RDF suites' manifests give every test.
func (m *Manifest) Name(test rdf.Term) (string, error) {
	iri, ok := test.(rdf.IRI)
	_, name, hasName := strings.Cut(string(iri), "#")
	if !ok || !hasName || name == "" {
		return "", m.Errorf(test, "is not a test IRI with a name after '#'")
	}
	return name, nil
}

// Kind returns the local name of a test's one rdf:type in the vocabulary ns:
// the rest of the type's IRI after ns. A type outside ns is an error.
func (m *Manifest) Kind(test rdf.Term, ns string) (string, error) {
	ty, err := m.Object(test, rdf.RDFType)
	if err != nil {
		return "", err
	}
	iri, _ := ty.(rdf.IRI)
	kind, ok := strings.CutPrefix(string(iri), ns)
	if !ok || kind == "" {
		return "", m.Errorf(test, "has the type %v, which is not a type of test of <%s>", ty, ns)
	}
	return kind, nil
}
