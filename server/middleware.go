package server

import (
	"encoding/binary"
	"encoding/hex"
	"errors"
	"fmt"
	"log/slog"
	"math/rand/v2"
	"net/http"
	"runtime/debug"
	"time"
)

// RequestIDHeader carries the request id: taken from the request when it has
// a usable one (so that a proxy's id follows the request through), made up
// otherwise, and always echoed in the response.
const RequestIDHeader = "X-Request-Id"

// requestInfo is what the middleware and the handlers of one request share.
type requestInfo struct {
	id     string
	route  string // set by the route's handler; "" for no route
	format string // result format name, set once the answer's format is known
}

// infoOf returns the request information the observe middleware keeps with
// the response writer, or a blank one for a writer it did not wrap.
func infoOf(w http.ResponseWriter) *requestInfo {
	if rec, ok := w.(*recorder); ok {
		return &rec.info
	}
	return &requestInfo{}
}

// requestID returns a usable id from the request header, or a new one. A
// usable id is 1 to 128 letters, digits and "._:-", which keeps log lines and
// response headers clean.
func requestID(r *http.Request) string {
	if id := r.Header.Get(RequestIDHeader); id != "" && len(id) <= 128 {
		ok := true
		for i := 0; i < len(id) && ok; i++ {
			c := id[i]
			ok = 'a' <= c && c <= 'z' || 'A' <= c && c <= 'Z' || '0' <= c && c <= '9' || c == '.' || c == '_' || c == ':' || c == '-'
		}
		if ok {
			return id
		}
	}
	// A correlation id, not a secret: math/rand/v2's generator, seeded from
	// the system's randomness, costs no system call per request.
	var b [12]byte
	binary.LittleEndian.PutUint64(b[:8], rand.Uint64())
	binary.LittleEndian.PutUint32(b[8:], rand.Uint32())
	return hex.EncodeToString(b[:])
}

// recorder remembers the status and size of a response, and carries the
// request's information to its handlers (no context copy per request). It
// keeps the optional interfaces streaming needs: Flush, and Unwrap for
// http.ResponseController.
type recorder struct {
	http.ResponseWriter
	info   requestInfo
	status int
	bytes  int64
}

// WriteHeader implements http.ResponseWriter.
func (w *recorder) WriteHeader(code int) {
	if w.status == 0 && code >= 200 {
		w.status = code
	}
	w.ResponseWriter.WriteHeader(code)
}

// Write implements http.ResponseWriter.
func (w *recorder) Write(b []byte) (int, error) {
	if w.status == 0 {
		w.status = http.StatusOK
	}
	n, err := w.ResponseWriter.Write(b)
	w.bytes += int64(n)
	return n, err
}

// Flush implements http.Flusher.
func (w *recorder) Flush() {
	if w.status == 0 {
		w.status = http.StatusOK
	}
	if f, ok := w.ResponseWriter.(http.Flusher); ok {
		f.Flush()
	}
}

// Unwrap lets http.ResponseController reach the underlying writer.
func (w *recorder) Unwrap() http.ResponseWriter { return w.ResponseWriter }

// committed reports whether the status line has gone out, after which a
// failure can only abort the response.
func (w *recorder) committed() bool { return w.status != 0 }

// observe is the outermost middleware: it gives the request its id, counts
// and times it, writes the access log line, and turns a panic into a logged
// internal error (or, once the response is committed, an aborted one).
func (s *Server) observe(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		start := time.Now()
		rec := &recorder{ResponseWriter: w, info: requestInfo{id: requestID(r)}}
		info := &rec.info
		w.Header().Set(RequestIDHeader, info.id)
		aborted := false
		defer func() {
			v := recover()
			if v != nil {
				aborted = rec.committed()
				if err, _ := v.(error); !errors.Is(err, http.ErrAbortHandler) {
					s.log.Error("handler panic", "request_id", info.id, "panic", fmt.Sprint(v), "stack", string(debug.Stack()))
					if !aborted {
						(&problem{status: http.StatusInternalServerError, msg: "internal error"}).write(rec)
					}
				} else {
					aborted = true
				}
			}
			s.account(r, info, rec, start, aborted)
			if aborted {
				panic(http.ErrAbortHandler)
			}
		}()
		next.ServeHTTP(rec, r)
	})
}

