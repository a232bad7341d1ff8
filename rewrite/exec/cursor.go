// Package exec runs plans: it sends a plan's SQL to the source, decodes each row
// into RDF terms, applies the residual operators (filters, distinct, slice) with
// SPARQL's semantics, and hands out solutions through a cursor.
package exec

import (
	"context"
	"fmt"
	"strings"

	"veneer/catalog"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/rewrite"
	"veneer/rewrite/algebra"
)

// Cursor iterates over the solutions of a plan, like database/sql.Rows.
type Cursor struct {
	ctx  context.Context
	plan *rewrite.Plan
	rows source.Rows
	// internal holds the decoded terms of the plan's slots; out the result solution.
	internal map[algebra.Var]rdf.Term
	out      []rdf.Term
	seen     map[string]struct{}
	skipped  int64
	emitted  int64
	err      error
	done     bool
}

// Run starts a plan on src. The context governs the whole iteration: cancelling it
// cancels the SQL statement.
func Run(ctx context.Context, src source.Source, p *rewrite.Plan) (*Cursor, error) {
	for _, f := range p.Filters {
		if err := Supported(f); err != nil {
			return nil, &Error{Kind: BadQuery, Err: err}
		}
	}
	c := &Cursor{ctx: ctx, plan: p, internal: map[algebra.Var]rdf.Term{}, out: make([]rdf.Term, len(p.Vars))}
	if p.Distinct {
		c.seen = map[string]struct{}{}
	}
	if p.Stmt == nil {
		c.done = true
		return c, nil
	}
	rows, err := src.Query(ctx, p.SQL, p.Args...)
	if err != nil {
		return nil, fmt.Errorf("running the query's SQL: %w", err)
	}
	c.rows = rows
	return c, nil
}

// Vars names the result variables, in the order of Solution's terms.
func (c *Cursor) Vars() []string {
	names := make([]string, len(c.plan.Vars))
	for i, v := range c.plan.Vars {
		names[i] = string(v)
	}
	return names
}

// Next advances to the next solution.
func (c *Cursor) Next() bool {
	if c.done || c.err != nil {
		return false
	}
	for {
		if c.plan.Limit >= 0 && c.emitted >= c.plan.Limit {
			c.finish()
			return false
		}
		if !c.rows.Next() {
			if err := c.rows.Err(); err != nil {
				c.err = classify(c.ctx, fmt.Errorf("reading the query's rows: %w", err))
			}
			c.finish()
			return false
		}
		ok, err := c.decode(c.rows.Values())
		if err != nil {
			c.err = err
			c.finish()
			return false
		}
		if !ok {
			continue
		}
		if c.seen != nil {
			key := solutionKey(c.out)
			if _, dup := c.seen[key]; dup {
				continue
			}
			c.seen[key] = struct{}{}
		}
		if c.skipped < c.plan.Offset {
			c.skipped++
			continue
		}
		c.emitted++
		return true
	}
}

func (c *Cursor) finish() {
	c.done = true
	if c.rows != nil {
		c.rows.Close()
	}
}

// decode fills the solution from a row; false means the row yields no solution
// (a failed check or filter).
func (c *Cursor) decode(row []any) (bool, error) {
	clear(c.internal)
	terms := make([]rdf.Term, len(c.plan.Slots))
	for i, s := range c.plan.Slots {
		for _, g := range s.Groups {
			if t := BuildTerm(g, row); t != nil {
				terms[i] = t
				c.internal[s.Var] = t
				break
			}
		}
	}
	for _, ch := range c.plan.Checks {
		t := BuildTerm(ch.Group, row)
		if t == nil {
			continue // the check belongs to another union branch
		}
		if !rdf.SameTerm(t, terms[ch.Slot]) {
			return false, nil
		}
	}
	for _, f := range c.plan.Filters {
		if !EBVOf(Eval(f, c.internal)) {
			return false, nil
		}
	}
	for i, v := range c.plan.Vars {
		c.out[i] = c.internal[v]
	}
	return true, nil
}

// Solution returns the current solution: one term per result variable, nil where
// unbound. The slice is reused by the next call to Next.
func (c *Cursor) Solution() []rdf.Term { return c.out }

// Err reports the error that ended the iteration.
func (c *Cursor) Err() error { return c.err }

// Close releases the cursor's rows; it is safe to call more than once.
func (c *Cursor) Close() error {
	c.done = true
	if c.rows != nil {
		return c.rows.Close()
	}
	return nil
}

func solutionKey(sol []rdf.Term) string {
	var b strings.Builder
	for _, t := range sol {
		if t != nil {
			b.WriteString(t.String())
		}
		b.WriteByte(0)
	}
	return b.String()
}

// BuildTerm builds the term a group's term map yields from a row, or nil when a
// column it needs is NULL (R2RML §11: no term, so no triple).
func BuildTerm(g rewrite.Group, row []any) rdf.Term {
	m := g.Map
	for _, col := range g.Cols {
		if row[col] == nil {
			return nil
		}
	}
	var lexical string
	switch m.Kind {
	case catalog.Constant:
		return m.Constant
	case catalog.Column:
		lexical = catalog.Lexical(row[g.Cols[0]], g.Kinds[0])
		if m.TermType == rdf.KindLiteral && m.Datatype == "" && m.Language == "" {
			return catalog.NaturalLiteral(row[g.Cols[0]], g.Kinds[0])
		}
	case catalog.TemplateMap:
		values := make(map[string]string, len(g.Cols))
		for i, name := range m.Template.Columns() {
			values[name] = catalog.Lexical(row[g.Cols[i]], g.Kinds[i])
		}
		lexical = m.Template.Expand(values, m.TermType == rdf.KindIRI)
	}
	switch m.TermType {
	case rdf.KindIRI:
		return rdf.IRI(lexical)
	case rdf.KindBlank:
		return rdf.BlankNode(blankLabel(lexical))
	}
	switch {
	case m.Language != "":
		return rdf.NewLangString(lexical, m.Language)
	case m.Datatype != "":
		return rdf.NewTyped(lexical, m.Datatype)
	}
	return rdf.NewString(lexical)
}

// blankLabel turns the string a blank node map yields into a label N-Triples
// accepts: letters and digits stay, every other byte becomes '_' and two hex
// digits, so distinct strings keep distinct labels.
func blankLabel(s string) string {
	const hexDigits = "0123456789abcdef"
	b := []byte{'b'}
	for i := 0; i < len(s); i++ {
		c := s[i]
		if 'a' <= c && c <= 'z' || 'A' <= c && c <= 'Z' || '0' <= c && c <= '9' {
			b = append(b, c)
			continue
		}
		b = append(b, '_', hexDigits[c>>4], hexDigits[c&15])
	}
	return string(b)
}
