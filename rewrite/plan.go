// Package rewrite is veneer's planner: it turns a SPARQL algebra expression and a
// mapping catalog into a Plan, one SQL statement that computes what SQL can, and
// the residual operators the executor (rewrite/exec) applies in-process to the
// decoded solutions.
package rewrite

import (
	"fmt"
	"strconv"

	"veneer/catalog/rdf"

	"veneer/catalog"
	"veneer/catalog/source"
	"veneer/rewrite/algebra"
	"veneer/rewrite/sql"
)

// Plan is a query ready to run: an operator tree whose leaves are SQL scans, and
// what the query form needs to turn the root's solutions into a result.
type Plan struct {
	Form algebra.Form
	// Vars are the result variables of SELECT, in result order.
	Vars []algebra.Var
	// Root yields the solutions the form consumes.
	Root Op
	// Template is the CONSTRUCT template (Hidden variables stand for template blank
	// nodes, fresh per solution).
	Template []algebra.Triple
	// Describe lists the resources of DESCRIBE: IRIs, or variables bound by Root.
	Describe []algebra.Item
	// Base is the base IRI in effect after the query's prologue (its last BASE,
	// or the request's), which IRI() and URI() resolve against; empty for none.
	Base string
	// Planner plans the patterns that evaluation meets on the way: EXISTS with a
	// solution substituted in, and the description of each DESCRIBE resource,
	// over the query's dataset.
	Planner Subplanner
	// lifted, in a plan that lifts its query's VALUES data, is the planning
	// state whose Late conditions each run's data decides (see bind).
	lifted *query
}

// Subplanner plans the patterns a running query meets.
type Subplanner interface {
	PlanPattern(n algebra.Node) (Op, error)
}

// Slot says how one variable's term is built from a row: by the first of its
// Builders whose columns are not NULL; none means the variable is unbound.
type Slot struct {
	Var      algebra.Var
	Builders []Builder
}

// Builder builds a term with one term map from some of the row's columns.
type Builder struct {
	Map catalog.TermMap
	// Cols are the row positions of the map's columns (Map.Columns() order), or for
	// a constant map, the position of a marker column that is NULL in rows of the
	// other union branches.
	Cols  []int
	Kinds []source.TypeKind
	// ValidIRI says that every IRI the map builds is a valid absolute IRI
	// as it stands: the map is an IRI template whose text starts with a
	// scheme and passes Template.CheckIRI, and its values are IRI-safe
	// encoded (R2RML §7.3), so the executor checks no IRI it builds.
	ValidIRI bool
}

// newBuilder returns the Builder of m, whose columns are of the given kinds
// (their positions are the caller's to add).
func newBuilder(m catalog.TermMap, kinds []source.TypeKind) Builder {
	parts := m.Template.Parts
	valid := m.Kind == catalog.TemplateMap && m.TermType == rdf.KindIRI && len(parts) > 0 &&
		parts[0].Column == "" && rdf.IsAbsoluteIRI(parts[0].Text) && m.Template.CheckIRI() == nil
	return Builder{Map: m, Kinds: kinds, ValidIRI: valid}
}

// Check requires that the term Slot builds from the row equals the term Builder
// builds, when the Builder's columns are not NULL.
type Check struct {
	Slot    int
	Builder Builder
}

// Limits bound the SQL one query may turn into.
type Limits struct {
	// MaxUnions caps the union branches a pattern may unfold into.
	MaxUnions int
	// MaxTables caps the tables one SELECT of the statement may join.
	MaxTables int
}

// DefaultLimits are the limits a planner starts with.
func DefaultLimits() Limits { return Limits{MaxUnions: 512, MaxTables: 64} }

// Planner plans queries over one catalog on one source.
type Planner struct {
	cat       *catalog.Catalog
	cols      *catalog.Columns
	dialect   source.Dialect
	producers []producer
	// inDefault are the candidates of a pattern in the default graph when
	// the query names no dataset, the common case: the producers of the
	// default graph. Read only.
	inDefault []candidate
	limits    Limits
	// keys are the column sets that determine a row, and tables the logical
	// tables, by logical table key.
	keys   map[string][][]string
	tables map[string]catalog.LogicalTable
	// cache holds the plans of recent requests.
	cache *planCache
}

// planCacheSize is how many recent requests keep their plans; enough for the
// queries of many dashboards.
const planCacheSize = 512

