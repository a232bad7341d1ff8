package rdf

import (
	"fmt"
	"sort"
	"strings"
	"unicode/utf8"
)

// Pos is a place in a source text. Line and Col are 1-based; Col counts
// characters (not bytes) from the start of the line. Offset is the byte offset.
type Pos struct {
	Offset    int
	Line, Col int
}

// String renders the position as "line L, column C".
func (p Pos) String() string { return fmt.Sprintf("line %d, column %d", p.Line, p.Col) }

// SyntaxError is an error in RDF text: where it is and what was expected there.
type SyntaxError struct {
	// Name is the name of the source (usually a file name); it may be empty.
	Name string
	Pos  Pos
	Msg  string
	// Source is the text of the line the error is on.
	Source string
}

// Error renders the error as "name: line L, column C: message", followed by the
// source line and a caret under the position.
func (e *SyntaxError) Error() string {
	var b strings.Builder
	if e.Name != "" {
		b.WriteString(e.Name)
		b.WriteString(": ")
	}
	fmt.Fprintf(&b, "%s: %s", e.Pos, e.Msg)
	if e.Source != "" {
		line := strings.ReplaceAll(e.Source, "\t", " ")
		fmt.Fprintf(&b, "\n\t%s\n\t%s^", line, strings.Repeat(" ", max(e.Pos.Col-1, 0)))
	}
	return b.String()
}

// ErrorList is a list of syntax errors sorted by position. Its Error shows the first.
type ErrorList []*SyntaxError

// Error shows the first error and how many more there are.
func (l ErrorList) Error() string {
	switch len(l) {
	case 0:
		return "no errors"
	case 1:
		return l[0].Error()
	}
	return fmt.Sprintf("%s\n(and %d more errors)", l[0], len(l)-1)
}

// Unwrap gives errors.Is and errors.As access to each error of the list.
func (l ErrorList) Unwrap() []error {
	errs := make([]error, len(l))
	for i, e := range l {
		errs[i] = e
	}
	return errs
}

// source is a text being parsed, with the offsets at which its lines start.
type source struct {
	name  string
	src   []byte
	lines []int
}

func newSource(name string, src []byte) *source {
	s := &source{name: name, src: src, lines: []int{0}}
	for i := 0; i < len(src); i++ {
		switch src[i] {
		case '\r':
			if i+1 < len(src) && src[i+1] == '\n' {
				i++
			}
			s.lines = append(s.lines, i+1)
		case '\n':
			s.lines = append(s.lines, i+1)
		}
	}
	return s
}

// position converts a byte offset into a Pos.
func (s *source) position(off int) Pos {
	i := sort.Search(len(s.lines), func(i int) bool { return s.lines[i] > off }) - 1
	start := s.lines[i]
	return Pos{Offset: off, Line: i + 1, Col: utf8.RuneCount(s.src[start:off]) + 1}
}

// line returns the text of the 1-based line n without its line break.
func (s *source) line(n int) string {
	start, end := s.lines[n-1], len(s.src)
	if n < len(s.lines) {
		end = s.lines[n]
	}
	return strings.TrimRight(string(s.src[start:end]), "\r\n")
}

// errorAt builds a syntax error at byte offset off.
func (s *source) errorAt(off int, format string, args ...any) *SyntaxError {
	p := s.position(off)
	return &SyntaxError{Name: s.name, Pos: p, Msg: fmt.Sprintf(format, args...), Source: s.line(p.Line)}
}

// checkUTF8 returns an error at the first byte that is not valid UTF-8.
func (s *source) checkUTF8() error {
	for off := 0; off < len(s.src); {
		r, w := utf8.DecodeRune(s.src[off:])
		if r == utf8.RuneError && w == 1 {
			return ErrorList{s.errorAt(off, "invalid UTF-8 encoding")}
		}
		off += w
	}
	return nil
}

// sortErrors sorts a list of errors by position.
func sortErrors(l ErrorList) {
	sort.SliceStable(l, func(i, j int) bool { return l[i].Pos.Offset < l[j].Pos.Offset })
}
