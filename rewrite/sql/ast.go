// Package sql is the SQL syntax tree the planner builds and the printers that turn
// it into the text of one dialect (PostgreSQL, MySQL/MariaDB, SQLite) with its bind
// parameters. Values never appear in the text: every Param becomes a placeholder.
package sql

import "veneer/catalog"

// Stmt is a query statement: a *Select or a *Union.
type Stmt interface{ stmt() }

// Select is one SELECT block.
type Select struct {
	Distinct bool
	Columns  []Column
	From     []From
	Where    Expr
	GroupBy  []Expr
	Having   Expr
	OrderBy  []Order
	// Limit and Offset are bound as parameters, but for the first row
	// alone (a Limit of 1 and no Offset), which the statement's text says;
	// nil means none. PostgreSQL plans a statement with a bound LIMIT anew
	// each time it runs, and existence probes (ASK) are frequent and cheap.
	Limit, Offset *int64
}

// Union combines SELECT blocks; All keeps duplicates. OrderBy, Limit and Offset
// apply to the combined rows and may only name output columns.
type Union struct {
	All     bool
	Selects []*Select
	OrderBy []Order
	Limit   *int64
	Offset  *int64
}

func (*Select) stmt() {}
func (*Union) stmt()  {}

// Column is one output column.
type Column struct {
	Expr  Expr
	Alias string
}

// From is a FROM-list item: *Table or *Derived, optionally left-joined.
type From interface{ from() }

// Table is a named table or view with an alias. Name holds the parts of a possibly
// schema-qualified name.
type Table struct {
	Name  []catalog.Ident
	Alias string
	// Key identifies the logical table for the planner's rules (two FROM items
	// with one Key read the same rows); the printer ignores it.
	Key string
}

// Derived is a sub-query in FROM (an R2RML view, or a nested plan).
type Derived struct {
	// Query is either SQL text written by a mapping author (an R2RML view) or a
	// statement the planner built; exactly one is set.
	Query string
	Stmt  Stmt
	Alias string
}

// LeftJoin is a LEFT OUTER JOIN of the item before it in the FROM list and Right.
type LeftJoin struct {
	Right From
	On    Expr
}

func (*Table) from()    {}
func (*Derived) from()  {}
func (*LeftJoin) from() {}

// Order is one ORDER BY item. NULLs sort first ascending and last descending in
// every dialect, as SPARQL puts unbound first (§15.1); NotNull says the value is
// never NULL, so the placement need not be spelled out (which lets PostgreSQL
// read a plain index in order).
type Order struct {
	Expr    Expr
	Desc    bool
	NotNull bool
}

// Expr is an SQL expression.
type Expr interface{ expr() }

// ColumnRef names a column of a FROM item.
type ColumnRef struct {
	Table  string
	Column catalog.Ident
}

// Param is a value bound as a parameter.
type Param struct{ Value any }

// Int is an integer the planner itself chose (a branch number, a constant 1); it
// never carries a value from a request, which always travels as a Param.
type Int int64

// Null is the SQL NULL.
type Null struct{}

// Binary is a binary operator: "=", "<>", "<", "<=", ">", ">=", "AND", "OR",
// "+", "-", "*", "/".
type Binary struct {
	Op   string
	L, R Expr
	// Exact asks for a code-point (binary) comparison of strings, whatever the
	// column's collation; the MySQL printer honours it, the others compare so anyway.
	Exact bool
}

// Not is logical negation.
type Not struct{ X Expr }

// IsNull tests for NULL (or NOT NULL when Not is set).
type IsNull struct {
	X   Expr
	Not bool
}

// Func is a function call, printed as written.
type Func struct {
	Name string
	Args []Expr
}

// Exists is EXISTS (sub-query).
type Exists struct {
	Stmt Stmt
	Not  bool
}

// Subquery is a scalar sub-query: a statement of one column and at most one
// row, used as a value. It reads no column of the statement around it.
type Subquery struct{ Stmt Stmt }

func (ColumnRef) expr() {}
func (Param) expr()     {}
func (Int) expr()       {}
func (Null) expr()      {}
func (Binary) expr()    {}
func (Not) expr()       {}
func (IsNull) expr()    {}
func (Func) expr()      {}
func (Exists) expr()    {}
func (Subquery) expr()  {}

