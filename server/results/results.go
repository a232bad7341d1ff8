// Package results turns query answers into the bytes of the W3C result
// formats, as a stream: SELECT solutions into SPARQL JSON, XML, CSV or TSV;
// ASK answers into SPARQL JSON or XML; CONSTRUCT and DESCRIBE graphs into
// Turtle, N-Triples or JSON-LD. It also picks the format for a request from its
// Accept header or a format name (see Negotiate and Lookup).
//
// A writer never holds the whole answer: it writes each solution or triple
// into a small buffer that goes to the underlying io.Writer after the head and
// then every 512 solutions or triples or 32 KiB, whichever comes first. If
// the io.Writer has a Flush() or Flush() error method (http.ResponseWriter,
// bufio.Writer) it is called each time, so the client sees the answer as it is
// produced.
//
// Only End completes a document. A caller that meets an error part way (the
// database went away, the client hung up) simply stops calling the writer: the
// bytes sent so far are an unfinished document — JSON without its closing
// brackets, XML without its end tags — and the server aborts the response, so
// the client cannot take a cut-short answer for a complete one. CSV, TSV and
// N-Triples have no closing part, so for them the aborted response is the
// only sign.
//
// After any error a writer is spent: every later call returns the same error.
// A term the format cannot carry is such an error, reported before any byte
// of its row is sent: text that is not UTF-8 (in every format), a character
// XML 1.0 forbids (XML), and in the Turtle-syntax formats (TSV, Turtle,
// N-Triples) an IRI with a character IRIREF leaves out or a language tag that
// is not a LANGTAG.
//
// Blank node labels are local to a document (RDF 1.1 Concepts §3.4), and the
// Turtle-syntax formats allow only some of them (BLANK_NODE_LABEL), so those
// writers rename blank nodes, one to one: a label of ASCII letters and digits
// (and '-' after the first byte) is kept, any other byte becomes '_' and two
// hex digits ("wo_1" becomes "wo_5f1"), and the empty label becomes "_".
// JSON, XML, CSV and JSON-LD keep labels as they are.
package results

import (
	"errors"
	"fmt"
	"io"
	"slices"

	"veneer/catalog/rdf"
	"veneer/server/internal/bufpool"
)

// SelectWriter writes the solutions of a SELECT query.
type SelectWriter interface {
	// Begin writes the head of the document, naming the variables (without
	// "?") in the order every row will give their values, and flushes it.
	Begin(vars []string) error
	// Row writes one solution: one term per variable, in the order given to
	// Begin, with nil for an unbound variable.
	Row(sol []rdf.Term) error
	// Views writes one solution held as views, as Row does; the zero View
	// is an unbound variable. The writer keeps neither the views nor their
	// text.
	Views(row []rdf.View) error
	// End completes the document and flushes it. Nothing else does.
	End() error
}

// GraphWriter writes the triples of a CONSTRUCT or DESCRIBE query.
type GraphWriter interface {
	// Begin writes the head of the document, if the format has one, and flushes it.
	Begin() error
	// Triple writes one triple. Its subject must be an IRI or blank node and
	// its predicate an IRI.
	Triple(t rdf.Triple) error
	// End completes the document and flushes it. Nothing else does.
	End() error
}

// Flush thresholds. 32 KiB keeps the number of network writes low for fast
// answers; 512 rows bounds how long a client waits for a slow answer with
// short rows. A buffer starts at startBytes and grows as an answer needs:
// most answers of dashboards and federation engines are small. None of the
// values comes from a specification.
const (
	flushBytes = 32 << 10
	flushRows  = 512
	startBytes = 4 << 10
)

// sink is the buffer between a writer and its io.Writer, and the flush policy.
type sink struct {
	w     io.Writer
	flush func() error // nil when w cannot be flushed
	buf   []byte
	rows  int     // rows (or triples) buffered since the last send
	pool  *[]byte // where buf goes back to the pool, once released
}

