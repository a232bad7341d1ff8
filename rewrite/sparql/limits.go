package sparql

import (
	"errors"
	"unicode/utf8"
)

// Limits bound the queries the parser accepts, so that one request cannot make
// the parser, the translation to algebra or the planner run out of stack, time
// or memory. A field that is zero or negative takes its default.
type Limits struct {
	// MaxLength is the longest query text, in bytes.
	MaxLength int
	// MaxDepth bounds how deeply the query nests. Each group { }, bracketed
	// expression, function argument, parenthesised path, collection and blank
	// node property list opens a level, and so do each operator of a chain
	// (a || b || c), each UNION branch, each element of a group other than
	// triples and FILTER, and each SELECT expression: the syntax tree or the
	// algebra nests one level deeper for every one of them.
	MaxDepth int
	// MaxTriples is the most triple patterns the query may have, counted as
	// §18.2.2 expands the text: one per object of a property list, one more per
	// step of a path sequence, two per member of a collection.
	MaxTriples int
}

// The default limits. They are our choice (no source): far above what
// dashboards and federating services send, far below what would hurt.
const (
	DefaultMaxLength  = 1 << 20
	DefaultMaxDepth   = 1000
	DefaultMaxTriples = 1000
)

// ErrLimit is wrapped by the error for a query beyond one of its Limits; check
// for it with errors.Is (the server answers such a query as too large).
var ErrLimit = errors.New("the query exceeds a limit of this endpoint")

// orDefaults returns the limits with each field that is not positive set to
// its default.
func (l Limits) orDefaults() Limits {
	if l.MaxLength <= 0 {
		l.MaxLength = DefaultMaxLength
	}
	if l.MaxDepth <= 0 {
		l.MaxDepth = DefaultMaxDepth
	}
	if l.MaxTriples <= 0 {
		l.MaxTriples = DefaultMaxTriples
	}
	return l
}

// checkLength stops parsing when the text is longer than the limit, at the
// first character past it.
func (p *parser) checkLength() {
	if len(p.src) <= p.lim.MaxLength {
		return
	}
	at := p.lim.MaxLength
	for at > 0 && !utf8.RuneStart(p.src[at]) {
		at--
	}
	p.failLimit(Pos(at), "the query is %d bytes long, more than the limit of %d bytes", len(p.src), p.lim.MaxLength)
}

// enter opens a nesting level at pos; leave closes it.
func (p *parser) enter(pos Pos) {
	p.depth++
	if p.depth > p.lim.MaxDepth {
		p.failLimit(pos, "the query nests more than %d levels deep (groups, brackets, function arguments, "+
			"the operators of a chain and the elements of a group each add a level)", p.lim.MaxDepth)
	}
}

func (p *parser) leave() { p.depth-- }

// addTriples counts n triple patterns written at pos.
func (p *parser) addTriples(pos Pos, n int) {
	p.triples += n
	if p.triples > p.lim.MaxTriples {
		p.failLimit(pos, "the query has more than %d triple patterns", p.lim.MaxTriples)
	}
}

// failLimit stops parsing with an error that wraps ErrLimit.
func (p *parser) failLimit(pos Pos, format string, args ...any) {
	e := newError(p.src, pos, format, args...)
	e.err = ErrLimit
	panic(parseError{e})
}
