package algebra

import "veneer/catalog/rdf"

// Form is the query form.
type Form int

// The four query forms.
const (
	Select Form = iota + 1
	Ask
	Construct
	Describe
)

// Dataset is the RDF dataset named by FROM and FROM NAMED (or by the protocol's
// default-graph-uri and named-graph-uri). Empty means the service's own dataset.
type Dataset struct {
	Default []rdf.IRI
	Named   []rdf.IRI
}

// Query is a translated query: the algebra expression and what the form needs to
// turn its solutions into a result.
type Query struct {
	Form Form
	// Root is the algebra expression whose solutions the form consumes. For SELECT it
	// already ends in Project (and Distinct / Reduced / Slice as written).
	Root Node
	// Vars are the result variables of SELECT, in the order the result lists them.
	Vars []Var
	// Template is the CONSTRUCT template; variables standing for template blank
	// nodes are Hidden and get a fresh blank node per solution.
	Template []Triple
	// Describe lists the resources of DESCRIBE (variables or IRIs).
	Describe []Item
	Dataset  Dataset
}
