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

// listFiles are the lists of tests, at most two per suite:
// testdata/skip-SUITE.txt and testdata/known-SUITE.txt.
//
//go:embed testdata
var listFiles embed.FS

// SkipList names tests, each with a reason: the tests a run leaves out, or
// those it expects to fail (Options.Known). Its text form has one entry a
// line: the test identifier, optionally followed by "@DB" to restrict the
// entry to one database (sqlite, postgres, mysql), then white space and the
// reason. Blank lines and lines starting with '#' are ignored.
type SkipList struct {
	// name is the list's file, for messages.
	name    string
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
	l := &SkipList{name: name}
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
func SkipListFor(suite string) (*SkipList, error) { return listFor("skip", suite) }

// KnownFailuresFor returns the tests of a suite that are expected to fail,
// testdata/known-SUITE.txt, built into the program, each with the capability
// veneer lacks for it; a suite without a file expects no failure.
func KnownFailuresFor(suite string) (*SkipList, error) { return listFor("known", suite) }

// listFor reads testdata/KIND-SUITE.txt.
func listFor(kind, suite string) (*SkipList, error) {
	name := "testdata/" + kind + "-" + suite + ".txt"
	src, err := listFiles.ReadFile(name)
	if errors.Is(err, fs.ErrNotExist) {
		return &SkipList{name: name}, nil
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
			out = append(out, fmt.Sprintf("%s line %d names %s, which the suite does not have", l.name, e.line, e.id))
		}
	}
	return out
}
