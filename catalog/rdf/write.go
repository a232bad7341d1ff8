package rdf

import (
	"bufio"
	"encoding/hex"
	"fmt"
	"io"
	"regexp"
	"strings"
)

// WriteNTriples writes triples in N-Triples, one per line, in the given order.
// A literal subject, a predicate that is not an IRI, or an IRI with characters
// no IRI may contain (such as spaces) is an error.
func WriteNTriples(w io.Writer, triples []Triple) error {
	bw := bufio.NewWriter(w)
	for i, t := range triples {
		if err := writeStatement(bw, Quad{S: t.S, P: t.P, O: t.O}); err != nil {
			return fmt.Errorf("writing N-Triples: triple %d: %w", i+1, err)
		}
	}
	return bw.Flush()
}

// WriteNQuads writes quads in N-Quads, one per line, in the given order; a quad
// with a nil graph is written without graph label (the default graph).
func WriteNQuads(w io.Writer, quads []Quad) error {
	bw := bufio.NewWriter(w)
	for i, q := range quads {
		if err := writeStatement(bw, q); err != nil {
			return fmt.Errorf("writing N-Quads: quad %d: %w", i+1, err)
		}
	}
	return bw.Flush()
}

func writeStatement(w *bufio.Writer, q Quad) error {
	if err := checkPositions(q.S, q.P, q.O, q.G); err != nil {
		return err
	}
	w.WriteString(ntTerm(q.S))
	w.WriteByte(' ')
	w.WriteString(ntTerm(q.P))
	w.WriteByte(' ')
	w.WriteString(ntTerm(q.O))
	if q.G != nil {
		w.WriteByte(' ')
		w.WriteString(ntTerm(q.G))
	}
	_, err := w.WriteString(" .\n")
	return err
}

// checkPositions checks that each term may stand where it is (graph may be nil).
func checkPositions(s, p, o, g Term) error {
	switch {
	case s == nil || p == nil || o == nil:
		return fmt.Errorf("missing term")
	case s.Kind() == KindLiteral:
		return fmt.Errorf("literal %s as subject", s)
	case p.Kind() != KindIRI:
		return fmt.Errorf("%s as predicate: predicates must be IRIs", p)
	case g != nil && g.Kind() == KindLiteral:
		return fmt.Errorf("literal %s as graph name", g)
	}
	for _, t := range []Term{s, p, o, g} {
		if err := checkIRI(t); err != nil {
			return err
		}
	}
	return nil
}

// checkIRI rejects IRIs (and datatype IRIs) with characters no IRI may contain:
// they could only be written as escapes, which readers must reject.
func checkIRI(t Term) error {
	var iri IRI
	switch t := t.(type) {
	case IRI:
		iri = t
	case Literal:
		iri = t.Datatype
	}
	for _, r := range string(iri) {
		if !IsIRIChar(r) {
			return fmt.Errorf("IRI %q contains %q, which is not allowed in an IRI", string(iri), r)
		}
	}
	return nil
}

// ntTerm formats a term as N-Triples does; unlike BlankNode.String it makes
// every blank node label valid (see blankLabel).
func ntTerm(t Term) string {
	if b, ok := t.(BlankNode); ok {
		return "_:" + blankLabel(b)
	}
	return t.String()
}

// blankLabel returns a label for b that is valid in N-Triples and Turtle. A label
// that is valid and does not start with "u_" is kept; any other is written as
// "u_" and the hex of its bytes, so distinct blank nodes keep distinct labels.
func blankLabel(b BlankNode) string {
	s := string(b)
	if isBlankLabel(s) && !strings.HasPrefix(s, "u_") {
		return s
	}
	return "u_" + hex.EncodeToString([]byte(s))
}

// isBlankLabel reports whether s matches the label part of BLANK_NODE_LABEL:
//
//	(PN_CHARS_U | [0-9]) ((PN_CHARS | '.')* PN_CHARS)?
func isBlankLabel(s string) bool {
	if s == "" || strings.HasSuffix(s, ".") {
		return false
	}
	for i, r := range s {
		switch {
		case i == 0 && !IsPNCharsU(r) && !isDigit(r):
			return false
		case i > 0 && r != '.' && !IsPNChars(r):
			return false
		}
	}
	return true
}

