// Package catalog is veneer's mapping model: the triples maps that say how rows of a
// relational source become RDF triples. Readers (catalog/r2rml, catalog/direct) build
// a Catalog; the planner (rewrite) reads it.
package catalog

import (
	"fmt"
	"slices"

	"veneer/catalog/rdf"
)

// Catalog is a set of triples maps over one source.
type Catalog struct {
	Maps []*TriplesMap
}

// Pos is where a mapping element was defined: a file and a 1-based line and column.
// The zero Pos means "not from a file" (for example, built from the Direct Mapping).
type Pos struct {
	File      string
	Line, Col int
}

// String renders the position as file:line:column.
func (p Pos) String() string {
	if p.Line == 0 {
		return p.File
	}
	return fmt.Sprintf("%s:%d:%d", p.File, p.Line, p.Col)
}

// TriplesMap turns each row of a logical table into triples (R2RML §6).
type TriplesMap struct {
	// Name identifies the map (the IRI or blank node label of its resource).
	Name    string
	Pos     Pos
	Table   LogicalTable
	Subject TermMap
	// Classes are the rr:class IRIs: each row's subject gets an rdf:type triple for each.
	Classes []rdf.IRI
	// Graphs are the subject map's graph maps; none means the default graph.
	Graphs           []TermMap
	PredicateObjects []PredicateObjectMap
}

// DefaultGraph is rr:defaultGraph (R2RML §9): a graph map that produces this IRI
// puts its triples in the default graph, not in a graph of that name.
const DefaultGraph rdf.IRI = "http://www.w3.org/ns/r2rml#defaultGraph"

// LogicalTable is the table or query whose rows a triples map reads (R2RML §5).
// Exactly one of TableName and Query is set.
type LogicalTable struct {
	// TableName is the table or view name as written in the mapping; it may be
	// schema-qualified and may carry SQL double quotes ("Sales"."Order").
	TableName string
	// Query is an R2RML view: a SELECT statement whose result is the table.
	Query string
	// SQLVersions are the rr:sqlVersion IRIs of a view.
	SQLVersions []rdf.IRI
	// Pos is where the table name or query was written.
	Pos Pos
}

// TermMapKind says how a term map produces its term.
type TermMapKind int

// The ways a term map produces a term (R2RML §7).
const (
	Constant TermMapKind = iota + 1
	Column
	TemplateMap
)

// TermMap produces one RDF term per row (R2RML §7).
type TermMap struct {
	Kind TermMapKind
	Pos  Pos
	// Constant is the term of a constant-valued map.
	Constant rdf.Term
	// Column is the column name of a column-valued map, as written (it may be quoted).
	Column string
	// Template is the template of a template-valued map.
	Template Template
	// TermType is the kind of term the map produces.
	TermType rdf.Kind
	// Language is the language tag of literal maps (rr:language).
	Language string
	// Datatype is the datatype of literal maps given by rr:datatype; empty means
	// the natural RDF datatype of the column's SQL type (R2RML §10.2).
	Datatype rdf.IRI
	// Base is the base IRI of the mapping document, which a column- or
	// template-valued IRI map prepends to values that are not absolute IRIs
	// (R2RML §11).
	Base string
}

// Columns lists the columns the term map reads, in order of first use.
func (m TermMap) Columns() []string {
	switch m.Kind {
	case Column:
		return []string{m.Column}
	case TemplateMap:
		return m.Template.Columns()
	}
	return nil
}

// Template is a string template: literal text with column references in braces
// (R2RML §7.4). Parts alternate freely between text and columns.
type Template struct {
	Parts []TemplatePart
}

// TemplatePart is either literal text (Column empty) or a column reference.
type TemplatePart struct {
	Text   string
	Column string
}

// Columns lists the columns the template references, in order of first use.
func (t Template) Columns() []string {
	var cols []string
	for _, p := range t.Parts {
		if p.Column != "" && !slices.Contains(cols, p.Column) {
			cols = append(cols, p.Column)
		}
	}
	return cols
}

// PredicateObjectMap pairs predicate maps with object maps (R2RML §6.3): every
// predicate goes with every object, in every graph.
type PredicateObjectMap struct {
	Pos        Pos
	Predicates []TermMap
	Objects    []ObjectMap
	Graphs     []TermMap
}

// ObjectMap is either a term map or a reference to another triples map's subjects.
// Exactly one of Term and Ref is set.
type ObjectMap struct {
	Term *TermMap
	Ref  *RefObjectMap
}

// RefObjectMap produces the subjects of a parent triples map, joined to the child
// rows by the join conditions (R2RML §8).
type RefObjectMap struct {
	Pos    Pos
	Parent *TriplesMap
	Joins  []JoinCondition
}

// JoinCondition equates a child column with a parent column.
type JoinCondition struct {
	Child, Parent string
	// Pos is where the join condition was written.
	Pos Pos
}
