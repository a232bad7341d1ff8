// Package mix is the benchmark's query mix: SPARQL queries of the kinds
// dashboards and federating engines send to veneer's demo mapping, each with a
// hand-written SQL twin that returns the same answer, and the rules that turn
// the twin's rows into the RDF terms the mapping would produce.
package mix

import (
	"context"
	"fmt"
	"net/url"
	"strconv"
	"strings"
	"time"

	"veneer/catalog"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
)

// Form is the query form, which decides the answer's shape.
type Form int

// The forms the mix uses.
const (
	Select Form = iota + 1
	Ask
	Construct
)

// Query is one query of the mix.
type Query struct {
	// Name is short and sorts in mix order, e.g. "01-point".
	Name string
	// Kind says what kind of query it is, in the words of the issue.
	Kind string
	Form Form
	// SPARQL is the query text veneer answers.
	SPARQL string
	// Ordered says the answer's order is part of it (ORDER BY).
	Ordered bool
	// Twin is the same question in hand-written SQL.
	Twin Twin
}

// Twin is a query's hand-written SQL and how its rows become RDF terms.
type Twin struct {
	// SQL has ? placeholders; Rebind gives them the dialect's spelling.
	SQL string
	// Args are the bind parameters.
	Args []any
	// Kinds are the result columns' kinds, one per column, passed to
	// source.Query so that every dialect decodes them alike.
	Kinds source.Kinds
	// Vars name the answer's variables; Terms build each from a row.
	Vars  []string
	Terms []TermFunc
	// Template, for CONSTRUCT, is instantiated with each row's terms.
	Template []Triple
}

// TermFunc builds one variable's term from a row of the twin's result, whose
// columns have the twin's Kinds; nil leaves the variable unbound.
type TermFunc func(row []any, kinds source.Kinds) rdf.Term

// Slot is a position of a template triple: a constant term, or the twin's
// variable of index Var when Term is nil.
type Slot struct {
	Term rdf.Term
	Var  int
}

// Triple is a CONSTRUCT template triple of a twin.
type Triple struct{ S, P, O Slot }

// Instantiate returns the template's triples for one solution, leaving out those
// with an unbound variable, as CONSTRUCT does (SPARQL 1.1 Query §16.2).
func (t Twin) Instantiate(sol []rdf.Term) []rdf.Triple {
	var out []rdf.Triple
	at := func(s Slot) rdf.Term {
		if s.Term != nil {
			return s.Term
		}
		return sol[s.Var]
	}
	for _, tt := range t.Template {
		s, p, o := at(tt.S), at(tt.P), at(tt.O)
		if s == nil || p == nil || o == nil {
			continue
		}
		out = append(out, rdf.Triple{S: s, P: p, O: o})
	}
	return out
}

// Rebind writes the ? placeholders of a twin's SQL as the dialect wants them:
// $1, $2, … for PostgreSQL. The twins' SQL has no ? inside a string literal.
func Rebind(sql string, d source.Dialect) string {
	if d != source.Postgres {
		return sql
	}
	var b strings.Builder
	n := 0
	for _, r := range sql {
		if r == '?' {
			n++
			fmt.Fprintf(&b, "$%d", n)
			continue
		}
		b.WriteRune(r)
	}
	return b.String()
}

// The mapping's namespaces (cmd/veneer/demo/mapping.ttl).
const (
	// Data is the base of the resources' IRIs.
	Data  = "https://data.veneer.example/windfarm/"
	vocab = "https://vocab.veneer.example/windfarm#"
)

// prologue declares the prefixes every query of the mix uses.
const prologue = `PREFIX wf: <https://vocab.veneer.example/windfarm#>
PREFIX rdf: <http://www.w3.org/1999/02/22-rdf-syntax-ns#>
PREFIX rdfs: <http://www.w3.org/2000/01/rdf-schema#>
PREFIX xsd: <http://www.w3.org/2001/XMLSchema#>
`

// Resource returns the IRI the mapping gives a resource: a path under Data, then
// the template's column values, each percent-encoded as R2RML §7.3 requires.
func Resource(path string, values ...string) rdf.IRI {
	var b strings.Builder
	b.WriteString(Data + path)
	for i, v := range values {
		if i > 0 {
			b.WriteByte('-')
		}
		b.WriteString(catalog.IRISafe(v))
	}
	return rdf.IRI(b.String())
}

