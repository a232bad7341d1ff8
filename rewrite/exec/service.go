package exec

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"slices"
	"strconv"
	"strings"
	"time"

	"veneer/catalog/rdf"
	"veneer/rewrite"
	"veneer/rewrite/algebra"
)

// This file runs SERVICE (SPARQL 1.1 Federated Query) as a bind join: the
// left input is read first, the distinct bindings of the variables it shares
// with the service pattern go to the endpoint as VALUES rows, a batch of rows
// per call, and each left solution is joined with the answers to its own row.
// Every row carries its number in one more variable, so that an answer is
// matched to the row it answers even where rows leave variables UNDEF.

// DefaultServiceTimeout is the default of Options.ServiceTimeout.
const DefaultServiceTimeout = 10 * time.Second

// DefaultServiceMaxBytes is the default of Options.ServiceMaxBytes.
const DefaultServiceMaxBytes = 16 << 20

// serviceBatch is how many VALUES rows one call sends: common practice for
// bind joins, small enough for any endpoint to read quickly.
const serviceBatch = 64

// serviceSetting names the setting that lists the endpoints SERVICE may call,
// for the error of a query that names another.
const serviceSetting = "YAML service.allow, flag --service-allow, environment VENEER_SERVICE_ALLOW"

// serviceClient calls SERVICE endpoints. It follows no redirect (a 3xx answer
// is a failure) and uses no proxy, so a call goes only to the address the
// allowlisted IRI names.
var serviceClient = func() *http.Client {
	t := http.DefaultTransport.(*http.Transport).Clone()
	t.Proxy = nil
	return &http.Client{
		Transport:     t,
		CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse },
	}
}()

// service builds SERVICE joined with left (nil: alone, as if joined with the
// single empty solution).
func (b *builder) service(left rewrite.Op, op *rewrite.Service) (node, error) {
	if !slices.Contains(b.r.services, string(op.Endpoint)) {
		return node{}, &Error{Kind: BadQuery, Err: fmt.Errorf("SERVICE %s: veneer calls only the endpoints listed in its SERVICE allowlist (%s), and this one is not listed", op.Endpoint, serviceSetting)}
	}
	l := node{it: &valuesIter{l: b.l, rows: [][]rdf.Term{{}}}}
	if left != nil {
		var err error
		if l, err = b.build(left); err != nil {
			return node{}, err
		}
	}
	s := &serviceIter{r: b.r, op: op, l: b.l, left: l.it, slots: map[string]int{}, rowVar: rowVarName(op.Vars)}
	inLeft := map[int]bool{}
	for _, i := range l.scope {
		inLeft[i] = true
	}
	var scope []int
	for _, v := range op.Vars {
		i := b.l.slot(v)
		s.slots[string(v)] = i
		scope = append(scope, i)
		if inLeft[i] {
			s.shared = append(s.shared, i)
			s.sharedVars = append(s.sharedVars, v)
		}
	}
	return node{it: s, scope: unionScope(l.scope, scope)}, nil
}

// rowVarName is a variable name none of vars has, for the row numbers.
func rowVarName(vars []algebra.Var) string {
	taken := map[string]bool{}
	for _, v := range vars {
		taken[string(v)] = true
	}
	name := "veneer_row"
	for n := 1; taken[name]; n++ {
		name = "veneer_row" + strconv.Itoa(n)
	}
	return name
}

type serviceIter struct {
	r          *run
	op         *rewrite.Service
	l          *layout
	left       iterator
	slots      map[string]int // by variable name
	shared     []int          // slots the left side may bind
	sharedVars []algebra.Var
	rowVar     string

	started bool
	keys    [][]rdf.Term   // the distinct shared bindings (nil: UNDEF)
	groups  [][][]rdf.Term // the left solutions of each key
	sent    int            // keys sent so far
	out     [][]rdf.Term
}

func (s *serviceIter) next() ([]rdf.Term, error) {
	if !s.started {
		s.started = true
		err := s.readLeft()
		s.left.close()
		if err != nil {
			return nil, err
		}
	}
	for len(s.out) == 0 {
		if s.sent >= len(s.keys) {
			return nil, nil
		}
		if err := s.batch(); err != nil {
			return nil, err
		}
	}
	sol := s.out[0]
	s.out = s.out[1:]
	return sol, nil
}

func (s *serviceIter) close() {
	s.left.close()
	s.started, s.keys, s.groups, s.out = true, nil, nil, nil
}

