package rewrite

import (
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/rewrite/algebra"
	"veneer/rewrite/sql"
)

// Op is a node of a plan's operator tree. Leaves are Scans, whose SQL the source
// runs; every other operator runs in-process (rewrite/exec) over the solutions of
// its inputs, with the meaning the algebra operator of the same name has (§18.5).
// The interface is sealed.
type Op interface{ op() }

// Scan runs one SQL statement and decodes each row into a solution. A nil Stmt
// means no triples map can produce an answer: the scan yields nothing and no SQL
// runs.
type Scan struct {
	Stmt sql.Stmt
	// SQL and Args are Stmt printed for the source's dialect.
	SQL  string
	Args []any
	// Kinds are the type families of the result columns, as the planner knows
	// them from the mapped tables; the source reads the values by them (the
	// database may not know: SQLite types values, not computed columns).
	Kinds []source.TypeKind
	// Slots decode each row: one per variable the SQL binds.
	Slots []Slot
	// Checks are equalities between two ways of building one variable's term that
	// SQL could not compare; a row whose check fails is dropped.
	Checks []Check
	// lateBlocks, in a plan that lifts VALUES data (see lifted), are the blocks
	// whose data Stmt's Late conditions wait for; SQL is printed for each run.
	lateBlocks []int
}

// Filter keeps the solutions for which every expression's effective boolean
// value is true.
type Filter struct {
	Input Op
	Exprs []algebra.Expr
}

// Extend binds Var to Expr's value; an error leaves Var unbound (§18.5 Extend).
type Extend struct {
	Input Op
	Var   algebra.Var
	Expr  algebra.Expr
}

// Join is the compatible-solution join of two inputs.
type Join struct{ Left, Right Op }

// LeftJoin is OPTIONAL: Left's solutions extended by each compatible Right
// solution for which Expr (nil: true) holds, or kept alone when none does.
type LeftJoin struct {
	Left, Right Op
	Expr        algebra.Expr
}

// Union concatenates two inputs.
type Union struct{ Left, Right Op }

// Minus removes Left solutions compatible with a Right solution sharing a
// variable with them.
type Minus struct{ Left, Right Op }

// Values yields inline data: each row gives a term or nil (UNDEF) per variable.
type Values struct {
	Vars []algebra.Var
	Rows [][]rdf.Term
	// block, in a plan that lifts VALUES data (see lifted), is the block of the
	// query text whose rows each run brings; 0 otherwise.
	block int
}

// Group partitions Input by Keys and computes the aggregates per group (§18.5
// Group and Aggregation); key variables are bound to their key values.
type Group struct {
	Input Op
	Keys  []algebra.GroupKey
	Aggs  []algebra.AggBinding
}

// Order sorts Input (§15.1: unbound < blank node < IRI < literal, then by value).
type Order struct {
	Input Op
	Conds []algebra.OrderCond
}

// Project keeps only Vars bound in each solution.
type Project struct {
	Input Op
	Vars  []algebra.Var
}

// Path evaluates a property path in-process (§18.4), asking the planner for
// each step's triples: the fallback for paths whose ends SQL cannot join (ends
// of several shapes). Graph is the graph the path runs in (nil: the default
// graph; otherwise a Const IRI).
type Path struct {
	S, O  algebra.Item
	Path  algebra.Path
	Graph algebra.Item
}

// PerGraph evaluates Input once in each named graph (§18.5: eval(D, Graph(?g,
// P)) joins eval(D(g), P) with ?g = g for every graph g): the fallback for
// patterns under GRAPH ?g whose own triple patterns do not carry the graph
// (sub-queries, VALUES, an empty group, paths). Names yields the graph names,
// bound to Var; each graph's Input is planned as GRAPH <g> { Input }.
type PerGraph struct {
	Var   algebra.Var
	Names Op
	Input algebra.Node
}

