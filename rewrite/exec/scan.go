package exec

import (
	"fmt"
	"slices"

	"veneer/catalog"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/rewrite"
)

// scan builds the iterator of a Scan leaf.
func (b *builder) scan(op *rewrite.Scan) (node, error) {
	s := &scanIter{r: b.r, l: b.l, op: op, slots: make([]slotDecoder, 0, len(op.Slots)), scope: make([]int, 0, len(op.Slots))}
	n := 0
	for _, slot := range op.Slots {
		n += len(slot.Builders)
	}
	tbs := make([]termBuilder, 0, n+len(op.Checks)) // one allocation for all
	ptrs := make([]*termBuilder, 0, n)
	for _, slot := range op.Slots {
		d := slotDecoder{slot: b.l.slot(slot.Var)}
		for i := range slot.Builders {
			tbs = append(tbs, newTermBuilder(&slot.Builders[i]))
			ptrs = append(ptrs, &tbs[len(tbs)-1])
		}
		d.builders, ptrs = ptrs[:len(ptrs):len(ptrs)], ptrs[len(ptrs):]
		s.slots = append(s.slots, d)
		s.scope = append(s.scope, d.slot)
	}
	for i := range op.Checks {
		ch := &op.Checks[i]
		if ch.Slot < 0 || ch.Slot >= len(s.slots) {
			return node{}, fmt.Errorf("plan has a check on slot %d of a scan with %d slots", ch.Slot, len(s.slots))
		}
		tbs = append(tbs, newTermBuilder(&ch.Builder))
		s.checks = append(s.checks, checkDecoder{slot: s.slots[ch.Slot].slot, builder: &tbs[len(tbs)-1]})
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
	rows   rowReader
	buf    []byte // a term's text while decode makes it
	done   bool
}

type slotDecoder struct {
	slot     int
	builders []*termBuilder
}

// view is the view of the slot's term in the current row, made by the first
// builder whose columns are not NULL (the branches of a SQL UNION fill
// different columns), and that builder; the zero View and nil when none is.
func (d slotDecoder) view(r *rowReader, buf []byte) (rdf.View, *termBuilder, []byte, error) {
	for _, tb := range d.builders {
		v, grown, err := tb.view(r, buf)
		if err != nil || v.Kind != 0 {
			return v, tb, grown, err
		}
	}
	return rdf.View{}, nil, buf, nil
}

type checkDecoder struct {
	slot    int
	builder *termBuilder
}

func (s *scanIter) next() ([]rdf.Term, error) {
	for {
		ok, err := s.advance()
		if !ok {
			return nil, err
		}
		sol, err := s.decode()
		if err != nil {
			s.close()
			return nil, s.r.fail(err)
		}
		if sol != nil {
			return sol, nil
		}
	}
}

// nextViews reads the next row into views, by slot, with their text appended
// to buf; dst must be as wide as the layout and zero. It returns false at the
// end. It is for a scan without checks only (see Cursor).
func (s *scanIter) nextViews(dst []rdf.View, buf []byte) (bool, []byte, error) {
	ok, err := s.advance()
	if !ok {
		return false, buf, err
	}
	for _, d := range s.slots {
		if dst[d.slot], _, buf, err = d.view(&s.rows, buf); err != nil {
			s.close()
			return false, buf, s.r.fail(err)
		}
	}
	return true, buf, nil
}

// advance moves to the next row, sending the SQL first if it has not gone
// yet; it returns false at the end, and closes the scan then.
func (s *scanIter) advance() (bool, error) {
	if s.done {
		return false, nil
	}
	if s.rows.rows == nil {
		if s.op.Stmt == nil {
			s.done = true // no triples map can answer: no SQL at all
			return false, nil
		}
		if err := s.r.park(); err != nil {
			s.done = true
			return false, err
		}
		args := append([]any{source.Kinds(s.op.Kinds)}, s.op.Args...)
		rows, err := s.r.src.Query(s.r.ctx, s.op.SQL, args...)
		if err != nil {
			s.done = true
			return false, s.r.fail(fmt.Errorf("running the query's SQL: %w", err))
		}
		s.rows.start(rows)
		s.r.open = append(s.r.open, s)
	}
	if s.rows.next() {
		return true, nil
	}
	err := s.rows.rows.Err()
	s.close()
	if err != nil {
		return false, s.r.fail(fmt.Errorf("reading the query's rows: %w", err))
	}
	return false, nil
}

// decode turns the current row into a solution, or nil when a check fails;
// the error is a data error (a value that makes no valid IRI).
func (s *scanIter) decode() ([]rdf.Term, error) {
	sol := make([]rdf.Term, s.l.width())
	for _, d := range s.slots {
		v, tb, buf, err := d.view(&s.rows, s.buf[:0])
		if err != nil {
			return nil, err
		}
		s.buf = buf
		sol[d.slot] = tb.term(v)
	}
	for _, ch := range s.checks {
		t, err := ch.builder.build(&s.rows)
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
	if s.rows.rows != nil {
		s.rows.rows.Close()
		s.rows = rowReader{}
		s.r.open = slices.DeleteFunc(s.r.open, func(o *scanIter) bool { return o == s })
	}
}

// rowReader reads the current row of a scan's statement. A value's lexical
// form comes straight from the text the database sent where the source keeps
// it (source.TextRows), and from the row's decoded values otherwise, which
// are asked for at most once a row.
type rowReader struct {
	rows  source.Rows
	text  source.TextRows // nil when the source hands out values only
	kinds []source.TypeKind
	vals  []any
}

func (r *rowReader) start(rows source.Rows) {
	r.rows = rows
	r.text, _ = rows.(source.TextRows)
	cols := rows.Columns()
	r.kinds = make([]source.TypeKind, len(cols))
	for i, c := range cols {
		r.kinds[i] = c.Kind
	}
}

// park reads the current row and the rest of the statement's rows into
// memory and closes the statement; the reader then reads them from there
// (see run.park). A scan is open only while it has a current row. It reads
// at most as many rows as the run may still buffer; past them the statement
// stays open for the rest, and keeps its connection.
func (r *rowReader) park(run *run) error {
	kept := [][]any{slices.Clone(r.values())} // the current row stays current
	more := false
	for {
		if run.parked >= run.limit {
			more = true
			break
		}
		if !r.rows.Next() {
			break
		}
		run.parked++
		kept = append(kept, slices.Clone(r.rows.Values()))
	}
	k := &keptRows{cols: r.rows.Columns(), rows: kept}
	if more {
		k.rest = r.rows
	} else {
		err := r.rows.Err()
		r.rows.Close()
		if err != nil {
			return run.fail(fmt.Errorf("reading the query's rows: %w", err))
		}
	}
	r.rows, r.text, r.vals = k, nil, nil
	return nil
}

// keptRows are rows read into memory by park, followed by those of the
// statement that park left open (rest), if any.
type keptRows struct {
	cols []source.Column
	rows [][]any
	at   int
	rest source.Rows
}

func (k *keptRows) Columns() []source.Column { return k.cols }

func (k *keptRows) Next() bool {
	if k.at < len(k.rows) {
		k.rows[k.at] = nil // read: its memory can go
		k.at++
	}
	if k.at < len(k.rows) {
		return true
	}
	return k.rest != nil && k.rest.Next()
}

func (k *keptRows) Values() []any {
	if k.at < len(k.rows) {
		return k.rows[k.at]
	}
	return k.rest.Values()
}

func (k *keptRows) Err() error {
	if k.rest != nil {
		return k.rest.Err()
	}
	return nil
}

func (k *keptRows) Close() error {
	k.rows, k.at = nil, 0
	if k.rest != nil {
		return k.rest.Close()
	}
	return nil
}

func (r *rowReader) next() bool {
	r.vals = nil
	return r.rows.Next()
}

func (r *rowReader) values() []any {
	if r.vals == nil {
		r.vals = r.rows.Values()
	}
	return r.vals
}

// null reports whether column i is NULL, or not in the row at all.
func (r *rowReader) null(i int) bool {
	if r.text != nil && i >= 0 && i < len(r.kinds) {
		if b, ok := r.text.Text(i); ok {
			return b == nil
		}
	}
	v := r.values()
	return i < 0 || i >= len(v) || v[i] == nil
}

// appendLexical appends the lexical form of column i, which is not NULL, for
// kind (catalog.Lexical).
func (r *rowReader) appendLexical(dst []byte, i int, kind source.TypeKind) []byte {
	if r.text != nil && i < len(r.kinds) && kind == r.kinds[i] {
		if b, ok := r.text.Text(i); ok {
			if out, ok := catalog.AppendTextLexical(dst, b, kind); ok {
				return out
			}
		}
	}
	return catalog.AppendLexical(dst, r.values()[i], kind)
}

// termBuilder builds the term of one rewrite.Builder from rows; it keeps the
// buffers it needs between rows.
type termBuilder struct {
	b        *rewrite.Builder // the plan's, shared by every run of it
	columns  int              // of a template
	datatype rdf.IRI          // of a natural literal: by the column's kind
	buf      []byte           // a term's text, for build
	scratch  []byte           // a template value before its encoding, a blank label
}

func newTermBuilder(b *rewrite.Builder) termBuilder {
	tb := termBuilder{b: b}
	switch m := b.Map; m.Kind {
	case catalog.TemplateMap:
		tb.columns = len(m.Template.Columns())
	case catalog.Column:
		if len(b.Kinds) == 1 {
			if tb.datatype = catalog.NaturalDatatype(b.Kinds[0]); tb.datatype == "" {
				tb.datatype = rdf.XSDString
			}
		}
	}
	return tb
}

// build builds the term the builder's term map yields from the current row,
// or nil when a column it needs is NULL (R2RML §11: no term, so no triple).
func (tb *termBuilder) build(r *rowReader) (rdf.Term, error) {
	v, buf, err := tb.view(r, tb.buf[:0])
	tb.buf = buf
	return tb.term(v), err
}

// term is the term of v, a view tb made: a constant map's own term, a copy
// of v's otherwise, nil for the zero View (or a nil tb).
func (tb *termBuilder) term(v rdf.View) rdf.Term {
	switch {
	case v.Kind == 0:
		return nil
	case tb.b.Map.Kind == catalog.Constant:
		return tb.b.Map.Constant
	}
	return v.Term()
}

func (tb *termBuilder) anyNull(r *rowReader) bool {
	for _, col := range tb.b.Cols {
		if r.null(col) {
			return true
		}
	}
	return false
}

// view is build without a term: it appends the term's text to buf and
// returns its view, the zero View when a column it needs is NULL. A value
// that makes no valid IRI is a data error (R2RML §11), never a wrong term.
func (tb *termBuilder) view(r *rowReader, buf []byte) (rdf.View, []byte, error) {
	b := tb.b
	m := b.Map
	if tb.anyNull(r) {
		return rdf.View{}, buf, nil
	}
	start := len(buf)
	switch m.Kind {
	case catalog.Constant:
		v, buf := rdf.AppendView(buf, m.Constant)
		return v, buf, nil
	case catalog.Column:
		if len(b.Cols) != 1 || len(b.Kinds) != 1 {
			return rdf.View{}, buf, nil
		}
		buf = r.appendLexical(buf, b.Cols[0], b.Kinds[0])
		if m.TermType == rdf.KindLiteral && m.Datatype == "" && m.Language == "" {
			return rdf.View{Kind: rdf.KindLiteral, Text: buf[start:len(buf):len(buf)], Datatype: tb.datatype}, buf, nil
		}
	case catalog.TemplateMap:
		if len(b.Cols) != tb.columns || len(b.Kinds) != tb.columns {
			return rdf.View{}, buf, nil
		}
		buf, tb.scratch = m.Template.AppendExpand(buf, tb.scratch, m.TermType == rdf.KindIRI, func(dst []byte, k int) []byte {
			return r.appendLexical(dst, b.Cols[k], b.Kinds[k])
		})
	default:
		return rdf.View{}, buf, nil
	}
	text := buf[start:len(buf):len(buf)]
	switch m.TermType {
	case rdf.KindIRI:
		if !b.ValidIRI {
			iri, err := m.MakeIRI(string(text))
			if err != nil {
				return rdf.View{}, buf[:start], err
			}
			buf = append(buf[:start], iri...)
			text = buf[start:len(buf):len(buf)]
		}
		return rdf.View{Kind: rdf.KindIRI, Text: text}, buf, nil
	case rdf.KindBlank:
		tb.scratch = appendBlankLabel(tb.scratch[:0], text)
		buf = append(buf[:start], tb.scratch...)
		return rdf.View{Kind: rdf.KindBlank, Text: buf[start:len(buf):len(buf)]}, buf, nil
	}
	switch {
	case m.Language != "":
		return rdf.View{Kind: rdf.KindLiteral, Text: text, Datatype: rdf.RDFLangString, Lang: m.Language}, buf, nil
	case m.Datatype != "":
		return rdf.View{Kind: rdf.KindLiteral, Text: text, Datatype: m.Datatype}, buf, nil
	}
	return rdf.View{Kind: rdf.KindLiteral, Text: text, Datatype: rdf.XSDString}, buf, nil
}

// appendBlankLabel appends the label N-Triples accepts for the string s a
// blank node map yields: letters and digits stay, every other byte becomes
// '_' and two hex digits, so distinct strings keep distinct labels. Every
// label starts with "b" (see run.freshBlank).
func appendBlankLabel(dst, s []byte) []byte {
	const hexDigits = "0123456789abcdef"
	dst = append(dst, 'b')
	for _, c := range s {
		if 'a' <= c && c <= 'z' || 'A' <= c && c <= 'Z' || '0' <= c && c <= '9' {
			dst = append(dst, c)
			continue
		}
		dst = append(dst, '_', hexDigits[c>>4], hexDigits[c&15])
	}
	return dst
}
