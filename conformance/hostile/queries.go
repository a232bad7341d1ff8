package hostile

import (
	"errors"
	"math"
	"regexp"
	"strconv"
	"strings"

	"veneer/catalog/rdf"
	"veneer/conformance/differential"
)

// prologue declares the prefixes every query uses; the vocabulary and the
// resource IRIs are the demo mapping's (cmd/veneer/demo/mapping.ttl).
const prologue = `PREFIX wf: <https://vocab.veneer.example/windfarm#>
PREFIX rdfs: <http://www.w3.org/2000/01/rdf-schema#>
PREFIX xsd: <http://www.w3.org/2001/XMLSchema#>
`

// data is the start of the demo's resource IRIs.
const data = "https://data.veneer.example/windfarm/"

// Template is one spot of a query where a value goes.
type Template struct {
	// Name says where the value goes.
	Name string
	// Text is the query, with {v} for each place of the value.
	Text string
	// Place writes the value as the spot needs it.
	Place func(v string) string
	// ForReference, when set, writes the value for the reference engine in
	// place of Place (see clampInteger).
	ForReference func(v string) string
	// Lookup, when set, answers the query by RDF term equality over the
	// graph: a triple pattern matches the triples with the same terms (SPARQL
	// 1.1 Query §18.3, simple entailment; RDF 1.1 Concepts §3.3 literal term
	// equality). The test uses it where the reference engine is known to
	// answer otherwise (see hostile_test.go).
	Lookup func(g *differential.Graph, v string) *differential.Answer
}

// Query is a template with a value placed.
type Query struct {
	Template *Template
	Text     string
	// Reference is the text the reference engine gets.
	Reference string
}

// Ways of writing a value.
var (
	raw     = func(v string) string { return v }
	literal = func(v string) string { return Literal(v, false) }
	escaped = func(v string) string { return Literal(v, true) }
	regex   = func(v string) string { return Literal(RegexQuote(v), false) }
)

// Templates returns the spots a value is tried in. description is the text of
// one wf:description of the demo graph, which a language tag is put on.
func Templates(description string) []*Template {
	return []*Template{
		// Literals: triple-pattern objects, comparisons and string functions.
		// The demo's inspection notes (rdfs:comment) are where the test stores
		// the values that the databases can hold.
		{Name: "comment-object", Text: `SELECT ?i WHERE { ?i rdfs:comment {v} }`, Place: literal},
		{Name: "comment-equals-escaped", Text: `SELECT ?i WHERE { ?i rdfs:comment ?n FILTER(?n = {v}) }`, Place: escaped},
		{Name: "label-less-than", Text: `SELECT ?s ?l WHERE { ?s rdfs:label ?l FILTER(?l < {v}) }`, Place: literal},
		{Name: "comment-contains", Text: `SELECT ?i WHERE { ?i rdfs:comment ?n FILTER(CONTAINS(?n, {v})) }`, Place: literal},
		{Name: "comment-strstarts", Text: `SELECT ?i WHERE { ?i rdfs:comment ?n FILTER(STRSTARTS(?n, {v})) }`, Place: literal},
		{Name: "comment-regex", Text: `SELECT ?i WHERE { ?i rdfs:comment ?n FILTER(REGEX(?n, {v})) }`, Place: regex},
		{Name: "description-object", Text: `SELECT ?w WHERE { ?w wf:description {v}@en }`, Place: literal},
		// Language tags.
		{Name: "language-tag", Text: `SELECT ?w WHERE { ?w wf:description ` + Literal(description, false) + `@{v} }`, Place: raw,
			Lookup: subjects("w", wf+"description", func(v string) rdf.Term { return rdf.NewLangString(description, v) })},
		{Name: "langmatches", Text: `SELECT (COUNT(*) AS ?n) WHERE { ?w wf:description ?d FILTER(LANGMATCHES(LANG(?d), {v})) }`, Place: literal},
		// IRIs the planner decodes into template columns: string columns
		// (site code, part number), an integer column (technician id) and a
		// template of two integer columns (part usage).
		{Name: "site-subject", Text: `SELECT ?p ?o WHERE { <` + data + `site/{v}> ?p ?o }`, Place: IRIPart},
		{Name: "technician-subject", Text: `SELECT ?p ?o WHERE { <` + data + `technician/{v}> ?p ?o }`, Place: IRIPart},
		{Name: "site-object", Text: `SELECT ?t WHERE { ?t wf:locatedAt <` + data + `site/{v}> }`, Place: IRIPart},
		{Name: "part-usage-subject", Text: `SELECT ?p ?o WHERE { <` + data + `part-usage/{v}> ?p ?o }`, Place: IRIPart},
		{Name: "part-subject-raw", Text: `SELECT ?p ?o WHERE { <` + data + `part/{v}> ?p ?o }`, Place: raw,
			Lookup: propertiesOf(func(v string) rdf.IRI { return rdf.IRI(data + "part/" + v) })},
		// VALUES blocks.
		{Name: "values-literal", Text: `SELECT ?i WHERE { VALUES ?n { {v} } ?i rdfs:comment ?n }`, Place: literal},
		{Name: "values-iri", Text: `SELECT ?s ?c WHERE { VALUES ?s { <` + data + `turbine/{v}> <` + data + `inspection/{v}> } ?s a ?c }`, Place: IRIPart},
		{Name: "values-integer", Text: `SELECT ?u WHERE { VALUES ?q { {v}^^xsd:integer } ?u wf:quantity ?q }`, Place: literal,
			Lookup: subjects("u", wf+"quantity", typed(rdf.XSDInteger))},
		// Typed literals for integer, decimal, double, date and dateTime columns.
		{Name: "integer-object", Text: `SELECT ?u WHERE { ?u wf:quantity {v}^^xsd:integer }`, Place: literal,
			Lookup: subjects("u", wf+"quantity", typed(rdf.XSDInteger))},
		{Name: "smallint-at-least", Text: `SELECT ?t WHERE { ?t wf:certificationLevel ?c FILTER(?c >= {v}^^xsd:integer) }`, Place: literal,
			ForReference: func(v string) string { return literal(clampInteger(v)) }},
		{Name: "decimal-object", Text: `SELECT ?p WHERE { ?p wf:unitCost {v}^^xsd:decimal }`, Place: literal,
			Lookup: subjects("p", wf+"unitCost", typed(rdf.XSDDecimal))},
		{Name: "double-greater", Text: `SELECT ?i WHERE { ?i wf:vibration ?x FILTER(?x > {v}^^xsd:double) }`, Place: literal},
		{Name: "date-object", Text: `SELECT ?t WHERE { ?t wf:commissionedOn {v}^^xsd:date }`, Place: literal,
			Lookup: subjects("t", wf+"commissionedOn", typed(rdf.XSDDate))},
		{Name: "date-before", Text: `SELECT ?t WHERE { ?t wf:hiredOn ?d FILTER(?d < {v}^^xsd:date) }`, Place: literal},
		{Name: "datetime-after", Text: `SELECT ?w WHERE { ?w wf:openSince ?d FILTER(?d > {v}^^xsd:dateTime) }`, Place: literal},
	}
}

