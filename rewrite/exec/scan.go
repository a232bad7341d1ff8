package exec

import (
	"fmt"

	"veneer/catalog"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/rewrite"
)

// scan builds the iterator of a Scan leaf.
func (b *builder) scan(op *rewrite.Scan) (node, error) {
	s := &scanIter{r: b.r, l: b.l, op: op}
	for _, slot := range op.Slots {
		d := slotDecoder{slot: b.l.slot(slot.Var)}
		for _, bl := range slot.Builders {
			d.builders = append(d.builders, newTermBuilder(bl))
		}
		s.slots = append(s.slots, d)
		s.scope = append(s.scope, d.slot)
	}
	for _, ch := range op.Checks {
		if ch.Slot < 0 || ch.Slot >= len(s.slots) {
			return node{}, fmt.Errorf("plan has a check on slot %d of a scan with %d slots", ch.Slot, len(s.slots))
		}
		s.checks = append(s.checks, checkDecoder{slot: s.slots[ch.Slot].slot, builder: newTermBuilder(ch.Builder)})
	}
	return node{it: s, scope: s.scope}, nil
}

// scanIter runs a Scan's SQL when its first solution is asked for, and decodes
// each row into a solution.
type scanIter struct {
	r      *run
	l      *layout
	op     *rewrite.Scan
	slots  []slotDecoder
	checks []checkDecoder
	scope  []int
	rows   source.Rows
	done   bool
}

type slotDecoder struct {
	slot     int
	builders []*termBuilder
}

type checkDecoder struct {
	slot    int
	builder *termBuilder
}

func (s *scanIter) next() ([]rdf.Term, error) {
	if s.done {
		return nil, nil
	}
	if s.rows == nil {
		if s.op.Stmt == nil {
			s.done = true // no triples map can answer: no SQL at all
			return nil, nil
		}
		args := append([]any{source.Kinds(s.op.Kinds)}, s.op.Args...)
		rows, err := s.r.src.Query(s.r.ctx, s.op.SQL, args...)
		if err != nil {
			s.done = true
			return nil, s.r.fail(fmt.Errorf("running the query's SQL: %w", err))
		}
		s.rows = rows
	}
	for s.rows.Next() {
		sol, err := s.decode(s.rows.Values())
		if err != nil {
			s.close()
			return nil, s.r.fail(err)
		}
		if sol != nil {
			return sol, nil
		}
	}
	err := s.rows.Err()
	s.close()
	if err != nil {
		return nil, s.r.fail(fmt.Errorf("reading the query's rows: %w", err))
	}
	return nil, nil
}

// decode turns one row into a solution, or nil when a check fails; the error is
// a data error (a value that makes no valid IRI).
func (s *scanIter) decode(row []any) ([]rdf.Term, error) {
	sol := make([]rdf.Term, s.l.width())
	for _, d := range s.slots {
		for _, tb := range d.builders {
			t, err := tb.build(row)
			if err != nil {
				return nil, err
			}
			if t != nil {
				sol[d.slot] = t
				break
			}
		}
	}
	for _, ch := range s.checks {
		t, err := ch.builder.build(row)
		if err != nil {
			return nil, err
		}
		if t == nil {
			continue // the check belongs to another union branch
		}
		if !rdf.SameTerm(t, sol[ch.slot]) {
			return nil, nil
		}
	}
	return sol, nil
}

func (s *scanIter) close() {
	s.done = true
	if s.rows != nil {
		s.rows.Close()
		s.rows = nil
	}
}

// termBuilder builds the term of one rewrite.Builder from rows; it keeps the
// map a template expansion needs between rows.
type termBuilder struct {
	b      rewrite.Builder
	names  []string
	values map[string]string
	// validIRIs says the template always yields a valid absolute IRI: its text
	// starts with a scheme and was checked at load (Template.CheckIRI), and the
	// values are IRI-safe encoded, so no per-row check is needed.
	validIRIs bool
}

func newTermBuilder(b rewrite.Builder) *termBuilder {
	tb := &termBuilder{b: b}
	if m := b.Map; m.Kind == catalog.TemplateMap {
		tb.names = m.Template.Columns()
		tb.values = make(map[string]string, len(tb.names))
		parts := m.Template.Parts
		tb.validIRIs = m.TermType == rdf.KindIRI && len(parts) > 0 && parts[0].Column == "" &&
			rdf.IsAbsoluteIRI(parts[0].Text) && m.Template.CheckIRI() == nil
	}
	return tb
}

// build builds the term the builder's term map yields from a row, or nil when
// a column it needs is NULL (R2RML §11: no term, so no triple). A value that
// makes no valid IRI is a data error (R2RML §11), never a wrong term.
func (tb *termBuilder) build(row []any) (rdf.Term, error) {
	b, names, values := tb.b, tb.names, tb.values
	m := b.Map
	for _, col := range b.Cols {
		if col < 0 || col >= len(row) || row[col] == nil {
			return nil, nil
		}
	}
	var lexical string
	switch m.Kind {
	case catalog.Constant:
		return m.Constant, nil
	case catalog.Column:
		if len(b.Cols) != 1 || len(b.Kinds) != 1 {
			return nil, nil
		}
		v, kind := row[b.Cols[0]], b.Kinds[0]
		if m.TermType == rdf.KindLiteral && m.Datatype == "" && m.Language == "" {
			return catalog.NaturalLiteral(v, kind), nil
		}
		lexical = catalog.Lexical(v, kind)
	case catalog.TemplateMap:
		if len(b.Cols) != len(names) || len(b.Kinds) != len(names) {
			return nil, nil
		}
		for i, name := range names {
			values[name] = catalog.Lexical(row[b.Cols[i]], b.Kinds[i])
		}
		lexical = m.Template.Expand(values, m.TermType == rdf.KindIRI)
	default:
		return nil, nil
	}
	switch m.TermType {
	case rdf.KindIRI:
		if tb.validIRIs {
			return rdf.IRI(lexical), nil
		}
		iri, err := m.MakeIRI(lexical)
		if err != nil {
			return nil, err
		}
		return iri, nil
	case rdf.KindBlank:
		return rdf.BlankNode(blankLabel(lexical)), nil
	}
	switch {
	case m.Language != "":
		return rdf.NewLangString(lexical, m.Language), nil
	case m.Datatype != "":
		return rdf.NewTyped(lexical, m.Datatype), nil
	}
	return rdf.NewString(lexical), nil
}

// blankLabel turns the string a blank node map yields into a label N-Triples
// accepts: letters and digits stay, every other byte becomes '_' and two hex
// digits, so distinct strings keep distinct labels. Every label starts with
// "b" (see run.freshBlank).
func blankLabel(s string) string {
	const hexDigits = "0123456789abcdef"
	b := make([]byte, 1, len(s)+1)
	b[0] = 'b'
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
