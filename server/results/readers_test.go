package results

// Readers of the result formats, for the tests only: they turn the W3C
// suites' expected files, and the writers' output, back into solutions and
// triples. They are written from the format specifications, independently of
// the writers, and are stricter than a reader has to be where strictness
// catches writer mistakes (unknown JSON members, bindings of undeclared
// variables).

import (
	"bytes"
	"encoding/json"
	"encoding/xml"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"veneer/catalog/rdf"
)

// table is a result read back: either solutions (vars and rows) or a boolean.
type table struct {
	vars    []string
	rows    [][]rdf.Term
	boolean *bool
}

// srxDoc is the SPARQL Query Results XML Format document, as encoding/xml reads it.
type srxDoc struct {
	XMLName xml.Name `xml:"http://www.w3.org/2005/sparql-results# sparql"`
	Vars    []struct {
		Name string `xml:"name,attr"`
	} `xml:"head>variable"`
	Boolean *bool `xml:"boolean"`
	Results []struct {
		Bindings []struct {
			Name    string  `xml:"name,attr"`
			URI     *string `xml:"uri"`
			BNode   *string `xml:"bnode"`
			Literal *struct {
				Lang     string `xml:"http://www.w3.org/XML/1998/namespace lang,attr"`
				Datatype string `xml:"datatype,attr"`
				Value    string `xml:",chardata"`
			} `xml:"literal"`
		} `xml:"binding"`
	} `xml:"results>result"`
}

// readSRX reads a SPARQL Query Results XML Format document.
func readSRX(src []byte) (table, error) {
	var doc srxDoc
	if err := xml.Unmarshal(src, &doc); err != nil {
		return table{}, err
	}
	t := table{boolean: doc.Boolean}
	for _, v := range doc.Vars {
		t.vars = append(t.vars, v.Name)
	}
	for i, res := range doc.Results {
		row := make([]rdf.Term, len(t.vars))
		for _, b := range res.Bindings {
			j := indexOf(t.vars, b.Name)
			if j < 0 {
				return t, fmt.Errorf("result %d binds undeclared variable %q", i+1, b.Name)
			}
			if row[j] != nil {
				return t, fmt.Errorf("result %d binds %q twice", i+1, b.Name)
			}
			switch {
			case b.URI != nil:
				row[j] = rdf.IRI(*b.URI)
			case b.BNode != nil:
				row[j] = rdf.BlankNode(*b.BNode)
			case b.Literal != nil:
				row[j] = makeLiteral(b.Literal.Value, b.Literal.Lang, b.Literal.Datatype)
			default:
				return t, fmt.Errorf("result %d: binding %q has no term", i+1, b.Name)
			}
		}
		t.rows = append(t.rows, row)
	}
	return t, nil
}

// srjDoc is the SPARQL 1.1 Query Results JSON Format document.
type srjDoc struct {
	Head struct {
		Vars []string `json:"vars"`
		Link []string `json:"link"`
	} `json:"head"`
	Boolean *bool `json:"boolean"`
	Results *struct {
		Bindings []map[string]srjTerm `json:"bindings"`
	} `json:"results"`
}

type srjTerm struct {
	Type     string `json:"type"`
	Value    string `json:"value"`
	Lang     string `json:"xml:lang"`
	Datatype string `json:"datatype"`
}

// readSRJ reads a SPARQL 1.1 Query Results JSON Format document, refusing
// members the format does not define.
func readSRJ(src []byte) (table, error) {
	dec := json.NewDecoder(bytes.NewReader(src))
	dec.DisallowUnknownFields()
	var doc srjDoc
	if err := dec.Decode(&doc); err != nil {
		return table{}, err
	}
	if dec.More() {
		return table{}, fmt.Errorf("data after the results object")
	}
	t := table{vars: doc.Head.Vars, boolean: doc.Boolean}
	if doc.Results == nil {
		if doc.Boolean == nil {
			return t, fmt.Errorf(`neither "results" nor "boolean"`)
		}
		return t, nil
	}
	for i, b := range doc.Results.Bindings {
		row := make([]rdf.Term, len(t.vars))
		for name, term := range b {
			j := indexOf(t.vars, name)
			if j < 0 {
				return t, fmt.Errorf("binding %d has undeclared variable %q", i+1, name)
			}
			switch term.Type {
			case "uri":
				row[j] = rdf.IRI(term.Value)
			case "bnode":
				row[j] = rdf.BlankNode(term.Value)
			case "literal", "typed-literal":
				row[j] = makeLiteral(term.Value, term.Lang, term.Datatype)
			default:
				return t, fmt.Errorf("binding %d: %q has type %q", i+1, name, term.Type)
			}
		}
		t.rows = append(t.rows, row)
	}
	return t, nil
}

