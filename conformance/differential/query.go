package differential

import (
	"fmt"
	"strings"
)

// Query is one generated query and how its answers are compared.
type Query struct {
	// ID numbers the query within its run, from 1.
	ID int
	// Family names the generator that made the query (star, chain, optional, …).
	Family string
	Text   string
	// Graph says the query is a CONSTRUCT: its answer is triples.
	Graph bool
	Mode  Mode
	// Unlimited is the query without its LIMIT and OFFSET, for Limited queries.
	Unlimited string
	// Approx are the variables compared within a tolerance (see Compare).
	Approx []string
	// Concat maps the variables holding GROUP_CONCAT results to their separator.
	Concat map[string]string
}

// Mode says how the solutions of a query are compared.
type Mode int

const (
	// Bag compares solutions as multisets.
	Bag Mode = iota
	// Ordered compares solutions as sequences: the ORDER BY keys make the order
	// total.
	Ordered
	// Limited compares the number of solutions, and checks that each is a
	// solution of the query without its slice: a LIMIT or OFFSET over an order
	// that is not total.
	Limited
)

func (m Mode) String() string {
	switch m {
	case Ordered:
		return "ordered"
	case Limited:
		return "limited"
	}
	return "bag"
}

// prologue declares the prefixes every generated query may use.
const prologue = `PREFIX wf: <https://vocab.veneer.example/windfarm#>
PREFIX rdf: <http://www.w3.org/1999/02/22-rdf-syntax-ns#>
PREFIX rdfs: <http://www.w3.org/2000/01/rdf-schema#>
PREFIX xsd: <http://www.w3.org/2001/XMLSchema#>
`

// selectQuery is a SELECT query under construction.
type selectQuery struct {
	distinct bool
	// project lists "?v" and "(EXPR AS ?v)" items; empty means *.
	project []string
	where   []string
	groupBy []string
	having  []string
	orderBy []string
	// total says the ORDER BY keys order the solutions totally.
	total         bool
	limit, offset int
}

func (q *selectQuery) text(slice bool) string {
	var b strings.Builder
	b.WriteString(prologue)
	b.WriteString("SELECT ")
	if q.distinct {
		b.WriteString("DISTINCT ")
	}
	if len(q.project) == 0 {
		b.WriteString("*")
	} else {
		b.WriteString(strings.Join(q.project, " "))
	}
	b.WriteString(" WHERE {\n")
	writeGroup(&b, q.where, "  ")
	b.WriteString("}")
	if len(q.groupBy) > 0 {
		b.WriteString("\nGROUP BY " + strings.Join(q.groupBy, " "))
	}
	if len(q.having) > 0 {
		b.WriteString("\nHAVING " + strings.Join(q.having, " "))
	}
	if len(q.orderBy) > 0 {
		b.WriteString("\nORDER BY " + strings.Join(q.orderBy, " "))
	}
	if slice && q.limit > 0 {
		fmt.Fprintf(&b, "\nLIMIT %d", q.limit)
	}
	if slice && q.offset > 0 {
		fmt.Fprintf(&b, "\nOFFSET %d", q.offset)
	}
	return b.String() + "\n"
}

// writeGroup writes the elements of a group graph pattern, one a line; an
// element may span lines. Triple patterns get the " ." that ends them.
func writeGroup(b *strings.Builder, elems []string, indent string) {
	for _, e := range elems {
		if isTriples(e) && !strings.HasSuffix(e, ".") {
			e += " ."
		}
		for line := range strings.SplitSeq(e, "\n") {
			b.WriteString(indent + line + "\n")
		}
	}
}

// isTriples reports whether a group element is a block of triple patterns
// rather than a FILTER, OPTIONAL, MINUS, BIND, VALUES or a nested group.
func isTriples(e string) bool {
	for _, kw := range []string{"FILTER", "OPTIONAL", "MINUS", "BIND", "VALUES", "{"} {
		if strings.HasPrefix(e, kw) {
			return false
		}
	}
	return true
}

// query turns the SELECT query into a Query with the comparison mode its
// modifiers call for.
func (q *selectQuery) query(family string) Query {
	out := Query{Family: family, Text: q.text(true)}
	sliced := q.limit > 0 || q.offset > 0
	switch {
	case len(q.orderBy) > 0 && q.total:
		out.Mode = Ordered
	case sliced:
		out.Mode, out.Unlimited = Limited, q.text(false)
	}
	return out
}