// readLeft reads the left input, grouping its solutions by their shared
// bindings.
func (s *serviceIter) readLeft() error {
	index := map[string]int{}
	var kb []byte
	held := 0
	for {
		sol, err := s.left.next()
		if sol == nil || err != nil {
			return err
		}
		key := make([]rdf.Term, len(s.shared))
		blank := false
		kb = kb[:0]
		for i, slot := range s.shared {
			key[i] = sol[slot]
			_, isBlank := sol[slot].(rdf.BlankNode)
			blank = blank || isBlank
			kb = appendTermKey(kb, sol[slot])
		}
		if blank {
			// A blank node of ours is no term of the remote dataset, and VALUES
			// cannot carry one: the solution joins with no answer.
			continue
		}
		if held++; held > s.r.limit {
			return s.r.tooLarge("the left side of a SERVICE join")
		}
		k, seen := index[string(kb)]
		if !seen {
			k = len(s.keys)
			index[string(kb)] = k
			s.keys = append(s.keys, key)
			s.groups = append(s.groups, nil)
		}
		s.groups[k] = append(s.groups[k], sol)
	}
}

// batch sends the next batch of keys and joins the answers with their left
// solutions.
func (s *serviceIter) batch() error {
	from, to := s.sent, min(s.sent+serviceBatch, len(s.keys))
	s.sent = to
	answers, err := s.call(from, to)
	if err != nil {
		if !s.op.Silent || s.r.ctx.Err() != nil {
			return err
		}
		// SERVICE SILENT: a failed call answers the single empty solution
		// (SPARQL 1.1 Federated Query §4), which every left solution joins.
		for k := from; k < to; k++ {
			s.out = append(s.out, s.groups[k]...)
		}
		return nil
	}
	for _, a := range answers {
		for _, sol := range s.groups[a.key] {
			if merged, ok := mergeCompatible(sol, a.sol); ok {
				s.r.residual++
				s.out = append(s.out, merged)
				if len(s.out) > s.r.limit {
					return s.r.tooLarge("the answers of one SERVICE call")
				}
			}
		}
	}
	return nil
}

// mergeCompatible merges two solutions when no variable is bound to different
// terms in them (§18.3 compatible mappings).
func mergeCompatible(a, b []rdf.Term) ([]rdf.Term, bool) {
	out := append([]rdf.Term(nil), a...)
	for i, t := range b {
		switch {
		case t == nil:
		case out[i] == nil:
			out[i] = t
		case !rdf.SameTerm(out[i], t):
			return nil, false
		}
	}
	return out, true
}

// answer is one solution the endpoint answered, with the key it answers.
type answer struct {
	key int
	sol []rdf.Term
}

// call sends the keys [from, to) and decodes the answers.
func (s *serviceIter) call(from, to int) ([]answer, error) {
	text := "SELECT * WHERE " + s.op.Pattern
	if len(s.shared) > 0 {
		text = "SELECT * WHERE {\n" + s.values(from, to) + "\n" + s.op.Pattern + "\n}"
	}
	bindings, err := s.r.callService(s.op.Endpoint, text)
	if err != nil {
		return nil, err
	}
	var out []answer
	for i, b := range bindings {
		a := answer{key: from, sol: make([]rdf.Term, s.l.width())}
		for name, t := range b {
			if slot, ok := s.slots[name]; ok {
				a.sol[slot] = t
			}
		}
		if len(s.shared) > 0 {
			k, ok := rowNumber(b[s.rowVar])
			if !ok || k < from || k >= to {
				return nil, s.r.remoteFailure(s.op.Endpoint, "answered solution %d without the row number ?%s of the VALUES rows it was sent", i+1, s.rowVar)
			}
			a.key = k
		}
		out = append(out, a)
	}
	return out, nil
}

// values writes the VALUES block of the keys [from, to), each row numbered.
func (s *serviceIter) values(from, to int) string {
	var b strings.Builder
	b.WriteString("VALUES (")
	for _, v := range s.sharedVars {
		b.WriteString("?" + string(v) + " ")
	}
	b.WriteString("?" + s.rowVar + ") {")
	for k := from; k < to; k++ {
		b.WriteString("\n  (")
		for _, t := range s.keys[k] {
			switch t := t.(type) {
			case rdf.IRI:
				b.WriteString(t.String())
			case rdf.Literal:
				b.WriteString(t.String())
			default:
				b.WriteString("UNDEF")
			}
			b.WriteByte(' ')
		}
		b.WriteString(strconv.Itoa(k) + ")")
	}
	b.WriteString("\n}")
	return b.String()
}

func rowNumber(t rdf.Term) (int, bool) {
	l, ok := t.(rdf.Literal)
	if !ok {
		return 0, false
	}
	n, err := strconv.Atoi(l.Lexical)
	return n, err == nil
}

// remoteFailure is the error of an endpoint that failed.
func (r *run) remoteFailure(endpoint rdf.IRI, format string, args ...any) error {
	return &Error{Kind: Remote, Err: fmt.Errorf("SERVICE %s %s", endpoint, fmt.Sprintf(format, args...))}
}

