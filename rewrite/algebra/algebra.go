// Package algebra is the SPARQL 1.1 algebra (SPARQL 1.1 Query §18): the operator
// tree a query is translated into, and the expressions inside it. The planner
// (package rewrite) reads these trees; nodes are immutable values.
package algebra

import "veneer/catalog/rdf"

// Node is an algebra operator. The interface is sealed: only this package's
// operator types are nodes.
type Node interface {
	// Children returns the operator's inputs, left to right.
	Children() []Node
	// WithChildren returns a copy of the operator with its inputs replaced; the
	// slice has the length Children returned.
	WithChildren(children ...Node) Node
	node()
}

// Item is a position in a triple pattern: a Var or a Const.
type Item interface{ item() }

// Var is a SPARQL variable, named without its '?' or '$'. Variables that stand for
// blank nodes of the query (§18.2.2.3: they act as variables that are not
// projected) have names that start with "_:", which no query variable can have.
// Translate gives the same kind of name to the other variables it introduces
// (the middle of a path sequence, aggregate results); none is ever projected.
type Var string

// Const is an RDF term in a pattern or an expression.
type Const struct{ Term rdf.Term }

// TermOf returns the term of a Const item, or nil for a Var.
func TermOf(it Item) rdf.Term {
	if c, ok := it.(Const); ok {
		return c.Term
	}
	return nil
}

// Hidden reports whether v stands for a blank node of the query.
func (v Var) Hidden() bool { return len(v) > 2 && v[0] == '_' && v[1] == ':' }

func (Var) item()   {}
func (Const) item() {}

// Triple is a triple pattern.
type Triple struct {
	S, P, O Item
}

// BGP is a basic graph pattern. With no patterns it is the empty pattern of
// §18.2.2.6, whose one solution binds nothing.
type BGP struct {
	Patterns []Triple
}

// PathPattern is a triple pattern whose predicate is a property path that is not a
// plain IRI after the §18.2.2.4 translation (so *, +, ?, negated sets, and
// sequences or alternatives that contain them).
type PathPattern struct {
	S    Item
	Path Path
	O    Item
}

// Join is the join of two patterns.
type Join struct{ Left, Right Node }

// LeftJoin is OPTIONAL: Left with the compatible solutions of Right where Expr
// (nil: true) holds.
type LeftJoin struct {
	Left, Right Node
	Expr        Expr
}

// Filter keeps the solutions of Input for which every expression is true.
type Filter struct {
	Exprs []Expr
	Input Node
}

// Union is the union of two patterns.
type Union struct{ Left, Right Node }

// Minus removes from Left the solutions compatible with some solution of Right that
// shares a variable with it.
type Minus struct{ Left, Right Node }

// Graph evaluates Input in the named graph given by Name (a Var or a Const IRI).
type Graph struct {
	Name  Item
	Input Node
}

// Extend binds Var to the value of Expr (BIND, and SELECT expressions).
type Extend struct {
	Input Node
	Var   Var
	Expr  Expr
}

// Values is inline data: each row gives a term or nil (UNDEF) for each variable.
type Values struct {
	Vars []Var
	Rows [][]rdf.Term
	// Block is the number of the VALUES block of the query text the data came
	// from (sparql.ValuesBlock.Block), 0 for data the translation made.
	Block int
}

// Table is the unit table when Empty is false (one solution binding nothing) and
// the empty table when Empty is true.
type Table struct{ Empty bool }

// Service evaluates Input at a remote SPARQL endpoint. Pattern is Input as
// the text sent there: a group { ... } that needs no prologue.
type Service struct {
	Endpoint Item
	Silent   bool
	Input    Node
	Pattern  string
}

// GroupKey is one GROUP BY condition; Var is set when the condition was written
// as (expr AS ?var) or is a plain variable.
type GroupKey struct {
	Expr Expr
	Var  Var
}

// AggBinding names the result of one aggregate.
type AggBinding struct {
	Var Var
	Agg Aggregate
}

// Group is Group and AggregateJoin together (§18.2.4.1): it partitions Input by the
// keys (one group over everything when there are none) and binds each aggregate
// result to its variable, and each key variable to its key value.
type Group struct {
	Input Node
	Keys  []GroupKey
	Aggs  []AggBinding
}

// OrderCond is one ORDER BY condition.
type OrderCond struct {
	Expr Expr
	Desc bool
}

// OrderBy sorts the solutions of Input.
type OrderBy struct {
	Input Node
	Conds []OrderCond
}

// Project keeps only Vars of each solution.
type Project struct {
	Input Node
	Vars  []Var
}

// Distinct removes duplicate solutions.
type Distinct struct{ Input Node }

// Reduced permits, but does not require, removal of duplicate solutions.
type Reduced struct{ Input Node }

// Slice keeps Limit solutions (-1: all) after skipping Offset.
type Slice struct {
	Input  Node
	Offset int64
	Limit  int64
}