func makeLiteral(value, lang, datatype string) rdf.Literal {
	switch {
	case lang != "":
		return rdf.NewLangString(value, lang)
	case datatype != "":
		return rdf.NewTyped(value, rdf.IRI(datatype))
	}
	return rdf.NewString(value)
}

// readTSV reads the TSV format of SPARQL 1.1 Query Results CSV and TSV
// Formats. Each cell is a Turtle term; it is read by catalog/rdf's Turtle
// reader as the object of a made-up triple.
func readTSV(src []byte) (table, error) {
	text := string(src)
	if !strings.HasSuffix(text, "\n") {
		return table{}, fmt.Errorf("last line does not end in a line feed")
	}
	lines := strings.Split(strings.TrimSuffix(text, "\n"), "\n")
	var t table
	for _, v := range strings.Split(lines[0], "\t") {
		if lines[0] == "" {
			break // no variables
		}
		name, ok := strings.CutPrefix(v, "?")
		if !ok {
			return t, fmt.Errorf("header %q: variable without '?'", v)
		}
		t.vars = append(t.vars, name)
	}
	for i, line := range lines[1:] {
		cells := strings.Split(line, "\t")
		if len(t.vars) == 0 && line == "" {
			cells = nil
		}
		if len(cells) != len(t.vars) {
			return t, fmt.Errorf("line %d has %d cells for %d variables", i+2, len(cells), len(t.vars))
		}
		row := make([]rdf.Term, len(cells))
		for j, c := range cells {
			if c == "" {
				continue
			}
			term, err := readTurtleTerm(c)
			if err != nil {
				return t, fmt.Errorf("line %d cell %d: %w", i+2, j+1, err)
			}
			row[j] = term
		}
		t.rows = append(t.rows, row)
	}
	return t, nil
}

func readTurtleTerm(s string) (rdf.Term, error) {
	doc, err := rdf.ParseTurtle("cell", []byte("<urn:x:s> <urn:x:p> "+s+" ."), "")
	if err != nil {
		return nil, err
	}
	if len(doc.Statements) != 1 {
		return nil, fmt.Errorf("%q is not one term", s)
	}
	return doc.Statements[0].O, nil
}

// readJSONLD reads JSON-LD in the expanded form NewJSONLD writes (an array
// of node objects with "@id", "@type" and properties whose values are node
// references or value objects) into triples, in document order.
func readJSONLD(src []byte) ([]rdf.Triple, error) {
	if !json.Valid(src) {
		return nil, fmt.Errorf("not valid JSON")
	}
	// Member order matters for the comparison with the input, so the node
	// objects are read as token streams.
	dec := json.NewDecoder(bytes.NewReader(src))
	dec.DisallowUnknownFields()
	var ts []rdf.Triple
	if tok, err := dec.Token(); err != nil || tok != json.Delim('[') {
		return nil, fmt.Errorf("document does not start with an array: %v %v", tok, err)
	}
	for dec.More() {
		if tok, err := dec.Token(); err != nil || tok != json.Delim('{') {
			return nil, fmt.Errorf("array member is not a node object: %v %v", tok, err)
		}
		var subject rdf.Term
		for dec.More() {
			tok, err := dec.Token()
			if err != nil {
				return nil, err
			}
			key := tok.(string)
			switch key {
			case "@id":
				var id string
				if err := dec.Decode(&id); err != nil {
					return nil, err
				}
				subject = jsonldNode(id)
			case "@type":
				var types []string
				if err := dec.Decode(&types); err != nil {
					return nil, err
				}
				for _, ty := range types {
					ts = append(ts, rdf.Triple{S: subject, P: rdf.RDFType, O: jsonldNode(ty)})
				}
			default:
				var values []struct {
					ID       *string `json:"@id"`
					Value    *string `json:"@value"`
					Language string  `json:"@language"`
					Type     string  `json:"@type"`
				}
				if err := dec.Decode(&values); err != nil {
					return nil, fmt.Errorf("property %s: %w", key, err)
				}
				for _, v := range values {
					var o rdf.Term
					switch {
					case v.ID != nil:
						o = jsonldNode(*v.ID)
					case v.Value != nil:
						o = makeLiteral(*v.Value, v.Language, v.Type)
					default:
						return nil, fmt.Errorf("property %s: value with neither @id nor @value", key)
					}
					ts = append(ts, rdf.Triple{S: subject, P: rdf.IRI(key), O: o})
				}
			}
			if subject == nil {
				return nil, fmt.Errorf("node object does not start with @id")
			}
		}
		if _, err := dec.Token(); err != nil { // }
			return nil, err
		}
	}
	return ts, nil
}

func jsonldNode(id string) rdf.Term {
	if label, ok := strings.CutPrefix(id, "_:"); ok {
		return rdf.BlankNode(label)
	}
	return rdf.IRI(id)
}

func indexOf(list []string, s string) int {
	for i, x := range list {
		if x == s {
			return i
		}
	}
	return -1
}