// callService posts a query to an endpoint (SPARQL 1.1 Protocol §2.1.2, query
// via URL-encoded POST) and decodes its SPARQL JSON results.
func (r *run) callService(endpoint rdf.IRI, query string) ([]map[string]rdf.Term, error) {
	ctx, cancel := context.WithTimeout(r.ctx, r.serviceTimeout)
	defer cancel()
	failed := func(err error) error {
		switch {
		case r.ctx.Err() != nil:
			return classify(r.ctx, err)
		case errors.Is(ctx.Err(), context.DeadlineExceeded):
			return r.remoteFailure(endpoint, "did not answer within %s (the time limit of SERVICE calls)", r.serviceTimeout)
		}
		return r.remoteFailure(endpoint, "failed: %v", err)
	}
	form := url.Values{"query": {query}}.Encode()
	req, err := http.NewRequestWithContext(ctx, http.MethodPost, string(endpoint), strings.NewReader(form))
	if err != nil {
		return nil, r.remoteFailure(endpoint, "cannot be called: %v", err)
	}
	req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	req.Header.Set("Accept", "application/sparql-results+json")
	resp, err := serviceClient.Do(req)
	if err != nil {
		return nil, failed(err)
	}
	defer resp.Body.Close()
	switch {
	case resp.StatusCode/100 == 3:
		return nil, r.remoteFailure(endpoint, "answered with a redirect (status %d); veneer follows no redirects", resp.StatusCode)
	case resp.StatusCode/100 != 2:
		return nil, r.remoteFailure(endpoint, "answered with status %d", resp.StatusCode)
	}
	body, err := io.ReadAll(io.LimitReader(resp.Body, r.serviceMax+1))
	if err != nil {
		return nil, failed(err)
	}
	if int64(len(body)) > r.serviceMax {
		return nil, &Error{Kind: TooLarge, Err: fmt.Errorf("the answer of SERVICE %s is larger than %d bytes (the limit on SERVICE answers)", endpoint, r.serviceMax)}
	}
	bindings, err := decodeResults(body, r.freshBlank)
	if err != nil {
		return nil, r.remoteFailure(endpoint, "answered malformed SPARQL JSON results: %v", err)
	}
	return bindings, nil
}

// jsonResults is a SPARQL 1.1 Query Results JSON document (SPARQL 1.1 Query
// Results JSON Format §3); the boolean form has no bindings.
type jsonResults struct {
	Results *struct {
		Bindings []map[string]jsonTerm `json:"bindings"`
	} `json:"results"`
}

// jsonTerm is one RDF term of the format (§3.2.2).
type jsonTerm struct {
	Type     string `json:"type"`
	Value    string `json:"value"`
	Lang     string `json:"xml:lang"`
	Datatype string `json:"datatype"`
}

// decodeResults reads the solutions of a results document. Blank nodes get
// labels from fresh, one per label of the document: the endpoint's labels
// mean nothing here.
func decodeResults(body []byte, fresh func() rdf.BlankNode) ([]map[string]rdf.Term, error) {
	var doc jsonResults
	if err := json.Unmarshal(body, &doc); err != nil {
		return nil, err
	}
	if doc.Results == nil {
		return nil, errors.New(`the document has no "results" member`)
	}
	blanks := map[string]rdf.BlankNode{}
	out := make([]map[string]rdf.Term, 0, len(doc.Results.Bindings))
	for i, b := range doc.Results.Bindings {
		sol := make(map[string]rdf.Term, len(b))
		for name, jt := range b {
			t, err := jt.term(blanks, fresh)
			if err != nil {
				return nil, fmt.Errorf("solution %d, variable ?%s: %v", i+1, name, err)
			}
			sol[name] = t
		}
		out = append(out, sol)
	}
	return out, nil
}

func (jt jsonTerm) term(blanks map[string]rdf.BlankNode, fresh func() rdf.BlankNode) (rdf.Term, error) {
	switch jt.Type {
	case "uri":
		return rdf.IRI(jt.Value), nil
	case "literal", "typed-literal": // typed-literal: the 2008 form of the format
		switch {
		case jt.Lang != "":
			return rdf.NewLangString(jt.Value, jt.Lang), nil
		case jt.Datatype != "":
			return rdf.NewTyped(jt.Value, rdf.IRI(jt.Datatype)), nil
		}
		return rdf.NewString(jt.Value), nil
	case "bnode":
		b, ok := blanks[jt.Value]
		if !ok {
			b = fresh()
			blanks[jt.Value] = b
		}
		return b, nil
	}
	return nil, fmt.Errorf("unknown term type %q", jt.Type)
}
