package conformance

import (
	"bufio"
	"bytes"
	"embed"
	"errors"
	"fmt"
	"io/fs"
	"strings"
)

// skipFiles are the skip lists, one per suite: testdata/skip-SUITE.txt.
//
//go:embed testdata
var skipFiles embed.FS

// SkipList names the tests a run leaves out, each with the reason. Its text
// form has one entry a line: the test identifier, optionally followed by
// "@DB" to restrict the entry to one database (sqlite, postgres, mysql), then
// white space and the reason. Blank lines and lines starting with '#' are
// ignored.
type SkipList struct {
	entries []skipEntry
}

type skipEntry struct {
	id, db, reason string
	line           int
}

// knownDBs are the names a skip entry may restrict itself to.
var knownDBs = map[string]bool{"sqlite": true, "postgres": true, "mysql": true, "none": true}

// ParseSkipList reads a skip list; name is used in errors, which give the line.
func ParseSkipList(name string, src []byte) (*SkipList, error) {
	l := &SkipList{}
	seen := map[string]int{}
	sc := bufio.NewScanner(bytes.NewReader(src))
	for n := 1; sc.Scan(); n++ {
		line := strings.TrimSpace(sc.Text())
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		key, reason := line, ""
		if i := strings.IndexAny(line, " \t"); i >= 0 {
			key, reason = line[:i], strings.TrimSpace(line[i:])
		}
		if reason == "" {
			return nil, fmt.Errorf("%s:%d: entry %q has no reason", name, n, key)
		}
		id, db, _ := strings.Cut(key, "@")
		if id == "" {
			return nil, fmt.Errorf("%s:%d: entry without a test identifier", name, n)
		}
		if strings.Contains(key, "@") && !knownDBs[db] {
			return nil, fmt.Errorf("%s:%d: unknown database %q after @ (want sqlite, postgres, mysql or none)", name, n, db)
		}
		if prev, dup := seen[key]; dup {
			return nil, fmt.Errorf("%s:%d: %s is already listed on line %d", name, n, key, prev)
		}
		seen[key] = n
		l.entries = append(l.entries, skipEntry{id: id, db: db, reason: reason, line: n})
	}
	if err := sc.Err(); err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	return l, nil
}

// SkipListFor returns the skip list of a suite, testdata/skip-SUITE.txt, built
// into the program; a suite without a file skips nothing.
func SkipListFor(suite string) (*SkipList, error) {
	name := "testdata/skip-" + suite + ".txt"
	src, err := skipFiles.ReadFile(name)
	if errors.Is(err, fs.ErrNotExist) {
		return &SkipList{}, nil
	}
	if err != nil {
		return nil, err
	}
	return ParseSkipList(name, src)
}

// Reason returns why test id is skipped on database db, and whether it is.
// An entry for the database in particular wins over one for every database.
func (l *SkipList) Reason(id, db string) (string, bool) {
	if l == nil {
		return "", false
	}
	general, found := "", false
	for _, e := range l.entries {
		switch {
		case e.id != id:
		case e.db == db:
			return e.reason, true
		case e.db == "":
			general, found = e.reason, true
		}
	}
	return general, found
}

// unknown returns the entries whose test identifier is not in ids, rendered
// for a warning.
func (l *SkipList) unknown(ids map[string]bool) []string {
	if l == nil {
		return nil
	}
	var out []string
	for _, e := range l.entries {
		if !ids[e.id] {
			out = append(out, fmt.Sprintf("skip list line %d names %s, which the suite does not have", e.line, e.id))
		}
	}
	return out
}