func newSink(w io.Writer) sink {
	p := bufpool.Get()
	s := sink{w: w, buf: *p, pool: p}
	switch f := w.(type) {
	case interface{ Flush() error }:
		s.flush = f.Flush
	case interface{ Flush() }:
		s.flush = func() error { f.Flush(); return nil }
	}
	return s
}

// send writes out the buffer and flushes the io.Writer.
func (s *sink) send() error {
	s.rows = 0
	if len(s.buf) > 0 {
		_, err := s.w.Write(s.buf)
		if cap(s.buf) > 4*flushBytes {
			// One huge row grew the buffer; do not hold on to it.
			s.buf = make([]byte, 0, startBytes)
		}
		s.buf = s.buf[:0]
		if err != nil {
			return err
		}
	}
	if s.flush != nil {
		return s.flush()
	}
	return nil
}

// release gives the buffer back to the pool once the document is complete;
// the sink must not be used after it.
func (s *sink) release() {
	if s.pool != nil {
		*s.pool = s.buf
		bufpool.Put(s.pool)
	}
	s.buf, s.pool = nil, nil
}

// rowDone counts a finished row and sends the buffer when a threshold is reached.
func (s *sink) rowDone() error {
	s.rows++
	if len(s.buf) >= flushBytes || s.rows >= flushRows {
		return s.send()
	}
	return nil
}

// state is where a writer is in its document.
type state uint8

const (
	stateNew state = iota
	stateOpen
	stateDone
	stateFailed
)

// machine is the state shared by all writers: the sink, the step reached,
// and the error that spent the writer.
type machine struct {
	sink
	format string // format name for error messages
	state  state
	n      int // rows or triples written
	err    error
}

// enter checks that the writer is in state want before the operation op.
func (m *machine) enter(want state, op string) error {
	switch {
	case m.state == stateFailed:
		return m.err
	case m.state == want:
		return nil
	case m.state == stateNew:
		return fmt.Errorf("results: %s %s before Begin", m.format, op)
	case m.state == stateOpen:
		return fmt.Errorf("results: %s Begin called twice", m.format)
	}
	return fmt.Errorf("results: %s %s after End", m.format, op)
}

// fail spends the writer with err.
func (m *machine) fail(err error) error {
	m.state, m.err = stateFailed, err
	return err
}

// sendOrFail sends the buffer and spends the writer if that fails.
func (m *machine) sendOrFail() error {
	if err := m.send(); err != nil {
		return m.fail(fmt.Errorf("results: writing %s: %w", m.format, err))
	}
	return nil
}

// rowDoneOrFail is rowDone, spending the writer if sending fails.
func (m *machine) rowDoneOrFail() error {
	m.n++
	if err := m.rowDone(); err != nil {
		return m.fail(fmt.Errorf("results: writing %s: %w", m.format, err))
	}
	return nil
}

// finish completes the document with tail and sends it.
func (m *machine) finish(tail func([]byte) []byte) error {
	if err := m.enter(stateOpen, "End"); err != nil {
		return err
	}
	m.buf = tail(m.buf)
	if err := m.sendOrFail(); err != nil {
		return err
	}
	m.state = stateDone
	m.release()
	return nil
}

// solutionEncoder is what a SELECT format contributes to selectWriter: the
// bytes of the head, of each row and of the tail.
type solutionEncoder interface {
	head(dst []byte, vars []string) []byte
	// row appends solution number i (from 0). An error names the variable
	// whose term the format cannot carry.
	row(dst []byte, i int, vars []string, row []rdf.View) ([]byte, error)
	tail(dst []byte) []byte
}

var (
	_ SelectWriter = (*selectWriter)(nil)
	_ GraphWriter  = (*graphWriter)(nil)
)

// selectWriter is the SelectWriter of every format.
type selectWriter struct {
	machine
	enc  solutionEncoder
	vars []string
	// views and text hold the solution Row is given, as views.
	views []rdf.View
	text  []byte
}

func newSelectWriter(w io.Writer, format string, enc solutionEncoder) *selectWriter {
	return &selectWriter{machine: machine{sink: newSink(w), format: format}, enc: enc}
}

