package results

import (
	"bytes"
	"fmt"
	"io"

	"veneer/catalog/rdf"
)

// NewCSV returns a writer of the CSV format of SPARQL 1.1 Query Results CSV
// and TSV Formats (text/csv). The format is lossy: a field holds an IRI
// without angle brackets, a literal's lexical form without its datatype or
// language tag, a blank node as "_:" and its label, and nothing for an unbound
// variable. Lines end in CRLF and fields are quoted as RFC 4180 §2 says; a
// line of a single empty field is written `""`, since many readers skip an
// empty line.
func NewCSV(w io.Writer) SelectWriter { return newSelectWriter(w, "CSV", csvEncoder{}) }

// NewTSV returns a writer of the TSV format of SPARQL 1.1 Query Results CSV
// and TSV Formats (text/tab-separated-values). Variables are written with
// their "?", terms in Turtle syntax (numbers and booleans in their short form
// where that keeps the lexical form, no prefixed names), nothing for an unbound
// variable; lines end in LF. Blank nodes may be renamed (see the package
// documentation).
func NewTSV(w io.Writer) SelectWriter {
	return newSelectWriter(w, "TSV", tsvEncoder{terms: termSyntax{short: true}})
}

// csvEncoder writes CSV: a header line of variable names, then one line per solution.
type csvEncoder struct{}

func (csvEncoder) head(dst []byte, vars []string) []byte {
	// VARNAMEs (checkVars) hold nothing that needs quoting.
	for i, v := range vars {
		if i > 0 {
			dst = append(dst, ',')
		}
		dst = append(dst, v...)
	}
	return append(dst, "\r\n"...)
}

// row writes one line of fields. A line of one empty field is written as ""
// rather than as an empty line, which many CSV readers skip.
func (csvEncoder) row(dst []byte, _ int, vars []string, row []rdf.View) ([]byte, error) {
	start := len(dst)
	for j, t := range row {
		if j > 0 {
			dst = append(dst, ',')
		}
		var err error
		switch t.Kind {
		case rdf.KindIRI, rdf.KindLiteral:
			dst, err = appendCSVField(dst, "", t.Text)
		case rdf.KindBlank:
			dst, err = appendCSVField(dst, "_:", t.Text)
		}
		if err != nil {
			return dst, fmt.Errorf("?%s: %w", vars[j], err)
		}
	}
	if len(row) == 1 && len(dst) == start {
		dst = append(dst, `""`...)
	}
	return append(dst, "\r\n"...), nil
}

func (csvEncoder) tail(dst []byte) []byte { return dst }

// appendCSVField appends the field prefix+s, in double quotes with inner
// quotes doubled when it holds a quote, comma, CR or LF (RFC 4180 §2 rules 6
// and 7). Text that is not UTF-8 is an error.
func appendCSVField(dst []byte, prefix string, s []byte) ([]byte, error) {
	if err := checkUTF8(s); err != nil {
		return dst, err
	}
	if !bytes.ContainsAny(s, "\",\r\n") {
		dst = append(dst, prefix...)
		return append(dst, s...), nil
	}
	dst = append(dst, '"')
	dst = append(dst, prefix...)
	for {
		i := bytes.IndexByte(s, '"')
		if i < 0 {
			break
		}
		dst = append(dst, s[:i+1]...)
		dst = append(dst, '"')
		s = s[i+1:]
	}
	dst = append(dst, s...)
	return append(dst, '"'), nil
}

// tsvEncoder writes TSV: a header line of "?"-prefixed variables, then one
// line per solution.
type tsvEncoder struct{ terms termSyntax }

func (tsvEncoder) head(dst []byte, vars []string) []byte {
	for i, v := range vars {
		if i > 0 {
			dst = append(dst, '\t')
		}
		dst = append(dst, '?')
		dst = append(dst, v...)
	}
	return append(dst, '\n')
}

// row writes the terms separated by tabs. The Turtle syntax escapes tab, LF
// and CR inside IRIs and literals, so they cannot break the line.
func (e tsvEncoder) row(dst []byte, _ int, vars []string, row []rdf.View) ([]byte, error) {
	for j, v := range row {
		if j > 0 {
			dst = append(dst, '\t')
		}
		if v.Kind == 0 {
			continue
		}
		var err error
		if dst, err = e.terms.appendTerm(dst, v.Term()); err != nil {
			return dst, fmt.Errorf("?%s: %w", vars[j], err)
		}
	}
	return append(dst, '\n'), nil
}

func (tsvEncoder) tail(dst []byte) []byte { return dst }