// Queries places v into every template.
func Queries(templates []*Template, v string) []Query {
	qs := make([]Query, len(templates))
	for i, t := range templates {
		ref := t.Place
		if t.ForReference != nil {
			ref = t.ForReference
		}
		qs[i] = Query{Template: t, Text: prologue + strings.ReplaceAll(t.Text, "{v}", t.Place(v)),
			Reference: prologue + strings.ReplaceAll(t.Text, "{v}", ref(v))}
	}
	return qs
}

// wf is the demo's vocabulary.
const wf = "https://vocab.veneer.example/windfarm#"

func typed(dt rdf.IRI) func(v string) rdf.Term {
	return func(v string) rdf.Term { return rdf.NewTyped(v, dt) }
}

// subjects answers "?name <predicate> object(v)" over a graph.
func subjects(name, predicate string, object func(v string) rdf.Term) func(*differential.Graph, string) *differential.Answer {
	return func(g *differential.Graph, v string) *differential.Answer {
		a := &differential.Answer{Vars: []string{name}}
		o := object(v)
		for _, t := range g.Triples {
			if t.P == rdf.IRI(predicate) && rdf.SameTerm(t.O, o) {
				a.Solutions = append(a.Solutions, differential.Solution{name: t.S})
			}
		}
		return a
	}
}

// propertiesOf answers "subject(v) ?p ?o" over a graph.
func propertiesOf(subject func(v string) rdf.IRI) func(*differential.Graph, string) *differential.Answer {
	return func(g *differential.Graph, v string) *differential.Answer {
		a := &differential.Answer{Vars: []string{"p", "o"}}
		s := subject(v)
		for _, t := range g.Triples {
			if rdf.SameTerm(t.S, s) {
				a.Solutions = append(a.Solutions, differential.Solution{"p": t.P, "o": t.O})
			}
		}
		return a
	}
}

// integerLexical is xsd:integer's lexical space (XML Schema 1.1 Part 2,
// §3.4.13.2: decimal's lexical space without a fractional part).
var integerLexical = regexp.MustCompile(`^[+-]?[0-9]+$`)

// clampInteger brings an xsd:integer lexical form beyond 64 bits to the 64-bit
// extreme of its sign. The reference engine keeps integers in 64 bits and
// takes a larger one for an ill-typed literal, though xsd:integer is unbounded
// (XML Schema 1.1 Part 2, §3.4.13); against the demo's small integers the
// extreme compares as the larger value does. Other text is left as it is.
func clampInteger(v string) string {
	if !integerLexical.MatchString(v) {
		return v
	}
	if _, err := strconv.ParseInt(v, 10, 64); err == nil || !errors.Is(err, strconv.ErrRange) {
		return v
	}
	if v[0] == '-' {
		return strconv.FormatInt(math.MinInt64, 10)
	}
	return strconv.FormatInt(math.MaxInt64, 10)
}