// Begin implements SelectWriter.
func (w *selectWriter) Begin(vars []string) error {
	if err := w.enter(stateNew, "Begin"); err != nil {
		return err
	}
	if err := checkVars(vars); err != nil {
		return w.fail(fmt.Errorf("results: %s head: %w", w.format, err))
	}
	w.vars = slices.Clone(vars)
	w.buf = w.enc.head(w.buf, w.vars)
	w.state = stateOpen
	return w.sendOrFail()
}

// Row implements SelectWriter.
func (w *selectWriter) Row(sol []rdf.Term) error {
	w.views = slices.Grow(w.views[:0], len(sol))[:len(sol)]
	w.text = rdf.AppendViews(w.views, w.text[:0], sol)
	return w.write("Row", w.views)
}

// Views implements SelectWriter.
func (w *selectWriter) Views(row []rdf.View) error { return w.write("Views", row) }

// write writes one solution for the operation op.
func (w *selectWriter) write(op string, row []rdf.View) error {
	if err := w.enter(stateOpen, op); err != nil {
		return err
	}
	if len(row) != len(w.vars) {
		return w.fail(fmt.Errorf("results: %s row %d has %d terms for %d variables",
			w.format, w.n+1, len(row), len(w.vars)))
	}
	buf, err := w.enc.row(w.buf, w.n, w.vars, row)
	if err != nil {
		return w.fail(fmt.Errorf("results: %s row %d: %w", w.format, w.n+1, err))
	}
	w.buf = buf
	return w.rowDoneOrFail()
}

// End implements SelectWriter.
func (w *selectWriter) End() error { return w.finish(w.enc.tail) }

// checkVars checks that the variable names are SPARQL VARNAMEs and distinct, so
// that every format can carry them as they are.
func checkVars(vars []string) error {
	for i, v := range vars {
		if !isVarName(v) {
			return fmt.Errorf("variable name %q is not a SPARQL VARNAME", v)
		}
		if slices.Contains(vars[:i], v) {
			return fmt.Errorf("variable ?%s named twice", v)
		}
	}
	return nil
}

// graphEncoder is what a graph format contributes to graphWriter.
type graphEncoder interface {
	begin(dst []byte) ([]byte, error)
	triple(dst []byte, t rdf.Triple) ([]byte, error)
	end(dst []byte) []byte
}

// graphWriter is the GraphWriter of every format.
type graphWriter struct {
	machine
	enc graphEncoder
}

func newGraphWriter(w io.Writer, format string, enc graphEncoder) *graphWriter {
	return &graphWriter{machine: machine{sink: newSink(w), format: format}, enc: enc}
}

// Begin implements GraphWriter.
func (w *graphWriter) Begin() error {
	if err := w.enter(stateNew, "Begin"); err != nil {
		return err
	}
	buf, err := w.enc.begin(w.buf)
	if err != nil {
		return w.fail(fmt.Errorf("results: %s head: %w", w.format, err))
	}
	w.buf = buf
	w.state = stateOpen
	return w.sendOrFail()
}

// Triple implements GraphWriter.
func (w *graphWriter) Triple(t rdf.Triple) error {
	if err := w.enter(stateOpen, "Triple"); err != nil {
		return err
	}
	err := checkTriple(t)
	var buf []byte
	if err == nil {
		buf, err = w.enc.triple(w.buf, t)
	}
	if err != nil {
		return w.fail(fmt.Errorf("results: %s triple %d: %w", w.format, w.n+1, err))
	}
	w.buf = buf
	return w.rowDoneOrFail()
}

// End implements GraphWriter.
func (w *graphWriter) End() error { return w.finish(w.enc.end) }

// checkTriple checks the shape RDF 1.1 Concepts §3.1 requires of a triple.
func checkTriple(t rdf.Triple) error {
	switch {
	case t.S == nil || t.P == nil || t.O == nil:
		return errors.New("triple has a nil term")
	case t.S.Kind() == rdf.KindLiteral:
		return fmt.Errorf("subject %s is a literal", t.S)
	case t.P.Kind() != rdf.KindIRI:
		return fmt.Errorf("predicate %s is not an IRI", t.P)
	}
	return nil
}
