package conformance

import (
	"bytes"
	"encoding/xml"
	"errors"
	"fmt"
	"io"
	"strings"

	"veneer/catalog/rdf"
)

// parseRDFXML reads the part of RDF 1.1 XML Syntax (W3C Recommendation, 2014)
// that the SPARQL 1.0 suite's expected results written in RDF/XML use (the
// rs:ResultSet files of sparql10/sort): node elements (§2.2) with rdf:about,
// rdf:nodeID or neither, typed node elements (§2.13), property attributes
// (§2.5), and property elements whose object is an rdf:resource, an
// rdf:nodeID, a nested node element, rdf:parseType="Resource" (§2.11) or a
// literal with rdf:datatype (§2.9) or xml:lang (§2.7). Anything else (other
// parse types, rdf:ID, xml:base, containers) is an error that says where it is,
// rather than a graph read wrongly. Relative IRIs resolve against base.
func parseRDFXML(name string, src []byte, base string) ([]rdf.Triple, error) {
	r := &rdfxmlReader{dec: xml.NewDecoder(bytes.NewReader(src)), name: name, base: base}
	start, err := r.nextStart()
	if err != nil {
		return nil, err
	}
	if start == nil {
		return nil, r.errorf("no element")
	}
	if start.Name.Space == rdf.RDFNS && start.Name.Local == "RDF" {
		for {
			el, err := r.nextStart()
			if err != nil {
				return nil, err
			}
			if el == nil {
				break
			}
			if _, err := r.node(*el, ""); err != nil {
				return nil, err
			}
		}
	} else if _, err := r.node(*start, ""); err != nil {
		return nil, err
	}
	return r.triples, nil
}

type rdfxmlReader struct {
	dec     *xml.Decoder
	name    string
	base    string
	triples []rdf.Triple
	blanks  int
}

const xmlNS = "http://www.w3.org/XML/1998/namespace"

func (r *rdfxmlReader) errorf(format string, args ...any) error {
	line, col := r.dec.InputPos()
	return fmt.Errorf("%s:%d:%d: %s", r.name, line, col, fmt.Sprintf(format, args...))
}

// nextStart returns the next start element at this level, or nil at the end
// of the enclosing element (or the document); text between elements must be
// white space.
func (r *rdfxmlReader) nextStart() (*xml.StartElement, error) {
	for {
		tok, err := r.dec.Token()
		if errors.Is(err, io.EOF) {
			return nil, nil
		}
		if err != nil {
			return nil, fmt.Errorf("%s: %w", r.name, err)
		}
		switch t := tok.(type) {
		case xml.StartElement:
			return &t, nil
		case xml.EndElement:
			return nil, nil
		case xml.CharData:
			if len(bytes.TrimSpace(t)) > 0 {
				return nil, r.errorf("text %q where an element belongs", strings.TrimSpace(string(t)))
			}
		}
	}
}

func (r *rdfxmlReader) fresh() rdf.BlankNode {
	r.blanks++
	return rdf.BlankNode(fmt.Sprintf("x%d", r.blanks))
}

func (r *rdfxmlReader) iri(ref string) (rdf.IRI, error) {
	s, err := rdf.ResolveIRI(r.base, ref)
	if err != nil {
		return "", r.errorf("IRI %q: %v", ref, err)
	}
	return rdf.IRI(s), nil
}

// node reads a node element whose start tag is el and returns its subject.
// lang is the xml:lang in scope.
//
//	nodeElement ::= start-element(URI == nodeElementURIs,
//	                  attributes == set((idAttr | nodeIdAttr | aboutAttr)?, propertyAttr*))
//	                propertyEltList end-element()
func (r *rdfxmlReader) node(el xml.StartElement, lang string) (rdf.Term, error) {
	var subject rdf.Term
	var props []xml.Attr
	for _, a := range el.Attr {
		switch {
		case a.Name.Space == rdf.RDFNS && a.Name.Local == "about":
			iri, err := r.iri(a.Value)
			if err != nil {
				return nil, err
			}
			subject = iri
		case a.Name.Space == rdf.RDFNS && a.Name.Local == "nodeID":
			subject = rdf.BlankNode("n" + a.Value)
		case a.Name.Space == xmlNS && a.Name.Local == "lang":
			lang = a.Value
		case a.Name.Space == rdf.RDFNS || a.Name.Space == xmlNS:
			return nil, r.errorf("attribute %s:%s is not read here", a.Name.Space, a.Name.Local)
		case a.Name.Space == "" && a.Name.Local == "xmlns", a.Name.Space == "xmlns":
		default:
			props = append(props, a)
		}
	}
	if subject == nil {
		subject = r.fresh()
	}
	if el.Name.Space != rdf.RDFNS || el.Name.Local != "Description" {
		r.triples = append(r.triples, rdf.Triple{S: subject, P: rdf.RDFType, O: rdf.IRI(el.Name.Space + el.Name.Local)})
	}
	for _, a := range props {
		r.triples = append(r.triples, rdf.Triple{S: subject, P: rdf.IRI(a.Name.Space + a.Name.Local), O: literal(a.Value, "", lang)})
	}
	return subject, r.properties(subject, lang)
}