// And joins conditions with AND, skipping nil ones; nil when there are none.
func And(conds ...Expr) Expr {
	var out Expr
	for _, c := range conds {
		switch {
		case c == nil:
		case out == nil:
			out = c
		default:
			out = Binary{Op: "AND", L: out, R: c}
		}
	}
	return out
}

// Cast converts X to the named SQL type.
type Cast struct {
	X    Expr
	Type string
}

func (Cast) expr() {}

// Collate compares X by code point, whatever its column's collation (for ORDER BY
// and comparisons of strings).
type Collate struct{ X Expr }

func (Collate) expr() {}

// MapColumns rebuilds e with every column reference replaced by f's result.
func MapColumns(e Expr, f func(ColumnRef) ColumnRef) Expr {
	switch x := e.(type) {
	case ColumnRef:
		return f(x)
	case Binary:
		x.L, x.R = MapColumns(x.L, f), MapColumns(x.R, f)
		return x
	case Not:
		return Not{X: MapColumns(x.X, f)}
	case IsNull:
		x.X = MapColumns(x.X, f)
		return x
	case Cast:
		x.X = MapColumns(x.X, f)
		return x
	case Collate:
		return Collate{X: MapColumns(x.X, f)}
	case Case:
		return Case{When: MapColumns(x.When, f), Then: MapColumns(x.Then, f)}
	case StrTest:
		return StrTest{Op: x.Op, X: MapColumns(x.X, f), Arg: MapColumns(x.Arg, f), Len: x.Len}
	case In:
		list := make([]Expr, len(x.List))
		for i, a := range x.List {
			list[i] = MapColumns(a, f)
		}
		return In{X: MapColumns(x.X, f), List: list, Exact: x.Exact}
	case Func:
		args := make([]Expr, len(x.Args))
		for i, a := range x.Args {
			args[i] = MapColumns(a, f)
		}
		return Func{Name: x.Name, Args: args}
	case Late:
		x.renames = append(x.renames[:len(x.renames):len(x.renames)], f)
		return x
	case Agg:
		if x.Arg != nil {
			x.Arg = MapColumns(x.Arg, f)
		}
		return x
	case DatePart:
		x.X = MapColumns(x.X, f)
		return x
	case GroupConcat:
		x.X, x.Sep = MapColumns(x.X, f), MapColumns(x.Sep, f)
		return x
	case Exists:
		// A correlated sub-query reads columns of the outer query.
		return Exists{Stmt: mapStmt(x.Stmt, f), Not: x.Not}
	}
	// Param, Int and Null.
	return e
}

// Late is a condition that is known only when the statement is printed
// (PrintLate): one built from inline data that each run of a plan brings.
// Column renamings applied to it (MapColumns) apply to the condition it stands
// for.
type Late struct {
	ID      int
	renames []func(ColumnRef) ColumnRef
}

func (Late) expr() {}

// Agg is an aggregate call: Name(DISTINCT Arg), or COUNT(*) when Arg is nil.
type Agg struct {
	Name     string
	Distinct bool
	Arg      Expr
}

func (Agg) expr() {}

// In is X IN (List...); Exact compares strings by code point, as Binary's does.
type In struct {
	X     Expr
	List  []Expr
	Exact bool
}

func (In) expr() {}

// Recursive is a FROM item computing a recursive common table expression:
// (WITH RECURSIVE Name(Columns) AS (Anchor UNION Step) SELECT * FROM Name) Alias.
// Step reads Name as a table; UNION (not UNION ALL) ends the recursion on cycles.
type Recursive struct {
	Name         string
	Columns      []string
	Anchor, Step Stmt
	Alias        string
}

func (*Recursive) from() {}

// Case is CASE WHEN When THEN Then END (NULL otherwise).
type Case struct {
	When, Then Expr
}

func (Case) expr() {}

// StrTest is a case-sensitive substring test of string X against the string
// Arg: Op is "contains", "starts" or "ends". Len is Arg's length in characters
// (the planner knows it; a length function would leave a parameter's type
// undecided). Each dialect has its own spelling.
type StrTest struct {
	Op          string
	X, Arg, Len Expr
}

func (StrTest) expr() {}