// Params are the resources the mix asks about, chosen by position in the loaded
// tables so that they exist at every scale factor.
type Params struct {
	WorkOrder  string   // an order_number
	Turbine    string   // a turbine serial
	Site       string   // a site code
	Technician int64    // a technician_id
	Turbines   []string // twenty turbine serials, for the VALUES query
}

// ReadParams picks the resources from the loaded database: the middle work
// order, the turbine a third of the way down, the middle site and technician,
// and turbines spread over the whole table.
func ReadParams(ctx context.Context, src source.Source) (Params, error) {
	var p Params
	one := func(query string, args ...any) (any, error) {
		rows, err := src.Query(ctx, Rebind(query, src.Dialect()), args...)
		if err != nil {
			return nil, err
		}
		defer rows.Close()
		if !rows.Next() {
			if err := rows.Err(); err != nil {
				return nil, err
			}
			return nil, fmt.Errorf("no row for %s", query)
		}
		return rows.Values()[0], rows.Err()
	}
	count := func(table string) (int64, error) {
		v, err := one("SELECT COUNT(*) FROM " + table)
		if err != nil {
			return 0, err
		}
		n, ok := v.(int64)
		if !ok || n == 0 {
			return 0, fmt.Errorf("table %s is empty", table)
		}
		return n, nil
	}
	text := func(query string, id int64) (string, error) {
		v, err := one(query, id)
		if err != nil {
			return "", err
		}
		return fmt.Sprint(v), nil
	}
	orders, err := count("work_order")
	if err != nil {
		return p, err
	}
	turbines, err := count("turbine")
	if err != nil {
		return p, err
	}
	sites, err := count("site")
	if err != nil {
		return p, err
	}
	technicians, err := count("technician")
	if err != nil {
		return p, err
	}
	if p.WorkOrder, err = text("SELECT order_number FROM work_order WHERE work_order_id = ?", orders/2+1); err != nil {
		return p, err
	}
	if p.Turbine, err = text("SELECT serial FROM turbine WHERE turbine_id = ?", turbines/3+1); err != nil {
		return p, err
	}
	if p.Site, err = text("SELECT code FROM site WHERE site_id = ?", sites/2+1); err != nil {
		return p, err
	}
	p.Technician = technicians/2 + 1
	seen := map[int64]bool{}
	for k := range int64(20) {
		id := 1 + k*turbines/20
		if seen[id] {
			continue
		}
		seen[id] = true
		serial, err := text("SELECT serial FROM turbine WHERE turbine_id = ?", id)
		if err != nil {
			return p, err
		}
		p.Turbines = append(p.Turbines, serial)
	}
	return p, nil
}

// ArgsQuery encodes the twin's bind parameters as a URL query string, one
// "a" parameter each in order: what the SQL handler's client sends, as a
// client of a hand-written service sends the values it asks about.
func (t Twin) ArgsQuery() string {
	v := url.Values{}
	for _, a := range t.Args {
		switch a := a.(type) {
		case string:
			v.Add("a", a)
		case int64:
			v.Add("a", strconv.FormatInt(a, 10))
		case float64:
			v.Add("a", strconv.FormatFloat(a, 'g', -1, 64))
		case time.Time:
			v.Add("a", a.Format(time.RFC3339Nano))
		default:
			panic(fmt.Sprintf("mix: a twin argument of type %T", a))
		}
	}
	return v.Encode()
}

// ReadArgs decodes the "a" parameters that ArgsQuery wrote, each into the Go
// type of the twin's own parameter at its place.
func (t Twin) ReadArgs(values []string) ([]any, error) {
	if len(values) != len(t.Args) {
		return nil, fmt.Errorf("%d arguments, want %d", len(values), len(t.Args))
	}
	args := make([]any, len(values))
	for i, s := range values {
		var err error
		switch t.Args[i].(type) {
		case string:
			args[i] = s
		case int64:
			args[i], err = strconv.ParseInt(s, 10, 64)
		case float64:
			args[i], err = strconv.ParseFloat(s, 64)
		case time.Time:
			args[i], err = time.Parse(time.RFC3339Nano, s)
		}
		if err != nil {
			return nil, fmt.Errorf("argument %d: %w", i+1, err)
		}
	}
	return args, nil
}