// account counts a finished request and writes its access log line.
func (s *Server) account(r *http.Request, info *requestInfo, rec *recorder, start time.Time, aborted bool) {
	d := time.Since(start)
	status := rec.status
	if aborted {
		status = 0
	}
	route := info.route
	if route == "" {
		route = "other"
	}
	format := info.format
	if format == "" {
		format = "none"
	}
	s.metrics.request(requestLabels{route, status, format}, d)
	level := slog.LevelInfo
	switch {
	case route == "health" || route == "metrics":
		level = slog.LevelDebug
	case aborted || status >= 500 && status != http.StatusServiceUnavailable:
		level = slog.LevelWarn
	}
	// The line is handed to the handler directly: Logger.LogAttrs would also
	// look up the caller's program counter, which an access log never shows.
	h := s.log.Handler()
	if !h.Enabled(r.Context(), level) {
		return
	}
	line := slog.NewRecord(time.Now(), level, "request", 0)
	line.AddAttrs(
		slog.String("request_id", info.id),
		slog.String("method", r.Method),
		slog.String("path", r.URL.Path),
		slog.String("route", route),
		slog.Int("status", status),
		slog.String("format", format),
		slog.Int64("bytes", rec.bytes),
		// Whole microseconds: slog's JSON handler writes a float through
		// encoding/json, which costs more than the rest of the line.
		slog.Int64("duration_us", d.Microseconds()),
		slog.String("remote", r.RemoteAddr),
	)
	h.Handle(r.Context(), line)
}

// handlerFunc is the shape of veneer's route handlers: they write a
// successful answer themselves and return any failure, which handle writes.
type handlerFunc func(w http.ResponseWriter, r *http.Request) error

// handle names the route for metrics and logs and writes a handler's failure:
// as a problem response while nothing has been sent, and otherwise by
// aborting the response, so that the client cannot mistake the part it got
// for a whole answer.
func (s *Server) handle(route string, h handlerFunc) http.HandlerFunc {
	return func(w http.ResponseWriter, r *http.Request) {
		info := infoOf(w)
		info.route = route
		err := h(w, r)
		if err == nil {
			return
		}
		p := problemOf(err)
		rec, _ := w.(*recorder)
		if rec != nil && rec.committed() {
			if p.status == statusCanceled {
				s.log.Debug("the client went away while the answer streamed", "request_id", info.id)
			} else {
				s.metrics.streamFailures.Inc()
				s.log.Error("the answer failed while streaming; response aborted",
					"request_id", info.id, "status", p.status, "err", err)
			}
			panic(http.ErrAbortHandler)
		}
		switch {
		case p.status == statusCanceled:
			s.log.Debug("the client went away", "request_id", info.id)
		case p.status == http.StatusServiceUnavailable && p.err == nil:
			// Refused by the concurrency limit, which counts it; under
			// overload a line for each would flood the log.
			s.log.Debug("request refused", "request_id", info.id, "reason", p.msg)
		case p.status == http.StatusServiceUnavailable:
			s.log.Warn("request not answered", "request_id", info.id, "status", p.status, "err", err)
		case p.status >= 500:
			s.log.Error("request failed", "request_id", info.id, "status", p.status, "err", err)
		case p.status < 500:
			s.log.Info("request refused", "request_id", info.id, "status", p.status, "reason", oneLine(p.Error()))
		}
		p.write(w)
	}
}

// oneLine keeps the first line of a message (a syntax error shows its source
// line and a caret below).
func oneLine(s string) string {
	for i := 0; i < len(s); i++ {
		if s[i] == '\n' {
			return s[:i]
		}
	}
	return s
}
