package results

import (
	"fmt"
	"io"
	"unicode/utf8"

	"veneer/catalog/rdf"
)

// NewXML returns a writer of the SPARQL Query Results XML Format
// (application/sparql-results+xml). Each solution goes on a line of its own.
//
// XML 1.0 cannot carry every string: its Char production (XML 1.0 §2.2)
// leaves out the control characters other than tab, line feed and carriage
// return, U+FFFE and U+FFFF, not even as character references. A term holding
// one is an error, not a replaced or dropped character, so that the client
// never gets a well-formed document with a different answer in it.
func NewXML(w io.Writer) SelectWriter { return newSelectWriter(w, "XML", xmlEncoder{}) }

// The start of every XML results document (XML Format §2).
const xmlProlog = `<?xml version="1.0" encoding="UTF-8"?>` + "\n" +
	`<sparql xmlns="http://www.w3.org/2005/sparql-results#">` + "\n"

// xmlEncoder writes the sparql element of the XML Format:
//
//	<sparql><head><variable name="..."/>...</head><results><result>...</result>...</results></sparql>
type xmlEncoder struct{}

func (xmlEncoder) head(dst []byte, vars []string) []byte {
	dst = append(dst, xmlProlog...)
	dst = append(dst, "<head>\n"...)
	for _, v := range vars {
		// VARNAMEs (checkVars) hold nothing XML would need escaped.
		dst = append(dst, `<variable name="`...)
		dst = append(dst, v...)
		dst = append(dst, "\"/>\n"...)
	}
	return append(dst, "</head>\n<results>\n"...)
}

// row writes one result element; an unbound variable has no binding element
// (XML Format §2.3.1).
func (xmlEncoder) row(dst []byte, _ int, vars []string, row []rdf.View) ([]byte, error) {
	dst = append(dst, "<result>"...)
	for j, t := range row {
		if t.Kind == 0 {
			continue
		}
		dst = append(dst, `<binding name="`...)
		dst = append(dst, vars[j]...)
		dst = append(dst, `">`...)
		var err error
		if dst, err = appendXMLTerm(dst, t); err != nil {
			return dst, fmt.Errorf("?%s: %w", vars[j], err)
		}
		dst = append(dst, "</binding>"...)
	}
	return append(dst, "</result>\n"...), nil
}

func (xmlEncoder) tail(dst []byte) []byte { return append(dst, "</results>\n</sparql>\n"...) }

// appendXMLTerm writes an RDF term as XML Format §2.3.1 says:
//
//	<uri>I</uri>
//	<literal>S</literal>                     simple literal (xsd:string)
//	<literal xml:lang="L">S</literal>        language-tagged literal
//	<literal datatype="D">S</literal>        any other literal
//	<bnode>B</bnode>
func appendXMLTerm(dst []byte, t rdf.View) ([]byte, error) {
	var err error
	switch t.Kind {
	case rdf.KindIRI:
		dst = append(dst, "<uri>"...)
		dst, err = appendXMLEscaped(dst, t.Text, false)
		dst = append(dst, "</uri>"...)
	case rdf.KindBlank:
		dst = append(dst, "<bnode>"...)
		dst, err = appendXMLEscaped(dst, t.Text, false)
		dst = append(dst, "</bnode>"...)
	case rdf.KindLiteral:
		switch {
		case t.Lang != "":
			dst = append(dst, `<literal xml:lang="`...)
			dst, err = appendXMLEscaped(dst, t.Lang, true)
			dst = append(dst, `">`...)
		case t.Datatype != "" && t.Datatype != rdf.XSDString:
			dst = append(dst, `<literal datatype="`...)
			dst, err = appendXMLEscaped(dst, string(t.Datatype), true)
			dst = append(dst, `">`...)
		default:
			dst = append(dst, "<literal>"...)
		}
		if err != nil {
			return dst, err
		}
		dst, err = appendXMLEscaped(dst, t.Text, false)
		dst = append(dst, "</literal>"...)
	}
	return dst, err
}

// appendXMLEscaped appends s as XML character data, or as an attribute value
// in double quotes if attr. '&' and '<' are always escaped, '>' too so that
// "]]>" cannot appear; carriage return becomes &#13; because a parser turns a
// raw one into a line feed (XML 1.0 §2.11); in attributes '"', tab and line
// feed are escaped too, because a parser turns raw ones into spaces
// (XML 1.0 §3.3.3). A character outside Char (XML 1.0 §2.2) or text that is
// not UTF-8 is an error.
func appendXMLEscaped[T text](dst []byte, s T, attr bool) ([]byte, error) {
	start := 0
	for i := 0; i < len(s); {
		c := s[i]
		if c < utf8.RuneSelf {
			var esc string
			switch {
			case c == '&':
				esc = "&amp;"
			case c == '<':
				esc = "&lt;"
			case c == '>':
				esc = "&gt;"
			case c == '\r':
				esc = "&#13;"
			case attr && c == '"':
				esc = "&quot;"
			case attr && c == '\t':
				esc = "&#9;"
			case attr && c == '\n':
				esc = "&#10;"
			case c < 0x20 && c != '\t' && c != '\n':
				return dst, fmt.Errorf("character U+%04X at byte %d is not allowed in XML 1.0", c, i)
			default:
				i++
				continue
			}
			dst = append(dst, s[start:i]...)
			dst = append(dst, esc...)
			i++
			start = i
			continue
		}
		r, size := decodeRune(s[i:])
		switch {
		case r == utf8.RuneError && size == 1:
			return dst, fmt.Errorf("invalid UTF-8 at byte %d", i)
		case r == 0xFFFE || r == 0xFFFF:
			return dst, fmt.Errorf("character U+%04X at byte %d is not allowed in XML 1.0", r, i)
		}
		i += size
	}
	return append(dst, s[start:]...), nil
}

// appendXMLBoolean appends the XML results document of an ASK query: an empty
// head and a boolean element (XML Format §2.3.2).
func appendXMLBoolean(dst []byte, v bool) []byte {
	dst = append(dst, xmlProlog...)
	dst = append(dst, "<head/>\n<boolean>"...)
	if v {
		dst = append(dst, "true"...)
	} else {
		dst = append(dst, "false"...)
	}
	return append(dst, "</boolean>\n</sparql>\n"...)
}