// WriteTurtle writes triples as a Turtle document: the prefix declarations, then
// the triples grouped by subject (in order of first appearance) and predicate.
// IRIs are shortened with the prefixes where the rest is a valid local name;
// rdf:type is written as 'a'; numbers and booleans in canonical-looking lexical
// forms are written bare. Reading the output gives back the same graph.
func WriteTurtle(w io.Writer, triples []Triple, prefixes []Prefix) error {
	tw := &turtleWriter{w: bufio.NewWriter(w), prefixes: map[string]string{}}
	for _, p := range prefixes {
		if p.Name != "" && !IsPrefixName(p.Name) {
			return fmt.Errorf("writing Turtle: %q is not a valid prefix name", p.Name)
		}
		if _, dup := tw.prefixes[p.Name]; !dup {
			tw.order = append(tw.order, p.Name)
		}
		tw.prefixes[p.Name] = string(p.IRI)
	}
	for _, name := range tw.order {
		fmt.Fprintf(tw.w, "@prefix %s: %s .\n", name, IRI(tw.prefixes[name]))
	}
	if len(tw.order) > 0 && len(triples) > 0 {
		tw.w.WriteByte('\n')
	}

	type group struct {
		subj  Term
		preds []Term
		objs  map[Term][]Term
	}
	var groups []*group
	bySubj := map[Term]*group{}
	for i, t := range triples {
		if err := checkPositions(t.S, t.P, t.O, nil); err != nil {
			return fmt.Errorf("writing Turtle: triple %d: %w", i+1, err)
		}
		g := bySubj[t.S]
		if g == nil {
			g = &group{subj: t.S, objs: map[Term][]Term{}}
			bySubj[t.S] = g
			groups = append(groups, g)
		}
		if _, ok := g.objs[t.P]; !ok {
			g.preds = append(g.preds, t.P)
		}
		g.objs[t.P] = append(g.objs[t.P], t.O)
	}
	for i, g := range groups {
		if i > 0 {
			tw.w.WriteByte('\n')
		}
		tw.w.WriteString(tw.term(g.subj))
		for i, p := range g.preds {
			if i > 0 {
				tw.w.WriteString(" ;\n   ")
			}
			tw.w.WriteByte(' ')
			if p == RDFType {
				tw.w.WriteString("a")
			} else {
				tw.w.WriteString(tw.term(p))
			}
			for j, o := range g.objs[p] {
				if j > 0 {
					tw.w.WriteByte(',')
				}
				tw.w.WriteByte(' ')
				tw.w.WriteString(tw.term(o))
			}
		}
		tw.w.WriteString(" .\n")
	}
	return tw.w.Flush()
}

type turtleWriter struct {
	w        *bufio.Writer
	prefixes map[string]string
	order    []string
}

// Lexical forms that Turtle's bare numeric tokens produce for each datatype.
var (
	integerForm = regexp.MustCompile(`^[+-]?[0-9]+$`)
	decimalForm = regexp.MustCompile(`^[+-]?[0-9]*\.[0-9]+$`)
	doubleForm  = regexp.MustCompile(`^[+-]?([0-9]+\.[0-9]*|\.[0-9]+|[0-9]+)[eE][+-]?[0-9]+$`)
)

func (tw *turtleWriter) term(t Term) string {
	switch t := t.(type) {
	case IRI:
		return tw.iri(t)
	case Literal:
		switch {
		case t.Datatype == XSDInteger && integerForm.MatchString(t.Lexical),
			t.Datatype == XSDDecimal && decimalForm.MatchString(t.Lexical),
			t.Datatype == XSDDouble && doubleForm.MatchString(t.Lexical),
			t.Datatype == XSDBoolean && (t.Lexical == "true" || t.Lexical == "false"):
			return t.Lexical
		case t.Lang != "":
			return `"` + EscapeString(t.Lexical) + `"@` + t.Lang
		case t.Datatype == "" || t.Datatype == XSDString:
			return `"` + EscapeString(t.Lexical) + `"`
		}
		return `"` + EscapeString(t.Lexical) + `"^^` + tw.iri(t.Datatype)
	}
	return ntTerm(t)
}

// iri writes an IRI as a prefixed name if a prefix fits, else in angle brackets.
// The longest matching namespace wins.
func (tw *turtleWriter) iri(i IRI) string {
	best, bestLocal := "", ""
	found := false
	for _, name := range tw.order {
		ns := tw.prefixes[name]
		rest, ok := strings.CutPrefix(string(i), ns)
		if !ok || (found && len(ns) <= len(tw.prefixes[best])) {
			continue
		}
		if IsLocalName(rest) {
			best, bestLocal, found = name, rest, true
		}
	}
	if found {
		return best + ":" + bestLocal
	}
	return i.String()
}

// IsLocalName reports whether s can be written as a PN_LOCAL without backslash
// escapes (prefixed names with escapes are valid but hard to read; such IRIs are
// written in full instead):
//
//	PN_LOCAL ::= (PN_CHARS_U | ':' | [0-9] | PLX) ((PN_CHARS | '.' | ':' | PLX)* (PN_CHARS | ':' | PLX))?
func IsLocalName(s string) bool {
	last := len(s) - 1
	for i, r := range s {
		switch {
		case r == ':' || IsPNCharsU(r) || isDigit(r):
		case r == '%' && i+2 <= last && hexValue(rune(s[i+1])) >= 0 && hexValue(rune(s[i+2])) >= 0:
		case r == '.' && i > 0 && i < last:
		case i > 0 && IsPNChars(r):
		default:
			return false
		}
	}
	return true
}

// IsPrefixName reports whether s matches PN_PREFIX:
//
//	PN_PREFIX ::= PN_CHARS_BASE ((PN_CHARS | '.')* PN_CHARS)?
func IsPrefixName(s string) bool {
	if strings.HasSuffix(s, ".") {
		return false
	}
	for i, r := range s {
		switch {
		case i == 0 && !IsPNCharsBase(r):
			return false
		case i > 0 && r != '.' && !IsPNChars(r):
			return false
		}
	}
	return s != ""
}
