package catalog

import (
	"fmt"
	"sort"
)

// Error is a problem of a mapping: where the offending mapping element was
// written and what is wrong with it.
type Error struct {
	Pos Pos
	Msg string
	// Warning marks a problem that does not stop the mapping from being served,
	// such as a datatype the column's values may not fit.
	Warning bool
}

// Error renders the problem as "file:line:column: message", with "warning: "
// before the message of a warning.
func (e *Error) Error() string {
	s := e.Pos.String()
	if s != "" {
		s += ": "
	}
	if e.Warning {
		s += "warning: "
	}
	return s + e.Msg
}

// ErrorList is a list of problems, normally sorted by position (see Sorted).
// Its Error shows the first.
type ErrorList []*Error

// Error shows the first problem and how many more there are.
func (l ErrorList) Error() string {
	switch len(l) {
	case 0:
		return "no errors"
	case 1:
		return l[0].Error()
	}
	return fmt.Sprintf("%s (and %d more errors)", l[0], len(l)-1)
}

// Unwrap gives errors.Is and errors.As access to each problem of the list.
func (l ErrorList) Unwrap() []error {
	errs := make([]error, len(l))
	for i, e := range l {
		errs[i] = e
	}
	return errs
}

// Sorted returns the problems ordered by file, line and column, without exact
// repeats (a resource shared by several maps is checked once for each). Files
// come in the order given, then the others in their order of first appearance;
// problems at the same place keep their order.
func (l ErrorList) Sorted(files ...string) ErrorList {
	rank := map[string]int{}
	for _, f := range files {
		if _, ok := rank[f]; !ok {
			rank[f] = len(rank)
		}
	}
	for _, e := range l {
		if _, ok := rank[e.Pos.File]; !ok {
			rank[e.Pos.File] = len(rank)
		}
	}
	s := append(ErrorList(nil), l...)
	sort.SliceStable(s, func(i, j int) bool {
		a, b := s[i].Pos, s[j].Pos
		if ra, rb := rank[a.File], rank[b.File]; ra != rb {
			return ra < rb
		}
		if a.Line != b.Line {
			return a.Line < b.Line
		}
		return a.Col < b.Col
	})
	var out ErrorList
	for i, e := range s {
		if i > 0 && *e == *s[i-1] {
			continue
		}
		out = append(out, e)
	}
	return out
}

// Errors returns the problems that are not warnings, in order.
func (l ErrorList) Errors() ErrorList {
	var out ErrorList
	for _, e := range l {
		if !e.Warning {
			out = append(out, e)
		}
	}
	return out
}

// Warnings returns the problems that are warnings, in order.
func (l ErrorList) Warnings() ErrorList {
	var out ErrorList
	for _, e := range l {
		if e.Warning {
			out = append(out, e)
		}
	}
	return out
}