// NewPlanner prepares a planner; cols are the catalog's columns as probed on the
// source (catalog.ProbeColumns).
func NewPlanner(cat *catalog.Catalog, cols *catalog.Columns, d source.Dialect) *Planner {
	pl := &Planner{cat: cat, cols: cols, dialect: d, producers: producersOf(cat),
		limits: DefaultLimits(), keys: map[string][][]string{}, tables: map[string]catalog.LogicalTable{},
		cache: newPlanCache(planCacheSize)}
	for i := range pl.producers {
		if p := &pl.producers[i]; p.inDefaultGraph() {
			pl.inDefault = append(pl.inDefault, candidate{p: p})
		}
	}
	for _, tm := range cat.Maps {
		pl.keys[tm.Table.Key()] = cols.Keys(tm.Table)
		pl.tables[tm.Table.Key()] = tm.Table
	}
	return pl
}

// SetLimits replaces the planner's limits.
func (pl *Planner) SetLimits(l Limits) {
	pl.limits = l
	pl.cache = newPlanCache(planCacheSize) // plans made under other limits
}

// Dialect reports the SQL dialect the planner writes.
func (pl *Planner) Dialect() source.Dialect { return pl.dialect }

// Unsupported is returned for queries that use a part of SPARQL veneer does not
// answer yet; the server reports it as a client error naming the part.
type Unsupported struct{ What string }

func (e *Unsupported) Error() string { return "not supported yet: " + e.What }

// TooComplex is returned for a query whose SQL would exceed the planner's limits.
type TooComplex struct{ What string }

func (e *TooComplex) Error() string { return "query too complex: " + e.What }

func itoa(n int) string { return strconv.Itoa(n) }

// Plan plans a translated query.
func (pl *Planner) Plan(q *algebra.Query) (*Plan, error) {
	return pl.plan(q, &query{pl: pl, dataset: q.Dataset})
}

// plan plans a translated query with the planning state qs.
func (pl *Planner) plan(q *algebra.Query, qs *query) (*Plan, error) {
	pattern := q.Root
	if q.Form == algebra.Ask {
		// ASK needs one solution at most, and none of its variables: the SQL
		// reads no more than it must and stops at the first row.
		pattern = algebra.Slice{Input: algebra.Project{Input: pattern, Vars: []algebra.Var{}}, Limit: 1}
	}
	root, err := qs.op(pattern, nil)
	if err != nil {
		return nil, err
	}
	sub := inDataset{pl: pl, dataset: q.Dataset}
	return &Plan{Form: q.Form, Vars: q.Vars, Root: root, Template: q.Template, Describe: q.Describe, Planner: sub}, nil
}

// PlanPattern plans one algebra expression over the service's own dataset: the
// largest subtrees SQL can express become Scans, and the operators above them
// run in-process.
func (pl *Planner) PlanPattern(n algebra.Node) (Op, error) {
	return inDataset{pl: pl}.PlanPattern(n)
}

// inDataset plans patterns over one RDF dataset.
type inDataset struct {
	pl      *Planner
	dataset algebra.Dataset
}

// PlanPattern implements Subplanner.
func (d inDataset) PlanPattern(n algebra.Node) (Op, error) {
	q := &query{pl: d.pl, dataset: d.dataset}
	return q.op(n, nil)
}

