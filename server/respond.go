package server

import (
	"errors"
	"fmt"
	"net/http"
	"strconv"
	"strings"

	"veneer/server/internal/bufpool"
	"veneer/server/results"
)

// holdRows is how many solutions or triples the server reads before it sends
// the status line. An answer that fails, or goes over the row limit, within
// them is refused with a proper status and message instead of an aborted
// body. It matches the result writers' flush interval, so holding them back
// costs a client no latency it would not have had anyway.
const holdRows = 512

// format picks the result format for an answer of kind k: the format
// parameter when given, otherwise the Accept header (results.Negotiate).
func format(op *operation, r *http.Request, k results.Kind) (results.Format, error) {
	if op.format != "" {
		f, ok := results.Lookup(op.format, k)
		if !ok {
			return f, badRequest("format %q cannot carry a %s answer; use one of %s", op.format, k, formatNames(k))
		}
		return f, nil
	}
	f, ok := results.Negotiate(strings.Join(r.Header.Values("Accept"), ","), k)
	if !ok {
		return f, &problem{status: http.StatusNotAcceptable,
			msg: fmt.Sprintf("the Accept header rules out every format for a %s answer: %s", k, formatNames(k))}
	}
	return f, nil
}

func formatNames(k results.Kind) string {
	var names []string
	for _, f := range results.Formats(k) {
		names = append(names, f.MediaType()+" ("+f.Name()+")")
	}
	return strings.Join(names, ", ")
}

// writeAnswer streams an answer in format f and returns the number of
// solutions or triples sent. An answer that is whole within the rows held
// back (see holdRows) goes out in one write with its Content-Length, so that
// the client has all of it at once; a longer one streams. admit is called
// just before the answer is first read (which reads the sources), and its
// error ends the answer before anything is sent; read, when not nil, is
// called once the answer has been read to its end, before the last of it is
// sent.
func (s *Server) writeAnswer(w http.ResponseWriter, a *Answer, f results.Format, admit func() error, read func()) (int64, error) {
	h := w.Header()
	h.Set("Content-Type", f.ContentType())
	h.Add("Vary", "Accept")
	out := &wholeOrStream{w: w, read: read}
	max := s.cfg.Limits.MaxRows
	switch a.Kind {
	case results.Boolean:
		if err := admit(); err != nil {
			return 0, err
		}
		b, err := a.Boolean()
		if err != nil {
			return 0, err
		}
		if err := results.WriteBoolean(f, out, b); err != nil {
			return 0, err
		}
		return 0, out.whole()
	case results.Solutions:
		sw, err := results.NewSelectWriter(f, out)
		if err != nil {
			return 0, err
		}
		cur := a.Solutions
		begin := func() error { return sw.Begin(cur.Vars()) }
		n, err := stream(cur, cur.Views, begin, admit, sw.Views, sw.End, max, out)
		return n, s.rowLimit(err, max, "solutions")
	case results.Graph:
		gw, err := results.NewGraphWriter(f, out, a.Prefixes)
		if err != nil {
			return 0, err
		}
		cur := a.Graph
		n, err := stream(cur, cur.Triple, gw.Begin, admit, gw.Triple, gw.End, max, out)
		return n, s.rowLimit(err, max, "triples")
	}
	return 0, fmt.Errorf("server: answer of unknown kind %v", a.Kind)
}

// wholeOrStream is the body of an answer: it keeps what the result writer
// writes (and its flushes) until the answer proves whole, which then goes
// out in one write with its length, or long, which then streams.
type wholeOrStream struct {
	w         http.ResponseWriter
	read      func() // called by whole, when not nil
	buf       []byte
	pool      *[]byte // where buf came from, nil before the first Write
	streaming bool
}

func (b *wholeOrStream) Write(p []byte) (int, error) {
	if b.streaming {
		return b.w.Write(p)
	}
	if b.pool == nil {
		b.pool = bufpool.Get()
		b.buf = *b.pool
	}
	b.buf = append(b.buf, p...)
	return len(p), nil
}

// Flush implements http.Flusher: once the answer streams.
func (b *wholeOrStream) Flush() {
	if f, ok := b.w.(http.Flusher); ok && b.streaming {
		f.Flush()
	}
}

// stream sends what is kept and passes the rest through.
func (b *wholeOrStream) stream() error {
	b.streaming = true
	if b.pool == nil {
		return nil
	}
	_, err := b.w.Write(b.buf)
	*b.pool = b.buf
	bufpool.Put(b.pool)
	b.buf, b.pool = nil, nil
	return err
}

// whole sends the whole answer with its length; it is called once the
// answer has been read to its end, which it first tells b.read.
func (b *wholeOrStream) whole() error {
	if b.read != nil {
		b.read()
	}
	if b.streaming {
		return nil
	}
	b.w.Header().Set("Content-Length", strconv.Itoa(len(b.buf)))
	if err := b.stream(); err != nil {
		return err
	}
	b.Flush()
	return nil
}

// errRowLimit is what stream returns for an answer over the row limit.
var errRowLimit = errors.New("over the row limit")

// rowLimit counts and explains errRowLimit.
func (s *Server) rowLimit(err error, max int64, what string) error {
	if err != errRowLimit {
		return err
	}
	s.metrics.rowLimit.Inc()
	return tooLarge("the answer has more than %d %s, the most this endpoint returns; narrow the query or add a LIMIT", max, what)
}

// stream copies the rows of a cursor to a result writer (begin, put, end),
// calling admit between begin and the first row.
// What the writer writes stays in body until holdRows rows are in it, so a
// failure, or an answer over max rows (when max > 0, errRowLimit), within
// them leaves nothing sent, and any later failure leaves the document
// unfinished. An answer whole within the held rows leaves body as one write;
// a longer one makes body stream.
func stream[T any](cur interface {
	Next() bool
	Err() error
}, row func() T, begin, admit func() error, put func(T) error, end func() error, max int64, body *wholeOrStream) (int64, error) {
	if err := begin(); err != nil {
		return 0, err
	}
	if err := admit(); err != nil {
		return 0, err
	}
	var n int64
	for cur.Next() {
		if max > 0 && n >= max {
			return n, errRowLimit
		}
		if err := put(row()); err != nil {
			return n, err
		}
		if n++; n == holdRows {
			if err := body.stream(); err != nil {
				return n, err
			}
		}
	}
	if err := cur.Err(); err != nil {
		return n, err
	}
	if err := end(); err != nil {
		return n, err
	}
	return n, body.whole()
}
