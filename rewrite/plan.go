// Package rewrite is veneer's planner: it turns a SPARQL algebra expression and a
// mapping catalog into a Plan, one SQL statement that computes what SQL can, and
// the residual operators the executor (rewrite/exec) applies in-process to the
// decoded solutions.
package rewrite

import (
	"fmt"

	"veneer/catalog"
	"veneer/catalog/source"
	"veneer/rewrite/algebra"
	"veneer/rewrite/sql"
)

// Plan is a query ready to run: the SQL statement, how to decode its rows into
// solutions, and what remains to be done in-process.
type Plan struct {
	Form algebra.Form
	// Vars are the result variables, in result order.
	Vars []algebra.Var
	// Stmt is the SQL statement; nil when no triples map can produce an answer, so
	// the result is empty without asking the database.
	Stmt sql.Stmt
	// SQL and Args are Stmt printed for the source's dialect.
	SQL  string
	Args []any
	// Slots decode each row: one per variable the SQL binds.
	Slots []Slot
	// Checks are equalities between two ways of building one variable's term that
	// SQL could not compare; a row whose check fails is dropped.
	Checks []Check
	// Filters are evaluated in-process on each decoded solution (a conjunction).
	Filters []algebra.Expr
	// Distinct removes duplicate result solutions in-process.
	Distinct bool
	// Offset and Limit slice the result in-process; Limit -1 means no limit.
	Offset, Limit int64
}

// Slot says how one variable's term is built from a row: by the first of its
// Groups whose columns are not NULL; none means the variable is unbound.
type Slot struct {
	Var    algebra.Var
	Groups []Group
}

// Group builds a term with one term map from some of the row's columns.
type Group struct {
	Map catalog.TermMap
	// Cols are the row positions of the map's columns (Map.Columns() order), or for
	// a constant map, the position of a marker column that is NULL in rows of the
	// other union branches.
	Cols  []int
	Kinds []source.TypeKind
}

// Check requires that the term Slot builds from the row equals the term Group builds.
type Check struct {
	Slot  int
	Group Group
}

// Planner plans queries over one catalog on one source.
type Planner struct {
	cat       *catalog.Catalog
	cols      *catalog.Columns
	dialect   source.Dialect
	producers []producer
}

// NewPlanner prepares a planner; cols are the catalog's columns as probed on the
// source (catalog.ProbeColumns).
func NewPlanner(cat *catalog.Catalog, cols *catalog.Columns, d source.Dialect) *Planner {
	return &Planner{cat: cat, cols: cols, dialect: d, producers: producersOf(cat)}
}

// Unsupported is returned for queries that use a part of SPARQL the planner does
// not translate yet; the server reports it as a client error naming the part.
type Unsupported struct{ What string }

func (e *Unsupported) Error() string { return "not supported yet: " + e.What }

// Plan plans a translated query.
func (pl *Planner) Plan(q *algebra.Query) (*Plan, error) {
	if q.Form != algebra.Select {
		return nil, &Unsupported{What: "query forms other than SELECT"}
	}
	p := &Plan{Form: q.Form, Vars: q.Vars, Limit: -1}
	var (
		distinct      bool
		offset, limit int64 = 0, -1
		project       []algebra.Var
		filters       []algebra.Expr
	)
	n := q.Root
	if s, ok := n.(algebra.Slice); ok {
		offset, limit, n = s.Offset, s.Limit, s.Input
	}
	switch d := n.(type) {
	case algebra.Distinct:
		distinct, n = true, d.Input
	case algebra.Reduced:
		distinct, n = true, d.Input
	}
	if pr, ok := n.(algebra.Project); ok {
		project, n = pr.Vars, pr.Input
	} else {
		return nil, fmt.Errorf("planner: the query root has no projection")
	}
	for {
		f, ok := n.(algebra.Filter)
		if !ok {
			break
		}
		filters = append(filters, f.Exprs...)
		n = f.Input
	}
	bgp, ok := n.(algebra.BGP)
	if !ok {
		return nil, &Unsupported{What: fmt.Sprintf("the graph pattern %s", opName(n))}
	}
	u := pl.unfold(bgp)
	p.Filters = pl.pushFilters(u, filters)
	sqlComplete := len(p.Filters) == 0 && !u.hasChecks()
	stmt, slots, checks := pl.statement(u, project, distinct, sqlComplete)
	p.Slots, p.Checks = slots, checks
	if stmt != nil && sqlComplete {
		setSlice(stmt, offset, limit)
	} else {
		p.Distinct, p.Offset, p.Limit = distinct, offset, limit
	}
	if stmt != nil {
		p.Stmt = stmt
		p.SQL, p.Args = sql.Print(stmt, pl.dialect)
	}
	return p, nil
}

func setSlice(stmt sql.Stmt, offset, limit int64) {
	var lp, op *int64
	if limit >= 0 {
		lp = &limit
	}
	if offset > 0 {
		op = &offset
	}
	switch s := stmt.(type) {
	case *sql.Select:
		s.Limit, s.Offset = lp, op
	case *sql.Union:
		s.Limit, s.Offset = lp, op
	}
}

func opName(n algebra.Node) string {
	switch n.(type) {
	case algebra.Join:
		return "Join (group of several patterns)"
	case algebra.LeftJoin:
		return "OPTIONAL"
	case algebra.Union:
		return "UNION"
	case algebra.Minus:
		return "MINUS"
	case algebra.Graph:
		return "GRAPH"
	case algebra.Extend:
		return "BIND"
	case algebra.Values:
		return "VALUES"
	case algebra.Group:
		return "GROUP BY / aggregates"
	case algebra.OrderBy:
		return "ORDER BY"
	case algebra.PathPattern:
		return "property paths"
	case algebra.Service:
		return "SERVICE"
	}
	return fmt.Sprintf("%T", n)
}