// op plans n in the graph context (nil: the default graph).
func (q *query) op(n algebra.Node, graph algebra.Item) (Op, error) {
	if r, mod, err := q.relation(n, graph); err != nil {
		return nil, err
	} else if r != nil {
		return q.scan(r, mod)
	}
	switch n := n.(type) {
	case algebra.Filter:
		// Push what SQL can evaluate into the input's statement, keep the rest here.
		if r, mod, err := q.relation(n.Input, graph); err != nil {
			return nil, err
		} else if r != nil && mod.limit < 0 && mod.offset == 0 {
			residual := q.pushFilters(r, n.Exprs)
			in, err := q.scan(r, mod)
			if err != nil {
				return nil, err
			}
			return &Filter{Input: in, Exprs: residual}, nil
		}
		in, err := q.op(n.Input, graph)
		if err != nil {
			return nil, err
		}
		return &Filter{Input: in, Exprs: n.Exprs}, nil
	case algebra.Extend:
		in, err := q.op(n.Input, graph)
		if err != nil {
			return nil, err
		}
		return &Extend{Input: in, Var: n.Var, Expr: n.Expr}, nil
	case algebra.Join:
		if s, ok := n.Right.(algebra.Service); ok {
			// A bind join: the service hears the left side's bindings.
			svc, err := service(s)
			if err != nil {
				return nil, err
			}
			l, err := q.op(n.Left, graph)
			if err != nil {
				return nil, err
			}
			return &Join{Left: l, Right: svc}, nil
		}
		if vals, other, ok := valuesSide(n); ok {
			// Data SQL cannot join exactly (UNDEF, repeated rows, variables the
			// pattern does not bind) still narrows the scan: the in-process join
			// then sees only rows whose values the data names.
			if r, mod, err := q.relation(other, graph); err != nil {
				return nil, err
			} else if r != nil && plain(mod) && q.prefilter(r, vals) {
				scan, err := q.scan(r, mod)
				if err != nil {
					return nil, err
				}
				return &Join{Left: q.values(vals), Right: scan}, nil
			}
		}
		l, r, err := q.pair(n.Left, n.Right, graph)
		if err != nil {
			return nil, err
		}
		return &Join{Left: l, Right: r}, nil
	case algebra.LeftJoin:
		l, r, err := q.pair(n.Left, n.Right, graph)
		if err != nil {
			return nil, err
		}
		return &LeftJoin{Left: l, Right: r, Expr: n.Expr}, nil
	case algebra.Union:
		l, r, err := q.pair(n.Left, n.Right, graph)
		if err != nil {
			return nil, err
		}
		return &Union{Left: l, Right: r}, nil
	case algebra.Minus:
		l, r, err := q.pair(n.Left, n.Right, graph)
		if err != nil {
			return nil, err
		}
		return &Minus{Left: l, Right: r}, nil
	case algebra.Graph:
		if v, isVar := n.Name.(algebra.Var); isVar && !carriesGraph(n.Input) {
			names, err := q.scan(q.graphNames(v), modifiers{vars: []algebra.Var{v}, distinct: true, limit: -1})
			if err != nil {
				return nil, err
			}
			return &PerGraph{Var: v, Names: names, Input: n.Input}, nil
		}
		return q.op(n.Input, n.Name)
	case algebra.Values:
		return q.values(n), nil
	case algebra.Table:
		if n.Empty {
			return &Values{}, nil
		}
		return &Values{Rows: [][]rdf.Term{{}}}, nil
	case algebra.Group:
		if op, err := q.averages(n, graph); op != nil || err != nil {
			return op, err
		}
		in, err := q.op(n.Input, graph)
		if err != nil {
			return nil, err
		}
		return &Group{Input: in, Keys: n.Keys, Aggs: n.Aggs}, nil
	case algebra.OrderBy:
		in, err := q.op(n.Input, graph)
		if err != nil {
			return nil, err
		}
		return &Order{Input: in, Conds: n.Conds}, nil
	case algebra.Project:
		in, err := q.op(n.Input, graph)
		if err != nil {
			return nil, err
		}
		return &Project{Input: in, Vars: n.Vars}, nil
	case algebra.Distinct:
		in, err := q.op(n.Input, graph)
		if err != nil {
			return nil, err
		}
		return &Distinct{Input: in}, nil
	case algebra.Reduced:
		in, err := q.op(n.Input, graph)
		if err != nil {
			return nil, err
		}
		return &Distinct{Input: in}, nil
	case algebra.Slice:
		in, err := q.op(n.Input, graph)
		if err != nil {
			return nil, err
		}
		return &Slice{Input: in, Offset: n.Offset, Limit: n.Limit}, nil
	case algebra.PathPattern:
		if _, isVar := graph.(algebra.Var); isVar {
			return nil, &Unsupported{What: "a property path inside GRAPH ?var whose ends SQL cannot join"}
		}
		return &Path{S: n.S, O: n.O, Path: n.Path, Graph: graph}, nil
	case algebra.Service:
		return service(n)
	}
	return nil, &Unsupported{What: fmt.Sprintf("the algebra operator %T", n)}
}

// service plans SERVICE <iri> { ... }. The remote endpoint has its own
// dataset: the graph context does not reach it.
func service(n algebra.Service) (Op, error) {
	c, ok := n.Endpoint.(algebra.Const)
	iri, isIRI := c.Term.(rdf.IRI)
	if !ok || !isIRI {
		return nil, &Unsupported{What: "SERVICE with a variable endpoint"}
	}
	s := &Service{Endpoint: iri, Silent: n.Silent, Pattern: n.Pattern}
	for _, v := range algebra.InScope(n.Input) {
		if !v.Hidden() {
			s.Vars = append(s.Vars, v)
		}
	}
	return s, nil
}

