// Package rdb2rdf gives the catalog's tests the W3C RDB2RDF test suite ("R2RML
// and Direct Mapping Test Cases"): where the shared copy is, and each test
// database's create.sql made into statements that our databases run.
package rdb2rdf

import (
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"

	"veneer/catalog/source"
	"veneer/catalog/source/sourcetest"
	"veneer/conformance/w3cdir"
)

// Dir is the suite's directory, rdb2rdf-tests in the W3C suites' checkout
// (w3cdir.ForTest: the test skips without it, or fails in CI).
func Dir(t testing.TB) string {
	t.Helper()
	return filepath.Join(w3cdir.ForTest(t), "rdb2rdf-tests")
}

// adaptation is a textual change that makes the suite's SQL, written for a
// database none of ours is, run on one of ours.
type adaptation struct {
	re   *regexp.Regexp
	repl string
}

// adaptations lists the changes per dialect; MySQL (with ANSI_QUOTES) runs the
// scripts as written. PostgreSQL's bit type accepts no integer literal, so
// D016's bit column becomes smallint there.
var adaptations = map[source.Dialect][]adaptation{
	source.Postgres: {
		{regexp.MustCompile(`(?i)\bNVARCHAR\b`), "VARCHAR"},
		{regexp.MustCompile(`\bN'`), "'"},
		{regexp.MustCompile(`(?i)\bdatetime\b`), "timestamp"},
		{regexp.MustCompile(`(?i)\bVARBINARY\s*\(\d+\)`), "bytea"},
		{regexp.MustCompile(`\b0x([0-9A-Fa-f]+)`), `'\x$1'`},
		{regexp.MustCompile(`(?i)\bbit\b`), "smallint"},
	},
	source.SQLite: {
		{regexp.MustCompile(`\bN'`), "'"},
		{regexp.MustCompile(`\b0x([0-9A-Fa-f]+)`), `x'$1'`},
	},
}

// sqliteCannot gives, by the number of the test database (D021 is 21), the
// reason why SQLite cannot run its script.
var sqliteCannot = map[string]string{
	"D021": "create.sql puts table constraints between column definitions, which SQLite's grammar does not allow",
	"D022": "create.sql puts table constraints between column definitions, which SQLite's grammar does not allow",
	"D023": "create.sql puts table constraints between column definitions, which SQLite's grammar does not allow",
	"D024": "create.sql puts table constraints between column definitions, which SQLite's grammar does not allow",
	"D025": "create.sql puts table constraints between column definitions and adds foreign keys by ALTER TABLE, which SQLite does not allow",
}

// Unsupported says why the database of dialect d cannot run the script of the
// test directory dir (such as ".../D021-2tables..."), or "" when it can.
func Unsupported(d source.Dialect, dir string) string {
	if d != source.SQLite {
		return ""
	}
	number, _, _ := strings.Cut(filepath.Base(dir), "-")
	return sqliteCannot[number]
}

// Load runs the test directory's script file on db, adapted to its dialect.
func Load(t testing.TB, db *sourcetest.DB, dir, script string) {
	t.Helper()
	text, err := os.ReadFile(filepath.Join(dir, script))
	if err != nil {
		t.Fatal(err)
	}
	sql := strings.TrimPrefix(string(text), "\uFEFF")
	for _, a := range adaptations[db.Dialect] {
		sql = a.re.ReplaceAllString(sql, a.repl)
	}
	db.Exec(t, Statements(sql)...)
}

// Statements splits an SQL script at the semicolons outside quotes and comments.
func Statements(script string) []string {
	var out []string
	var cur strings.Builder
	var quote byte
	for i := 0; i < len(script); i++ {
		c := script[i]
		switch {
		case quote != 0:
			if c == quote {
				quote = 0
			}
		case c == '\'' || c == '"':
			quote = c
		case c == '-' && strings.HasPrefix(script[i:], "--"):
			j := strings.IndexByte(script[i:], '\n')
			if j < 0 {
				j = len(script) - i
			}
			i += j
			continue
		case c == ';':
			if s := strings.TrimSpace(cur.String()); s != "" {
				out = append(out, s)
			}
			cur.Reset()
			continue
		}
		cur.WriteByte(c)
	}
	if s := strings.TrimSpace(cur.String()); s != "" {
		out = append(out, s)
	}
	return out
}
