package rdf

// Document is the result of reading an RDF text: its statements in the order
// they were written and, for Turtle, the prefixes it declared.
type Document struct {
	// Name is the name the text was read under (usually a file name).
	Name       string
	Statements []Statement
	// Prefixes are the prefix declarations in the order they were written; a
	// prefix declared twice appears twice, and the later one took effect from
	// its declaration on.
	Prefixes []Prefix
	// Base is the base IRI in effect at the end of the text: the last @base or
	// BASE, or the one the reader was given.
	Base string
}

// Statement is a triple or quad read from a text, with where its terms were
// written. For terms the reader made up (the blank nodes and rdf:first/rdf:rest
// links of a collection) the position is that of the construct that implied them.
type Statement struct {
	Quad
	SubjectPos, PredicatePos, ObjectPos Pos
}

// Triple returns the statement without its graph.
func (s Statement) Triple() Triple { return Triple{S: s.S, P: s.P, O: s.O} }

// Prefix is a prefix declaration: Name (without the colon; empty for ":") stands for IRI.
type Prefix struct {
	Name string
	IRI  IRI
}

// Triples returns the statements as triples, dropping graph names.
func (d *Document) Triples() []Triple {
	ts := make([]Triple, len(d.Statements))
	for i, s := range d.Statements {
		ts[i] = s.Triple()
	}
	return ts
}

// Quads returns the statements as quads.
func (d *Document) Quads() []Quad {
	qs := make([]Quad, len(d.Statements))
	for i, s := range d.Statements {
		qs[i] = s.Quad
	}
	return qs
}

// BySubject groups the statements by subject, each group in document order.
func (d *Document) BySubject() map[Term][]Statement {
	m := map[Term][]Statement{}
	for _, s := range d.Statements {
		m[s.S] = append(m[s.S], s)
	}
	return m
}