// averages plans a grouping whose only obstacle to SQL is AVG: each AVG(x)
// becomes SUM(x) and COUNT(x) in SQL, divided in-process with SPARQL's own
// arithmetic (§18.5.1.4 Avg = Sum / Count, 0 for no values), which SQL's AVG
// would round differently in each dialect. nil when that does not help.
func (q *query) averages(n algebra.Group, graph algebra.Item) (Op, error) {
	var aggs []algebra.AggBinding
	type avg struct{ v, sum, count algebra.Var }
	var avgs []avg
	for _, a := range n.Aggs {
		if a.Agg.Name != "AVG" {
			aggs = append(aggs, a)
			continue
		}
		x := avg{v: a.Var, sum: q.fresh(), count: q.fresh()}
		sum, count := a.Agg, a.Agg
		sum.Name, count.Name = "SUM", "COUNT"
		aggs = append(aggs, algebra.AggBinding{Var: x.sum, Agg: sum}, algebra.AggBinding{Var: x.count, Agg: count})
		avgs = append(avgs, x)
	}
	if len(avgs) == 0 {
		return nil, nil
	}
	split := algebra.Group{Input: n.Input, Keys: n.Keys, Aggs: aggs}
	r, mod, err := q.relation(split, graph)
	if r == nil || err != nil {
		return nil, err
	}
	var op Op
	if op, err = q.scan(r, mod); err != nil {
		return nil, err
	}
	zero := algebra.Const{Term: rdf.NewTyped("0", rdf.XSDInteger)}
	for _, x := range avgs {
		op = &Extend{Input: op, Var: x.v, Expr: algebra.Call{Op: "IF", Args: []algebra.Expr{
			algebra.Call{Op: "=", Args: []algebra.Expr{x.count, zero}},
			zero,
			algebra.Call{Op: "/", Args: []algebra.Expr{x.sum, x.count}},
		}}}
	}
	return op, nil
}

// carriesGraph reports whether every solution of n comes from triple patterns
// read in the graph context, so that GRAPH ?g can bind ?g through them. Other
// parts (a sub-query, which hides the graph; an empty group; a path with
// zero-length steps) must be evaluated graph by graph; parts that read no graph
// at all (VALUES, BIND of constants) may join those that carry it.
func carriesGraph(n algebra.Node) bool {
	switch n := n.(type) {
	case algebra.BGP:
		return len(n.Patterns) > 0
	case algebra.Join:
		return carriesGraph(n.Left) && (carriesGraph(n.Right) || readsNoGraph(n.Right)) ||
			readsNoGraph(n.Left) && carriesGraph(n.Right)
	case algebra.LeftJoin, algebra.Minus:
		l, r := n.Children()[0], n.Children()[1]
		return carriesGraph(l) && (carriesGraph(r) || readsNoGraph(r))
	case algebra.Union:
		return carriesGraph(n.Left) && carriesGraph(n.Right)
	case algebra.Filter, algebra.Extend, algebra.Graph:
		return carriesGraph(n.Children()[0])
	}
	return false
}

// readsNoGraph reports whether n's solutions do not depend on the data.
func readsNoGraph(n algebra.Node) bool {
	switch n := n.(type) {
	case algebra.Values, algebra.Table:
		return true
	case algebra.BGP:
		return len(n.Patterns) == 0
	case algebra.Extend:
		return readsNoGraph(n.Input)
	}
	return false
}

func (q *query) pair(l, r algebra.Node, graph algebra.Item) (Op, Op, error) {
	lo, err := q.op(l, graph)
	if err != nil {
		return nil, nil, err
	}
	ro, err := q.op(r, graph)
	if err != nil {
		return nil, nil, err
	}
	return lo, ro, nil
}

// scan closes a relation into a Scan.
func (q *query) scan(r *rel, mod modifiers) (Op, error) {
	if len(r.branches) == 0 {
		return &Scan{}, nil
	}
	for _, b := range r.branches {
		if len(b.from) > q.pl.limits.MaxTables {
			return nil, &TooComplex{What: fmt.Sprintf("one SELECT would join %d tables, more than the limit of %d", len(b.from), q.pl.limits.MaxTables)}
		}
	}
	c, ok := q.closeRel(r, mod)
	if !ok {
		return nil, fmt.Errorf("rewrite: cannot close a relation planned as closable")
	}
	s := &Scan{Stmt: c.stmt, Kinds: kindsOf(c.types), Slots: c.slots, Checks: c.checks}
	s.SQL, s.Args = sql.PrintLate(c.stmt, q.pl.dialect, func(l sql.Late) sql.Expr {
		s.lateBlocks = append(s.lateBlocks, q.lates[l.ID].block)
		return nil
	})
	if s.lateBlocks != nil {
		s.SQL, s.Args = "", nil // printed with each run's data
	}
	return s, nil
}

// values plans inline data.
func (q *query) values(n algebra.Values) *Values {
	v := &Values{Vars: n.Vars, Rows: n.Rows}
	if q.lift {
		v.block = n.Block
	}
	return v
}
