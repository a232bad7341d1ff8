package bench

import (
	"encoding/json"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"veneer/catalog/rdf"
)

// Answer is a decoded query answer: solutions, a boolean, or triples.
type Answer struct {
	Vars      []string
	Solutions [][]rdf.Term
	Boolean   *bool
	Triples   []rdf.Triple
}

// Size is the number of solutions or triples, 1 for a boolean.
func (a *Answer) Size() int {
	switch {
	case a.Boolean != nil:
		return 1
	case a.Triples != nil:
		return len(a.Triples)
	}
	return len(a.Solutions)
}

// form names the answer's shape.
func (a *Answer) form() string {
	switch {
	case a.Boolean != nil:
		return "a boolean"
	case a.Triples != nil:
		return "triples"
	}
	return "solutions"
}

// jsonTerm is a term of the SPARQL 1.1 Query Results JSON Format (§3.2.2).
type jsonTerm struct {
	Type     string `json:"type"`
	Value    string `json:"value"`
	Lang     string `json:"xml:lang"`
	Datatype string `json:"datatype"`
}

// ParseJSON decodes a document of the SPARQL 1.1 Query Results JSON Format.
func ParseJSON(body []byte) (*Answer, error) {
	var doc struct {
		Head struct {
			Vars []string `json:"vars"`
		} `json:"head"`
		Boolean *bool `json:"boolean"`
		Results *struct {
			Bindings []map[string]jsonTerm `json:"bindings"`
		} `json:"results"`
	}
	if err := json.Unmarshal(body, &doc); err != nil {
		return nil, fmt.Errorf("decoding the JSON results: %w", err)
	}
	a := &Answer{Vars: doc.Head.Vars, Boolean: doc.Boolean}
	if doc.Boolean != nil {
		return a, nil
	}
	if doc.Results == nil {
		return nil, fmt.Errorf("decoding the JSON results: neither results nor boolean")
	}
	a.Solutions = make([][]rdf.Term, len(doc.Results.Bindings))
	for i, b := range doc.Results.Bindings {
		sol := make([]rdf.Term, len(a.Vars))
		for j, v := range a.Vars {
			jt, ok := b[v]
			if !ok {
				continue
			}
			t, err := jt.term()
			if err != nil {
				return nil, fmt.Errorf("decoding the JSON results: solution %d, ?%s: %w", i+1, v, err)
			}
			sol[j] = t
		}
		a.Solutions[i] = sol
	}
	return a, nil
}

func (t jsonTerm) term() (rdf.Term, error) {
	switch t.Type {
	case "uri":
		return rdf.IRI(t.Value), nil
	case "bnode":
		return rdf.BlankNode(t.Value), nil
	case "literal", "typed-literal":
		switch {
		case t.Lang != "":
			return rdf.NewLangString(t.Value, t.Lang), nil
		case t.Datatype != "":
			return rdf.NewTyped(t.Value, rdf.IRI(t.Datatype)), nil
		}
		return rdf.NewString(t.Value), nil
	}
	return nil, fmt.Errorf("unknown term type %q", t.Type)
}

// ParseNTriples decodes an N-Triples document.
func ParseNTriples(body []byte) (*Answer, error) {
	doc, err := rdf.ParseNTriples("answer", body)
	if err != nil {
		return nil, err
	}
	return &Answer{Triples: append([]rdf.Triple{}, doc.Triples()...)}, nil
}

