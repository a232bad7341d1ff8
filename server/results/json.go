package results

import (
	"fmt"
	"io"
	"unicode/utf8"

	"veneer/catalog/rdf"
)

// NewJSON returns a writer of the SPARQL 1.1 Query Results JSON Format
// (application/sparql-results+json). Each solution goes on a line of its own.
func NewJSON(w io.Writer) SelectWriter { return newSelectWriter(w, "JSON", jsonEncoder{}) }

// jsonEncoder writes the JSON results object of SPARQL 1.1 Query Results JSON
// Format §3:
//
//	{"head": {"vars": [...]}, "results": {"bindings": [ {...}, ... ]}}
type jsonEncoder struct{}

func (jsonEncoder) head(dst []byte, vars []string) []byte {
	dst = append(dst, `{"head":{"vars":[`...)
	for i, v := range vars {
		if i > 0 {
			dst = append(dst, ',')
		}
		// Variable names are VARNAMEs (checkVars): valid UTF-8 with nothing to escape.
		dst = append(dst, '"')
		dst = append(dst, v...)
		dst = append(dst, '"')
	}
	return append(dst, `]},"results":{"bindings":[`...)
}

// row writes one binding object. An unbound variable has no member
// (JSON Format §3.2.1).
func (jsonEncoder) row(dst []byte, i int, vars []string, row []rdf.View) ([]byte, error) {
	if i > 0 {
		dst = append(dst, ',')
	}
	dst = append(dst, "\n{"...)
	first := true
	for j, t := range row {
		if t.Kind == 0 {
			continue
		}
		if !first {
			dst = append(dst, ',')
		}
		first = false
		dst = append(dst, '"')
		dst = append(dst, vars[j]...)
		dst = append(dst, `":`...)
		var err error
		if dst, err = appendJSONTerm(dst, t); err != nil {
			return dst, fmt.Errorf("?%s: %w", vars[j], err)
		}
	}
	return append(dst, '}'), nil
}

func (jsonEncoder) tail(dst []byte) []byte { return append(dst, "\n]}}\n"...) }

// appendJSONTerm writes an RDF term as JSON Format §3.2.2 says:
//
//	{"type": "uri", "value": I}
//	{"type": "literal", "value": S}                        simple literal (xsd:string)
//	{"type": "literal", "value": S, "xml:lang": L}         language-tagged literal
//	{"type": "literal", "value": S, "datatype": D}         any other literal
//	{"type": "bnode", "value": B}
func appendJSONTerm(dst []byte, t rdf.View) ([]byte, error) {
	var err error
	switch t.Kind {
	case rdf.KindIRI:
		dst = append(dst, `{"type":"uri","value":`...)
		dst, err = appendJSONString(dst, t.Text)
	case rdf.KindBlank:
		dst = append(dst, `{"type":"bnode","value":`...)
		dst, err = appendJSONString(dst, t.Text)
	case rdf.KindLiteral:
		dst = append(dst, `{"type":"literal","value":`...)
		if dst, err = appendJSONString(dst, t.Text); err != nil {
			return dst, err
		}
		switch {
		case t.Lang != "":
			dst = append(dst, `,"xml:lang":`...)
			dst, err = appendJSONString(dst, t.Lang)
		case t.Datatype != "" && t.Datatype != rdf.XSDString:
			dst = append(dst, `,"datatype":`...)
			dst, err = appendJSONString(dst, string(t.Datatype))
		}
	}
	return append(dst, '}'), err
}

// appendJSONString appends s as a JSON string (RFC 8259 §7). Control
// characters are escaped, as they must be; so are U+2028 and U+2029, which
// JSON allows raw but JavaScript source does not (common practice, also done
// by encoding/json). Text that is not UTF-8 is an error: JSON text is Unicode
// (RFC 8259 §8.1) and a replacement character would change the term.
func appendJSONString[T text](dst []byte, s T) ([]byte, error) {
	dst = append(dst, '"')
	dst, err := appendJSONEscaped(dst, s)
	return append(dst, '"'), err
}

// appendJSONEscaped appends the inside of the JSON string for s.
func appendJSONEscaped[T text](dst []byte, s T) ([]byte, error) {
	const hex = "0123456789abcdef"
	start := 0
	for i := 0; i < len(s); {
		c := s[i]
		if c < utf8.RuneSelf {
			if c >= 0x20 && c != '"' && c != '\\' {
				i++
				continue
			}
			dst = append(dst, s[start:i]...)
			switch c {
			case '"', '\\':
				dst = append(dst, '\\', c)
			case '\n':
				dst = append(dst, `\n`...)
			case '\r':
				dst = append(dst, `\r`...)
			case '\t':
				dst = append(dst, `\t`...)
			case '\b':
				dst = append(dst, `\b`...)
			case '\f':
				dst = append(dst, `\f`...)
			default:
				dst = append(dst, '\\', 'u', '0', '0', hex[c>>4], hex[c&0xf])
			}
			i++
			start = i
			continue
		}
		r, size := decodeRune(s[i:])
		if r == utf8.RuneError && size == 1 {
			return dst, fmt.Errorf("invalid UTF-8 at byte %d", i)
		}
		if r == '\u2028' || r == '\u2029' {
			dst = append(dst, s[start:i]...)
			dst = append(dst, '\\', 'u', '2', '0', '2', hex[r&0xf])
			start = i + size
		}
		i += size
	}
	return append(dst, s[start:]...), nil
}

// appendJSONBoolean appends the JSON results object of an ASK query: an empty
// head and a "boolean" member (JSON Format §3).
func appendJSONBoolean(dst []byte, v bool) []byte {
	dst = append(dst, `{"head":{},"boolean":`...)
	if v {
		dst = append(dst, "true"...)
	} else {
		dst = append(dst, "false"...)
	}
	return append(dst, "}\n"...)
}
