package sparql

import (
	"errors"
	"fmt"
	"sort"
	"strings"
	"unicode/utf8"
)

// ErrUpdate is the error that a SPARQL Update request wraps: the endpoint
// answers queries only. Check for it with errors.Is.
var ErrUpdate = errors.New("this endpoint is read-only: SPARQL Update requests are not accepted")

// SyntaxError is a problem at a position in the query text.
type SyntaxError struct {
	Pos Pos
	Msg string
	src string
	err error
}

func newError(src string, pos Pos, format string, args ...any) *SyntaxError {
	return &SyntaxError{Pos: pos, Msg: fmt.Sprintf(format, args...), src: src}
}

// LineCol returns the 1-based line and column (counted in characters) of the
// error's position.
func (e *SyntaxError) LineCol() (line, col int) { return lineCol(e.src, e.Pos) }

// Error returns "line L, column C: message", then the source line and a caret
// under the spot.
func (e *SyntaxError) Error() string {
	line, col := e.LineCol()
	var b strings.Builder
	fmt.Fprintf(&b, "line %d, column %d: %s", line, col, e.Msg)
	if text, caret, ok := sourceLine(e.src, e.Pos); ok {
		b.WriteString("\n  ")
		b.WriteString(text)
		b.WriteString("\n  ")
		b.WriteString(caret)
		b.WriteByte('^')
	}
	return b.String()
}

// Unwrap returns the error the syntax error stands for, such as ErrUpdate.
func (e *SyntaxError) Unwrap() error { return e.err }

// lineCol converts a byte offset into a 1-based line and character column.
// A "\r\n" pair counts as one line break.
func lineCol(src string, pos Pos) (line, col int) {
	p := min(max(int(pos), 0), len(src))
	line, start := 1, 0
	for i := 0; i < p; i++ {
		switch src[i] {
		case '\r':
			if i+1 < len(src) && src[i+1] == '\n' {
				continue
			}
			fallthrough
		case '\n':
			line, start = line+1, i+1
		}
	}
	return line, utf8.RuneCountInString(src[start:p]) + 1
}

// Around the position of an error, at most this many characters of a long
// line are shown before it and after it, so that the message of a query
// written on one line stays short.
const shownBefore, shownAfter = 60, 40

// sourceLine returns the line of src that holds pos, or the part of it around
// pos with "..." where it is cut, with tabs kept so that the caret lines up,
// and the padding to put before the caret.
func sourceLine(src string, pos Pos) (text, pad string, ok bool) {
	p := min(max(int(pos), 0), len(src))
	start := strings.LastIndexAny(src[:p], "\r\n") + 1
	end := strings.IndexAny(src[p:], "\r\n")
	if end < 0 {
		end = len(src)
	} else {
		end += p
	}
	if strings.TrimSpace(src[start:end]) == "" || !utf8.ValidString(src[start:end]) {
		return "", "", false
	}
	var before, after string
	if n := utf8.RuneCountInString(src[start:p]); n > shownBefore {
		start = skipRunes(src, start, n-shownBefore)
		before = "..."
	}
	if n := utf8.RuneCountInString(src[p:end]); n > shownAfter {
		end = skipRunes(src, p, shownAfter)
		after = "..."
	}
	var b strings.Builder
	b.WriteString(strings.Repeat(" ", len(before)))
	for _, r := range src[start:p] {
		if r == '\t' {
			b.WriteByte('\t')
		} else {
			b.WriteByte(' ')
		}
	}
	return before + src[start:end] + after, b.String(), true
}

// skipRunes returns the offset n characters after offset at.
func skipRunes(s string, at, n int) int {
	for ; n > 0 && at < len(s); n-- {
		_, w := utf8.DecodeRuneInString(s[at:])
		at += w
	}
	return at
}

// ErrorList is a list of syntax errors sorted by position. Error shows the
// first one.
type ErrorList []*SyntaxError

// Error implements error.
func (l ErrorList) Error() string {
	switch len(l) {
	case 0:
		return "no errors"
	case 1:
		return l[0].Error()
	}
	return fmt.Sprintf("%s\n(and %d more errors)", l[0].Error(), len(l)-1)
}

// Unwrap returns the errors of the list, so that errors.Is and errors.As look
// at each of them.
func (l ErrorList) Unwrap() []error {
	errs := make([]error, len(l))
	for i, e := range l {
		errs[i] = e
	}
	return errs
}

// Sort orders the list by position.
func (l ErrorList) Sort() {
	sort.SliceStable(l, func(i, j int) bool { return l[i].Pos < l[j].Pos })
}

// Err returns the list as an error, or nil when it is empty.
func (l ErrorList) Err() error {
	if len(l) == 0 {
		return nil
	}
	l.Sort()
	return l
}