// Compare says how answer got differs from want, or "" when they are the same:
// the same variables, and the same solutions as multisets (as sequences when
// ordered); the same boolean; the same triples as sets. Numeric literals of the
// same datatype are equal within a relative 1e-9, so that floating-point sums
// computed in a different order agree; every other term must be the same term.
func Compare(got, want *Answer, ordered bool) string {
	switch {
	case want.Boolean != nil:
		if got.Boolean == nil || *got.Boolean != *want.Boolean {
			return fmt.Sprintf("boolean: got %v, want %v", show(got.Boolean), *want.Boolean)
		}
		return ""
	case want.Triples != nil:
		return compareTriples(got.Triples, want.Triples)
	}
	if !slices.Equal(got.Vars, want.Vars) {
		return fmt.Sprintf("variables: got %v, want %v", got.Vars, want.Vars)
	}
	g, w := got.Solutions, want.Solutions
	if len(g) != len(w) {
		return fmt.Sprintf("got %d solutions, want %d", len(g), len(w))
	}
	if !ordered {
		g, w = sortedSolutions(g), sortedSolutions(w)
	}
	for i := range g {
		for j := range g[i] {
			if !sameTerm(g[i][j], w[i][j]) {
				return fmt.Sprintf("solution %d, ?%s: got %s, want %s", i+1, want.Vars[j], termString(g[i][j]), termString(w[i][j]))
			}
		}
	}
	return ""
}

func show(b *bool) string {
	if b == nil {
		return "no boolean"
	}
	return strconv.FormatBool(*b)
}

func termString(t rdf.Term) string {
	if t == nil {
		return "unbound"
	}
	return t.String()
}

// sortKey orders solutions for a multiset comparison; numeric literals enter
// it rounded, so that values equal within the tolerance sort alike.
func sortKey(sol []rdf.Term) string {
	var b strings.Builder
	for _, t := range sol {
		switch {
		case t == nil:
			b.WriteString("-")
		case isNumeric(t):
			f, _ := strconv.ParseFloat(t.(rdf.Literal).Lexical, 64)
			fmt.Fprintf(&b, "%.6g", f)
		default:
			b.WriteString(t.String())
		}
		b.WriteByte(0)
	}
	return b.String()
}

func sortedSolutions(sols [][]rdf.Term) [][]rdf.Term {
	type keyed struct {
		key string
		sol []rdf.Term
	}
	ks := make([]keyed, len(sols))
	for i, s := range sols {
		ks[i] = keyed{sortKey(s), s}
	}
	slices.SortFunc(ks, func(a, b keyed) int { return strings.Compare(a.key, b.key) })
	out := make([][]rdf.Term, len(ks))
	for i, k := range ks {
		out[i] = k.sol
	}
	return out
}

// The XSD numeric datatypes whose values the comparison reads as numbers.
var numeric = map[rdf.IRI]bool{
	rdf.XSDNS + "integer": true, rdf.XSDNS + "decimal": true, rdf.XSDNS + "double": true, rdf.XSDNS + "float": true,
}

func isNumeric(t rdf.Term) bool {
	l, ok := t.(rdf.Literal)
	return ok && numeric[l.Datatype]
}

func sameTerm(a, b rdf.Term) bool {
	if a == nil || b == nil {
		return a == nil && b == nil
	}
	if rdf.SameTerm(a, b) {
		return true
	}
	if !isNumeric(a) || !isNumeric(b) {
		return false
	}
	la, lb := a.(rdf.Literal), b.(rdf.Literal)
	if la.Datatype != lb.Datatype {
		return false
	}
	x, errA := strconv.ParseFloat(la.Lexical, 64)
	y, errB := strconv.ParseFloat(lb.Lexical, 64)
	return errA == nil && errB == nil && math.Abs(x-y) <= 1e-9*math.Max(math.Abs(x), math.Abs(y))
}

func compareTriples(got, want []rdf.Triple) string {
	set := func(ts []rdf.Triple) map[string]bool {
		m := make(map[string]bool, len(ts))
		for _, t := range ts {
			m[t.S.String()+" "+t.P.String()+" "+t.O.String()] = true
		}
		return m
	}
	g, w := set(got), set(want)
	for t := range w {
		if !g[t] {
			return fmt.Sprintf("missing triple %s (got %d, want %d)", t, len(g), len(w))
		}
	}
	for t := range g {
		if !w[t] {
			return fmt.Sprintf("extra triple %s (got %d, want %d)", t, len(g), len(w))
		}
	}
	return ""
}
