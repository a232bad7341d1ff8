package hostile

import (
	"bytes"
	"fmt"
	"strconv"
	"strings"
)

// Value is one value of the corpus and where it is written.
type Value struct {
	// Text is the value: any bytes, not necessarily UTF-8.
	Text string
	// Line is the corpus line that holds it, from 1.
	Line int
}

// maxRepeat bounds the "* N" of one line, so that a typo cannot ask for
// gigabytes.
const maxRepeat = 1 << 20

// ReadValues reads a corpus: each line that is neither blank nor a comment
// (first non-space character '#') is a Go double-quoted string literal,
// optionally followed by "* N" to repeat it N times. Errors name the file and
// line.
func ReadValues(name string, b []byte) ([]Value, error) {
	var vals []Value
	for i, line := range bytes.Split(b, []byte("\n")) {
		s := strings.TrimSpace(string(line))
		if s == "" || s[0] == '#' {
			continue
		}
		v, err := readLine(s)
		if err != nil {
			return nil, fmt.Errorf("%s:%d: %w", name, i+1, err)
		}
		vals = append(vals, Value{Text: v, Line: i + 1})
	}
	return vals, nil
}

// readLine reads one value line: QUOTED [ "*" COUNT ].
func readLine(s string) (string, error) {
	quoted, err := strconv.QuotedPrefix(s)
	if err != nil || quoted[0] != '"' {
		return "", fmt.Errorf("want a Go double-quoted string, got %.40q", s)
	}
	v, _ := strconv.Unquote(quoted) // QuotedPrefix has checked it
	rest := strings.TrimSpace(s[len(quoted):])
	if rest == "" {
		return v, nil
	}
	count, ok := strings.CutPrefix(rest, "*")
	n, err := strconv.Atoi(strings.TrimSpace(count))
	if !ok || err != nil || n < 1 || n > maxRepeat {
		return "", fmt.Errorf("after the string, want \"* N\" with 1 <= N <= %d, got %.40q", maxRepeat, rest)
	}
	return strings.Repeat(v, n), nil
}