// properties reads property elements up to the end of the enclosing element.
func (r *rdfxmlReader) properties(subject rdf.Term, lang string) error {
	for {
		el, err := r.nextStart()
		if err != nil || el == nil {
			return err
		}
		if err := r.property(subject, *el, lang); err != nil {
			return err
		}
	}
}

// property reads one property element of subject.
//
//	propertyElt ::= resourcePropertyElt | literalPropertyElt |
//	                parseTypeResourcePropertyElt | emptyPropertyElt
func (r *rdfxmlReader) property(subject rdf.Term, el xml.StartElement, lang string) error {
	pred := rdf.IRI(el.Name.Space + el.Name.Local)
	if el.Name.Space == rdf.RDFNS && (el.Name.Local == "li" || strings.HasPrefix(el.Name.Local, "_")) {
		return r.errorf("container membership property rdf:%s is not read here", el.Name.Local)
	}
	var object rdf.Term
	datatype, parseType := "", ""
	for _, a := range el.Attr {
		switch {
		case a.Name.Space == rdf.RDFNS && a.Name.Local == "resource":
			iri, err := r.iri(a.Value)
			if err != nil {
				return err
			}
			object = iri
		case a.Name.Space == rdf.RDFNS && a.Name.Local == "nodeID":
			object = rdf.BlankNode("n" + a.Value)
		case a.Name.Space == rdf.RDFNS && a.Name.Local == "datatype":
			iri, err := r.iri(a.Value)
			if err != nil {
				return err
			}
			datatype = string(iri)
		case a.Name.Space == rdf.RDFNS && a.Name.Local == "parseType":
			parseType = a.Value
		case a.Name.Space == xmlNS && a.Name.Local == "lang":
			lang = a.Value
		case a.Name.Space == "xmlns" || a.Name.Space == "" && a.Name.Local == "xmlns":
		default:
			return r.errorf("attribute %s:%s on a property element is not read here", a.Name.Space, a.Name.Local)
		}
	}
	switch {
	case parseType == "Resource":
		node := r.fresh()
		r.triples = append(r.triples, rdf.Triple{S: subject, P: pred, O: node})
		return r.properties(node, lang)
	case parseType != "":
		return r.errorf("rdf:parseType %q is not read here", parseType)
	case object != nil:
		r.triples = append(r.triples, rdf.Triple{S: subject, P: pred, O: object})
		if el, err := r.nextStart(); err != nil || el != nil {
			if err == nil {
				err = r.errorf("element %s inside a property element with an object attribute", el.Name.Local)
			}
			return err
		}
		return nil
	}
	// A literal, or one nested node element.
	var text strings.Builder
	for {
		tok, err := r.dec.Token()
		if err != nil {
			return fmt.Errorf("%s: %w", r.name, err)
		}
		switch t := tok.(type) {
		case xml.CharData:
			text.Write(t)
		case xml.StartElement:
			if strings.TrimSpace(text.String()) != "" {
				return r.errorf("text and an element in one property element")
			}
			node, err := r.node(t, lang)
			if err != nil {
				return err
			}
			r.triples = append(r.triples, rdf.Triple{S: subject, P: pred, O: node})
			if el, err := r.nextStart(); err != nil || el != nil {
				if err == nil {
					err = r.errorf("a second node element in one property element")
				}
				return err
			}
			return nil
		case xml.EndElement:
			if datatype != "" {
				lang = "" // rdf:datatype wins over an inherited xml:lang (§2.9)
			}
			r.triples = append(r.triples, rdf.Triple{S: subject, P: pred, O: literal(text.String(), datatype, lang)})
			return nil
		}
	}
}