// Service sends a SELECT * over Pattern (a group graph pattern as SPARQL text)
// to the SPARQL endpoint Endpoint and yields the solutions it answers (SPARQL
// 1.1 Federated Query). As the right input of a Join it is
// a bind join: the executor evaluates the left input first and sends the
// distinct bindings of the variables both sides share along with the query,
// as VALUES. Vars are the variables the pattern binds. A Silent service that
// fails yields the single empty solution instead of an error.
type Service struct {
	Endpoint rdf.IRI
	Silent   bool
	Pattern  string
	Vars     []algebra.Var
}

// Distinct removes duplicate solutions.
type Distinct struct{ Input Op }

// Slice skips Offset solutions and keeps Limit of the rest (-1: all).
type Slice struct {
	Input         Op
	Offset, Limit int64
}

var (
	_ Op = (*Scan)(nil)
	_ Op = (*Filter)(nil)
	_ Op = (*Extend)(nil)
	_ Op = (*Join)(nil)
	_ Op = (*LeftJoin)(nil)
	_ Op = (*Union)(nil)
	_ Op = (*Minus)(nil)
	_ Op = (*Values)(nil)
	_ Op = (*Group)(nil)
	_ Op = (*Order)(nil)
	_ Op = (*Project)(nil)
	_ Op = (*Path)(nil)
	_ Op = (*PerGraph)(nil)
	_ Op = (*Service)(nil)
	_ Op = (*Distinct)(nil)
	_ Op = (*Slice)(nil)
)

func (*Scan) op()     {}
func (*Filter) op()   {}
func (*Extend) op()   {}
func (*Join) op()     {}
func (*LeftJoin) op() {}
func (*Union) op()    {}
func (*Minus) op()    {}
func (*Values) op()   {}
func (*Group) op()    {}
func (*Order) op()    {}
func (*Project) op()  {}
func (*Path) op()     {}
func (*PerGraph) op() {}
func (*Service) op()  {}
func (*Distinct) op() {}
func (*Slice) op()    {}

// inputs returns the operators op reads.
func inputs(op Op) []Op {
	switch op := op.(type) {
	case *Filter:
		return []Op{op.Input}
	case *Extend:
		return []Op{op.Input}
	case *Join:
		return []Op{op.Left, op.Right}
	case *LeftJoin:
		return []Op{op.Left, op.Right}
	case *Union:
		return []Op{op.Left, op.Right}
	case *Minus:
		return []Op{op.Left, op.Right}
	case *Group:
		return []Op{op.Input}
	case *Order:
		return []Op{op.Input}
	case *Project:
		return []Op{op.Input}
	case *PerGraph:
		return []Op{op.Names}
	case *Distinct:
		return []Op{op.Input}
	case *Slice:
		return []Op{op.Input}
	}
	return nil // Scan, Values, Path, Service
}

// withInputs returns a copy of op that reads in instead (as inputs orders them).
func withInputs(op Op, in []Op) Op {
	switch op := op.(type) {
	case *Filter:
		c := *op
		c.Input = in[0]
		return &c
	case *Extend:
		c := *op
		c.Input = in[0]
		return &c
	case *Join:
		return &Join{Left: in[0], Right: in[1]}
	case *LeftJoin:
		c := *op
		c.Left, c.Right = in[0], in[1]
		return &c
	case *Union:
		return &Union{Left: in[0], Right: in[1]}
	case *Minus:
		return &Minus{Left: in[0], Right: in[1]}
	case *Group:
		c := *op
		c.Input = in[0]
		return &c
	case *Order:
		c := *op
		c.Input = in[0]
		return &c
	case *Project:
		c := *op
		c.Input = in[0]
		return &c
	case *PerGraph:
		c := *op
		c.Names = in[0]
		return &c
	case *Distinct:
		return &Distinct{Input: in[0]}
	case *Slice:
		c := *op
		c.Input = in[0]
		return &c
	}
	return op
}
