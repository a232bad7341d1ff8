package main

import (
	"bytes"
	"context"
	"flag"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"unicode/utf8"

	"veneer/cmd/veneer/demo"
)

var update = flag.Bool("update", false, "rewrite the golden files under testdata/")

// brokenDemo is the broken copy of the demo mapping; brokenProblems says where
// each of its problems must be reported (at the first character of a text
// that occurs once in it) and what the message must say. The wording is ours.
const brokenDemo = "testdata/broken-demo.ttl"

var brokenProblems = []struct {
	at      string
	warning bool
	msg     string
}{
	{at: `[ rr:column "site_name" ]`, msg: `column "site_name" is not in table site (it has: code, commissioned_on, country, latitude, longitude, name, offshore, region, site_id)`},
	{at: `[
        rr:template "https://data.veneer.example/windfarm/turbine/{serial_no}"`, msg: `column "serial_no" is not in table turbine`},
	{at: `[ rr:column "status" ; rr:datatype xsd:integer ]`, warning: true, msg: "rr:datatype xsd:integer on column status of type VARCHAR(16)"},
	{at: `"technicians"`, msg: "table technicians does not exist (the schema has: inspection, part, part_usage, site, technician, turbine, work_order)"},
	{at: `"https://data.veneer.example/windfarm/part number/{part_number}"`, msg: `rr:template: the template's text has ' ', which no IRI may contain`},
	{at: `[ rr:child "turbine" ;`, msg: `rr:child: column "turbine" is not in table work_order`},
	{at: `"""
        SELECT order_number, opened_at`, msg: "the database rejects the R2RML view: sqlite query: SQL logic error: no such column: closed"},
	{at: `[ rr:parentTriplesMap map:Technician ]`, msg: "referencing object map has no rr:joinCondition, but its parent triples map <https://data.veneer.example/windfarm/mapping#Technician> reads table technicians, not table inspection"},
	{at: `[ rr:child "work_order_id" ; rr:parent "work_order" ]`, msg: `rr:parent: column "work_order" is not in table work_order`},
}

// TestCheckBrokenDemo runs veneer check on the broken copy of the demo mapping
// over the demo database: every problem must be reported, with its position,
// and the command must fail; the whole output is compared with
// testdata/broken-demo.check.golden.
func TestCheckBrokenDemo(t *testing.T) {
	path := filepath.Join(t.TempDir(), "windfarm.db")
	if err := demo.BuildSQLite(context.Background(), path); err != nil {
		t.Fatal(err)
	}
	text, err := os.ReadFile(brokenDemo)
	if err != nil {
		t.Fatal(err)
	}
	var out, errOut bytes.Buffer
	err = runCheck(context.Background(), []string{"--db", "sqlite:" + path, "--mapping", brokenDemo}, &out, &errOut)
	if err == nil || err.Error() != "check: the mapping has 8 errors" {
		t.Errorf("check returned %v, want it to fail with 8 errors", err)
	}
	lines := strings.Split(strings.TrimSuffix(out.String(), "\n"), "\n")
	if len(lines) != len(brokenProblems)+1 {
		t.Errorf("got %d lines, want %d problems and a summary:\n%s", len(lines), len(brokenProblems), out.String())
	}
	for i, want := range brokenProblems {
		if i >= len(lines) {
			break
		}
		line, col := textPos(t, string(text), want.at)
		prefix := brokenDemo + ":" + strconv.Itoa(line) + ":" + strconv.Itoa(col) + ": "
		if want.warning {
			prefix += "warning: "
		}
		if !strings.HasPrefix(lines[i], prefix) || !strings.Contains(lines[i], want.msg) {
			t.Errorf("problem %d:\n got %s\nwant %s… %s", i+1, lines[i], prefix, want.msg)
		}
	}
	const summary = "testdata/broken-demo.ttl: 8 triples maps checked against the sqlite database: 8 errors, 1 warning"
	if last := lines[len(lines)-1]; last != summary {
		t.Errorf("summary %q, want %q", last, summary)
	}
	golden(t, filepath.Join("testdata", "broken-demo.check.golden"), out.String())
}

// TestCheckDemo checks the demo mapping itself: no problem at all.
func TestCheckDemo(t *testing.T) {
	dir := t.TempDir()
	path, mapping := filepath.Join(dir, "windfarm.db"), filepath.Join(dir, "mapping.ttl")
	if err := demo.BuildSQLite(context.Background(), path); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(mapping, []byte(demo.Mapping()), 0o600); err != nil {
		t.Fatal(err)
	}
	var out, errOut bytes.Buffer
	if err := runCheck(context.Background(), []string{"--db", "sqlite:" + path, "--mapping", mapping}, &out, &errOut); err != nil {
		t.Fatalf("%v\n%s", err, out.String())
	}
	if want := mapping + ": 8 triples maps checked against the sqlite database: 0 errors, 0 warnings\n"; out.String() != want {
		t.Errorf("got %q, want %q", out.String(), want)
	}
}

func TestCheckUsage(t *testing.T) {
	tests := []struct {
		args []string
		want string
	}{
		{[]string{"--mapping", "m.ttl"}, "a database is required"},
		{[]string{"--db", "sqlite:x.db"}, "give the mapping files"},
		{[]string{"--db", "sqlite:x.db", "--mapping", "m.ttl", "extra"}, `unexpected argument "extra"`},
	}
	for _, tt := range tests {
		t.Setenv("VENEER_DB", "")
		t.Setenv("VENEER_MAPPINGS", "")
		t.Setenv("VENEER_CONFIG", "")
		var out, errOut bytes.Buffer
		if err := runCheck(context.Background(), tt.args, &out, &errOut); err == nil || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("check %v: got %v, want an error with %q", tt.args, err, tt.want)
		}
	}
}

// TestCheckSyntaxError shows a Turtle syntax error whole, with its position.
func TestCheckSyntaxError(t *testing.T) {
	dir := t.TempDir()
	path, mapping := filepath.Join(dir, "windfarm.db"), filepath.Join(dir, "bad.ttl")
	if err := demo.BuildSQLite(context.Background(), path); err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(mapping, []byte("@prefix rr: <http://www.w3.org/ns/r2rml#> .\n<a> rr:logicalTable [ rr:tableName \"site\" \n"), 0o600); err != nil {
		t.Fatal(err)
	}
	var out, errOut bytes.Buffer
	err := runCheck(context.Background(), []string{"--db", "sqlite:" + path, "--mapping", mapping}, &out, &errOut)
	if err == nil || !strings.Contains(err.Error(), "cannot be read") {
		t.Errorf("got %v, want the mapping to be unreadable", err)
	}
	if !strings.Contains(out.String(), mapping+": line 3, column 1: expected ']'") {
		t.Errorf("the syntax error does not give its position:\n%s", out.String())
	}
}

// textPos is the line and column (both from 1) of the only occurrence of text in src.
func textPos(t *testing.T, src, text string) (int, int) {
	t.Helper()
	i := strings.Index(src, text)
	if i < 0 || strings.Count(src, text) != 1 {
		t.Fatalf("%q does not occur exactly once in the mapping", text)
	}
	before := src[:i]
	return strings.Count(before, "\n") + 1, utf8.RuneCountInString(before[strings.LastIndexByte(before, '\n')+1:]) + 1
}

// golden compares got with the file at path, which -update rewrites.
func golden(t *testing.T, path, got string) {
	t.Helper()
	if *update {
		if err := os.WriteFile(path, []byte(got), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	want, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	if got != string(want) {
		t.Errorf("output differs from %s (run go test -update and read the diff):\n%s", path, got)
	}
}
