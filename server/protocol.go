package server

import (
	"errors"
	"io"
	"mime"
	"net/http"
	"net/url"
	"strconv"
	"strings"
	"time"
	"unicode/utf8"

	"veneer/catalog/rdf"
)

// The media types of the SPARQL 1.1 Protocol's POST bodies (§2.1.2, §2.1.3,
// §2.2.2).
const (
	mediaForm   = "application/x-www-form-urlencoded"
	mediaQuery  = "application/sparql-query"
	mediaUpdate = "application/sparql-update"
)

// operation is a query request as the protocol defines it, with veneer's own
// parameters.
type operation struct {
	query Query
	// format is the format parameter: a format's short name or media type,
	// which takes precedence over the Accept header; empty when absent.
	format string
	// timeout is what the client asked for with the timeout parameter; 0 when
	// it did not ask.
	timeout time.Duration
}

// errReadOnly refuses SPARQL Update: veneer's sources are never written to.
var errReadOnly = &problem{
	status: http.StatusForbidden,
	msg:    "this endpoint is read-only: SPARQL Update requests are not accepted",
}

// isQueryRequest reports whether the URL parameters of a GET request carry a
// query or an update operation; one that does not asks for the service
// description.
func isQueryRequest(params url.Values) bool {
	return params.Has("query") || params.Has("update")
}

// readOperation reads the query operation of a SPARQL 1.1 Protocol request
// (§2.1): a GET with the query in the URL (§2.1.1), a POST of a form (§2.1.2)
// or a POST of the query itself (§2.1.3). base is the endpoint's URL.
//
// Update operations (§2.2), by any method, are refused as read-only. The
// other failures are client errors that say what is wrong: a missing or
// repeated query parameter (§2.1.4: exactly one), a body of another media type
// (415), a charset other than UTF-8 (the protocol's bodies are UTF-8), text
// that is not UTF-8, a query or body over the configured limits (413), or a
// dataset or timeout parameter that does not parse. params are the request
// URL's parameters.
func (s *Server) readOperation(w http.ResponseWriter, r *http.Request, params url.Values, base string) (*operation, error) {
	var text string
	switch r.Method {
	case http.MethodGet:
		if params.Has("update") {
			return nil, errReadOnly
		}
		var err error
		if text, err = single(params, "query"); err != nil {
			return nil, err
		}
	case http.MethodPost:
		mt, mtParams, err := mime.ParseMediaType(r.Header.Get("Content-Type"))
		if err != nil {
			return nil, &problem{status: http.StatusUnsupportedMediaType,
				msg: "a POST needs a Content-Type of " + mediaForm + " or " + mediaQuery}
		}
		if cs, ok := mtParams["charset"]; ok && !strings.EqualFold(cs, "utf-8") {
			return nil, &problem{status: http.StatusUnsupportedMediaType,
				msg: "the body must be UTF-8, not " + cs}
		}
		switch mt {
		case mediaUpdate:
			return nil, errReadOnly
		case mediaForm:
			body, err := s.readBody(w, r)
			if err != nil {
				return nil, err
			}
			form, err := parseForm(body)
			if err != nil {
				return nil, badRequest("the form body does not parse: %v", err)
			}
			if form.Has("update") || params.Has("update") {
				return nil, errReadOnly
			}
			if params.Has("query") {
				return nil, badRequest("a form POST carries the query in its body, not in the URL")
			}
			for k, v := range form {
				params[k] = append(params[k], v...)
			}
			if text, err = single(form, "query"); err != nil {
				return nil, err
			}
		case mediaQuery:
			if params.Has("query") {
				return nil, badRequest("a POST of " + mediaQuery + " carries the query in its body; the URL has a query parameter too")
			}
			if text, err = s.readBody(w, r); err != nil {
				return nil, err
			}
		default:
			return nil, &problem{status: http.StatusUnsupportedMediaType,
				msg: "unsupported Content-Type " + mt + "; a query is sent as " + mediaForm + " or " + mediaQuery}
		}
	default:
		return nil, &problem{status: http.StatusMethodNotAllowed, msg: "a query is sent with GET or POST",
			header: http.Header{"Allow": {"GET, POST"}}}
	}
	if !utf8.ValidString(text) {
		return nil, badRequest("the query is not UTF-8 text")
	}
	if max := s.cfg.Limits.MaxQueryBytes; max > 0 && int64(len(text)) > max {
		return nil, tooLarge("the query is %d bytes long; this endpoint takes at most %d", len(text), max)
	}
	op := &operation{query: Query{Text: text, Base: base}, format: params.Get("format")}
	var err error
	if op.query.DefaultGraphs, err = graphIRIs(params, "default-graph-uri"); err != nil {
		return nil, err
	}
	if op.query.NamedGraphs, err = graphIRIs(params, "named-graph-uri"); err != nil {
		return nil, err
	}
	if t := params.Get("timeout"); t != "" {
		if op.timeout, err = parseTimeout(t); err != nil {
			return nil, err
		}
	}
	return op, nil
}

// single returns the one value of parameter name.
func single(params url.Values, name string) (string, error) {
	switch v := params[name]; len(v) {
	case 1:
		return v[0], nil
	case 0:
		return "", badRequest("the request has no %q parameter", name)
	default:
		return "", badRequest("the request has %d %q parameters; it takes exactly one", len(v), name)
	}
}

// readBody reads a request body of at most Limits.MaxBodyBytes bytes.
func (s *Server) readBody(w http.ResponseWriter, r *http.Request) (string, error) {
	body := r.Body
	if max := s.cfg.Limits.MaxBodyBytes; max > 0 {
		body = http.MaxBytesReader(w, body, max)
	}
	b, err := io.ReadAll(body)
	if err != nil {
		var mbe *http.MaxBytesError
		if errors.As(err, &mbe) {
			return "", tooLarge("the request body is over %d bytes, the most this endpoint takes", mbe.Limit)
		}
		return "", badRequest("reading the request body: %v", err)
	}
	return string(b), nil
}

// graphIRIs reads a dataset parameter, each value an absolute IRI.
func graphIRIs(params url.Values, name string) ([]rdf.IRI, error) {
	var iris []rdf.IRI
	for _, v := range params[name] {
		u, err := url.Parse(v)
		if err != nil || u.Scheme == "" || !utf8.ValidString(v) || strings.ContainsAny(v, "<>\"{}|^`\\ \t\r\n") {
			return nil, badRequest("%s %q is not an absolute IRI", name, v)
		}
		iris = append(iris, rdf.IRI(v))
	}
	return iris, nil
}

// parseTimeout reads the timeout parameter: a number of seconds ("5", "0.25")
// or a number with a unit ("500ms", "2s").
func parseTimeout(s string) (time.Duration, error) {
	d, err := time.ParseDuration(s)
	if err != nil {
		secs, ferr := strconv.ParseFloat(s, 64)
		if ferr != nil || secs != secs {
			return 0, badRequest("timeout %q is neither a number of seconds nor a duration such as 500ms", s)
		}
		if secs > 1e9 {
			secs = 1e9 // some 30 years: the server's own limit caps it anyway
		}
		d = time.Duration(secs * float64(time.Second))
	}
	if d <= 0 {
		return 0, badRequest("timeout %q must be positive", s)
	}
	return d, nil
}
