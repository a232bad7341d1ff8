package results

import (
	"io"

	"veneer/catalog/rdf"
)

// NewJSONLD returns a writer of JSON-LD 1.1 in expanded document form
// (application/ld+json): an array of node objects, with full IRIs and no
// context. The flattened form would need every triple of a node before the
// node can be written, which a stream cannot give; expanded form can be
// written triple by triple. Consecutive triples with the same subject go into
// one node object, and with the same predicate into one array. When a
// predicate comes back after another one, a new node object with the same
// "@id" starts; JSON-LD takes node objects with the same "@id" for one node
// (its flattening and to-RDF algorithms merge them).
//
// Terms are written as the "Serialize RDF as JSON-LD" algorithm of JSON-LD 1.1
// Processing Algorithms and API writes them with useNativeTypes and useRdfType
// false: rdf:type with an IRI or blank node object goes into
// "@type"; literals keep their lexical form as "@value", with "@language" or
// "@type" (no "@type" for xsd:string); blank nodes are "_:label".
func NewJSONLD(w io.Writer) GraphWriter {
	return newGraphWriter(w, "JSON-LD", &jsonldEncoder{seen: map[string]bool{}})
}

// jsonldEncoder writes node objects, keeping the last one open.
type jsonldEncoder struct {
	// subject of the open node object; nil before the first triple.
	subject rdf.Term
	// key is the member of the open node object whose array is open:
	// "@type" or a predicate IRI.
	key string
	// seen holds the keys the open node object has had.
	seen map[string]bool
}

func (e *jsonldEncoder) begin(dst []byte) ([]byte, error) { return append(dst, '['), nil }

func (e *jsonldEncoder) triple(dst []byte, t rdf.Triple) ([]byte, error) {
	key := string(t.P.(rdf.IRI))
	if t.P == rdf.RDFType && t.O.Kind() != rdf.KindLiteral {
		key = "@type"
	}
	var err error
	switch {
	case e.subject == t.S && e.key == key:
		dst = append(dst, ',')
	case e.subject == t.S && !e.seen[key]:
		dst = append(dst, "],"...)
		if dst, err = appendJSONString(dst, key); err != nil {
			return dst, err
		}
		dst = append(dst, ":["...)
	default:
		if e.subject != nil {
			dst = append(dst, "]},"...)
		}
		dst = append(dst, "\n{\"@id\":"...)
		if dst, err = appendJSONLDNode(dst, t.S); err != nil {
			return dst, err
		}
		dst = append(dst, ',')
		if dst, err = appendJSONString(dst, key); err != nil {
			return dst, err
		}
		dst = append(dst, ":["...)
		clear(e.seen)
	}
	if key == "@type" {
		dst, err = appendJSONLDNode(dst, t.O)
	} else {
		dst, err = appendJSONLDObject(dst, t.O)
	}
	if err != nil {
		return dst, err
	}
	e.subject, e.key = t.S, key
	e.seen[key] = true
	return dst, nil
}

func (e *jsonldEncoder) end(dst []byte) []byte {
	if e.subject != nil {
		dst = append(dst, "]}"...)
	}
	return append(dst, "\n]\n"...)
}

// appendJSONLDNode writes an IRI, or a blank node as "_:label", as a JSON string.
func appendJSONLDNode(dst []byte, t rdf.Term) ([]byte, error) {
	dst = append(dst, '"')
	var err error
	switch t := t.(type) {
	case rdf.IRI:
		dst, err = appendJSONEscaped(dst, string(t))
	case rdf.BlankNode:
		dst = append(dst, "_:"...)
		dst, err = appendJSONEscaped(dst, string(t))
	}
	return append(dst, '"'), err
}

// appendJSONLDObject writes the object of a triple as a node reference
// {"@id": ...} or a value object {"@value": ..., "@language"|"@type": ...}.
func appendJSONLDObject(dst []byte, t rdf.Term) ([]byte, error) {
	l, ok := t.(rdf.Literal)
	if !ok {
		dst = append(dst, `{"@id":`...)
		dst, err := appendJSONLDNode(dst, t)
		return append(dst, '}'), err
	}
	dst = append(dst, `{"@value":`...)
	dst, err := appendJSONString(dst, l.Lexical)
	if err != nil {
		return dst, err
	}
	switch {
	case l.Lang != "":
		dst = append(dst, `,"@language":`...)
		dst, err = appendJSONString(dst, l.Lang)
	case l.Datatype != "" && l.Datatype != rdf.XSDString:
		dst = append(dst, `,"@type":`...)
		dst, err = appendJSONString(dst, string(l.Datatype))
	}
	return append(dst, '}'), err
}