// bnodeMap checks that blank nodes correspond one to one between two texts
// of the same result (labels are local to a document, RDF 1.1 Concepts §3.4).
type bnodeMap struct {
	fwd, back map[rdf.BlankNode]rdf.BlankNode
}

// same reports whether a and b are the same term, pairing blank nodes.
func (m *bnodeMap) same(a, b rdf.Term) bool {
	ba, aok := a.(rdf.BlankNode)
	bb, bok := b.(rdf.BlankNode)
	if !aok || !bok {
		return rdf.SameTerm(a, b)
	}
	if m.fwd == nil {
		m.fwd, m.back = map[rdf.BlankNode]rdf.BlankNode{}, map[rdf.BlankNode]rdf.BlankNode{}
	}
	if x, ok := m.fwd[ba]; ok {
		return x == bb
	}
	if _, ok := m.back[bb]; ok {
		return false
	}
	m.fwd[ba], m.back[bb] = bb, ba
	return true
}

// diffTables describes the first difference between two tables; relabel
// allows blank nodes to be renamed consistently.
func diffTables(want, got table, relabel bool) string {
	if fmt.Sprint(want.vars) != fmt.Sprint(got.vars) {
		return fmt.Sprintf("vars %v, want %v", got.vars, want.vars)
	}
	if (want.boolean == nil) != (got.boolean == nil) || want.boolean != nil && *want.boolean != *got.boolean {
		return fmt.Sprintf("boolean %v, want %v", fmtBool(got.boolean), fmtBool(want.boolean))
	}
	if len(want.rows) != len(got.rows) {
		return fmt.Sprintf("%d rows, want %d", len(got.rows), len(want.rows))
	}
	var m bnodeMap
	for i := range want.rows {
		for j := range want.rows[i] {
			w, g := want.rows[i][j], got.rows[i][j]
			same := rdf.SameTerm(w, g)
			if relabel && w != nil && g != nil {
				same = m.same(w, g)
			}
			if !same {
				return fmt.Sprintf("row %d ?%s = %v, want %v", i+1, want.vars[j], g, w)
			}
		}
	}
	return ""
}

func fmtBool(b *bool) string {
	if b == nil {
		return "none"
	}
	return fmt.Sprint(*b)
}

// diffTriples describes the first difference between two triple sequences,
// pairing blank nodes one to one.
func diffTriples(want, got []rdf.Triple) string {
	if len(want) != len(got) {
		return fmt.Sprintf("%d triples, want %d", len(got), len(want))
	}
	var m bnodeMap
	for i := range want {
		w, g := want[i], got[i]
		if !m.same(w.S, g.S) || !m.same(w.P, g.P) || !m.same(w.O, g.O) {
			return fmt.Sprintf("triple %d is %v %v %v, want %v %v %v", i+1, g.S, g.P, g.O, w.S, w.P, w.O)
		}
	}
	return ""
}

// manifestEntry is a test of a W3C manifest: its identifier (the fragment of
// its IRI), type, and the files its mf:action and mf:result name.
type manifestEntry struct {
	id             string
	typ            rdf.IRI
	action, result string
}

const mfNS = "http://www.w3.org/2001/sw/DataAccess/tests/test-manifest#"

// readManifest reads the manifest.ttl of dir with catalog/rdf's Turtle reader.
func readManifest(t *testing.T, dir string) []manifestEntry {
	t.Helper()
	path := filepath.Join(dir, "manifest.ttl")
	src, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	abs, err := filepath.Abs(dir)
	if err != nil {
		t.Fatal(err)
	}
	base := "file://" + filepath.ToSlash(abs) + "/manifest.ttl"
	doc, err := rdf.ParseTurtle(path, src, base)
	if err != nil {
		t.Fatalf("reading manifest: %v", err)
	}
	file := func(o rdf.Term) string {
		iri, ok := o.(rdf.IRI)
		if !ok {
			return ""
		}
		p, ok := strings.CutPrefix(string(iri), "file://")
		if !ok {
			return ""
		}
		return filepath.FromSlash(p)
	}
	var entries []manifestEntry
	index := map[rdf.Term]int{}
	for _, s := range doc.Statements {
		iri, ok := s.S.(rdf.IRI)
		if !ok || !strings.Contains(string(iri), "#") {
			continue
		}
		i, seen := index[s.S]
		if !seen {
			_, id, _ := strings.Cut(string(iri), "#")
			entries = append(entries, manifestEntry{id: id})
			i = len(entries) - 1
			index[s.S] = i
		}
		switch s.P {
		case rdf.RDFType:
			entries[i].typ, _ = s.O.(rdf.IRI)
		case rdf.IRI(mfNS + "action"):
			entries[i].action = file(s.O)
		case rdf.IRI(mfNS + "result"):
			entries[i].result = file(s.O)
		}
	}
	return entries
}