var (
	_ Node = BGP{}
	_ Node = PathPattern{}
	_ Node = Join{}
	_ Node = LeftJoin{}
	_ Node = Filter{}
	_ Node = Union{}
	_ Node = Minus{}
	_ Node = Graph{}
	_ Node = Extend{}
	_ Node = Values{}
	_ Node = Table{}
	_ Node = Service{}
	_ Node = Group{}
	_ Node = OrderBy{}
	_ Node = Project{}
	_ Node = Distinct{}
	_ Node = Reduced{}
	_ Node = Slice{}
)

func (BGP) node()         {}
func (PathPattern) node() {}
func (Join) node()        {}
func (LeftJoin) node()    {}
func (Filter) node()      {}
func (Union) node()       {}
func (Minus) node()       {}
func (Graph) node()       {}
func (Extend) node()      {}
func (Values) node()      {}
func (Table) node()       {}
func (Service) node()     {}
func (Group) node()       {}
func (OrderBy) node()     {}
func (Project) node()     {}
func (Distinct) node()    {}
func (Reduced) node()     {}
func (Slice) node()       {}

// Children implements Node.
func (BGP) Children() []Node { return nil }

// WithChildren implements Node.
func (n BGP) WithChildren(...Node) Node { return n }

// Children implements Node.
func (PathPattern) Children() []Node { return nil }

// WithChildren implements Node.
func (n PathPattern) WithChildren(...Node) Node { return n }

// Children implements Node.
func (Values) Children() []Node { return nil }

// WithChildren implements Node.
func (n Values) WithChildren(...Node) Node { return n }

// Children implements Node.
func (Table) Children() []Node { return nil }

// WithChildren implements Node.
func (n Table) WithChildren(...Node) Node { return n }

// Children implements Node.
func (n Join) Children() []Node { return []Node{n.Left, n.Right} }

// WithChildren implements Node.
func (n Join) WithChildren(c ...Node) Node { n.Left, n.Right = c[0], c[1]; return n }

// Children implements Node.
func (n LeftJoin) Children() []Node { return []Node{n.Left, n.Right} }

// WithChildren implements Node.
func (n LeftJoin) WithChildren(c ...Node) Node { n.Left, n.Right = c[0], c[1]; return n }

// Children implements Node.
func (n Union) Children() []Node { return []Node{n.Left, n.Right} }

// WithChildren implements Node.
func (n Union) WithChildren(c ...Node) Node { n.Left, n.Right = c[0], c[1]; return n }

// Children implements Node.
func (n Minus) Children() []Node { return []Node{n.Left, n.Right} }

// WithChildren implements Node.
func (n Minus) WithChildren(c ...Node) Node { n.Left, n.Right = c[0], c[1]; return n }

// Children implements Node.
func (n Filter) Children() []Node { return []Node{n.Input} }

// WithChildren implements Node.
func (n Filter) WithChildren(c ...Node) Node { n.Input = c[0]; return n }

// Children implements Node.
func (n Graph) Children() []Node { return []Node{n.Input} }

// WithChildren implements Node.
func (n Graph) WithChildren(c ...Node) Node { n.Input = c[0]; return n }

// Children implements Node.
func (n Extend) Children() []Node { return []Node{n.Input} }

// WithChildren implements Node.
func (n Extend) WithChildren(c ...Node) Node { n.Input = c[0]; return n }

// Children implements Node.
func (n Service) Children() []Node { return []Node{n.Input} }

// WithChildren implements Node.
func (n Service) WithChildren(c ...Node) Node { n.Input = c[0]; return n }

// Children implements Node.
func (n Group) Children() []Node { return []Node{n.Input} }

// WithChildren implements Node.
func (n Group) WithChildren(c ...Node) Node { n.Input = c[0]; return n }

// Children implements Node.
func (n OrderBy) Children() []Node { return []Node{n.Input} }

// WithChildren implements Node.
func (n OrderBy) WithChildren(c ...Node) Node { n.Input = c[0]; return n }

// Children implements Node.
func (n Project) Children() []Node { return []Node{n.Input} }

// WithChildren implements Node.
func (n Project) WithChildren(c ...Node) Node { n.Input = c[0]; return n }

// Children implements Node.
func (n Distinct) Children() []Node { return []Node{n.Input} }

// WithChildren implements Node.
func (n Distinct) WithChildren(c ...Node) Node { n.Input = c[0]; return n }

// Children implements Node.
func (n Reduced) Children() []Node { return []Node{n.Input} }

// WithChildren implements Node.
func (n Reduced) WithChildren(c ...Node) Node { n.Input = c[0]; return n }

// Children implements Node.
func (n Slice) Children() []Node { return []Node{n.Input} }

// WithChildren implements Node.
func (n Slice) WithChildren(c ...Node) Node { n.Input = c[0]; return n }
