package server

import (
	"errors"
	"fmt"
	"net/http"
	"strconv"
	"time"

	"veneer/rewrite/exec"
)

// problem is a failure as the client sees it: a status and a plain-text
// message, and the headers some statuses need.
type problem struct {
	status int
	msg    string
	// retryAfter, when positive, goes into a Retry-After header.
	retryAfter time.Duration
	// header holds other headers to set, such as Allow or WWW-Authenticate.
	header http.Header
	// err is the cause, for the log; it may hold internals the client must
	// not see.
	err error
}

func (p *problem) Error() string {
	if p.err != nil && p.err.Error() != p.msg {
		return p.msg + ": " + p.err.Error()
	}
	return p.msg
}

func (p *problem) Unwrap() error { return p.err }

// badRequest is a 400 with msg.
func badRequest(format string, args ...any) *problem {
	return &problem{status: http.StatusBadRequest, msg: fmt.Sprintf(format, args...)}
}

// tooLarge is a request or an answer over one of the configured limits.
func tooLarge(format string, args ...any) error {
	return &exec.Error{Kind: exec.TooLarge, Err: fmt.Errorf(format, args...)}
}

// statusCanceled is the status logged and counted for a request whose client
// went away: nobody reads it (the convention of some proxies, not a standard).
const statusCanceled = 499

// problemOf turns any failure into what the client gets. It is the one place
// where error kinds become HTTP statuses (exec.ErrorKind). Failures on the
// server's side keep their cause out of the message: it may hold SQL, an
// address or part of a DSN.
func problemOf(err error) *problem {
	var p *problem
	if errors.As(err, &p) {
		return p
	}
	switch exec.KindOf(err) {
	case exec.BadQuery:
		return &problem{status: http.StatusBadRequest, msg: err.Error(), err: err}
	case exec.TooLarge:
		return &problem{status: http.StatusRequestEntityTooLarge, msg: err.Error(), err: err}
	case exec.Timeout:
		return &problem{status: http.StatusServiceUnavailable, msg: "the query ran past its time limit; ask for less or narrow the query", err: err}
	case exec.Unavailable:
		return &problem{status: http.StatusServiceUnavailable, msg: "the database is unavailable", retryAfter: time.Second, err: err}
	case exec.Remote:
		// The message names the endpoint and what it did, nothing of ours.
		return &problem{status: http.StatusBadGateway, msg: err.Error(), err: err}
	case exec.Canceled:
		return &problem{status: statusCanceled, msg: "the request was canceled", err: err}
	}
	return &problem{status: http.StatusInternalServerError, msg: "internal error", err: err}
}

// write sends the problem as the whole response.
func (p *problem) write(w http.ResponseWriter) {
	h := w.Header()
	for k, v := range p.header {
		h[k] = v
	}
	if p.retryAfter > 0 {
		h.Set("Retry-After", strconv.Itoa(int((p.retryAfter+time.Second-1)/time.Second)))
	}
	msg := p.msg
	if len(msg) == 0 || msg[len(msg)-1] != '\n' {
		msg += "\n"
	}
	h.Del("Content-Length")
	h.Set("Content-Type", "text/plain; charset=utf-8")
	h.Set("X-Content-Type-Options", "nosniff")
	w.WriteHeader(p.status)
	w.Write([]byte(msg))
}
