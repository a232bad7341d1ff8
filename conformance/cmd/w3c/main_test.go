package main

import (
	"bytes"
	"context"
	"regexp"
	"strings"
	"testing"

	"veneer/conformance/w3cdir"
)

// The runner's output contract (DESIGN.md, "Contracts other tools rely on"):
// one row per failing test with its identifier and reason, and the last line
// "SUITE DB: N passed, M failed, K skipped".
func TestOutputContract(t *testing.T) {
	dir := w3cdir.ForTest(t)
	var stdout, stderr bytes.Buffer
	code := run(context.Background(), []string{"rdb2rdf", "--db", "sqlite", "--w3c", dir}, &stdout, &stderr)
	lines := strings.Split(strings.TrimSuffix(stdout.String(), "\n"), "\n")
	summary := regexp.MustCompile(`^rdb2rdf sqlite: (\d+) passed, (\d+) failed, (\d+) skipped$`)
	m := summary.FindStringSubmatch(lines[len(lines)-1])
	if m == nil {
		t.Fatalf("last line %q is not the summary; stderr: %s", lines[len(lines)-1], stderr.String())
	}
	row := regexp.MustCompile(`^FAIL \S+  \S`)
	for _, l := range lines[:len(lines)-1] {
		if !row.MatchString(l) {
			t.Errorf("row %q is not FAIL ID  reason", l)
		}
	}
	if failed := len(lines) - 1; (m[2] == "0") != (failed == 0) || (code == 0) != (failed == 0) {
		t.Errorf("%d failure rows, summary %q, exit status %d", failed, m[0], code)
	}
}

func TestUsage(t *testing.T) {
	tests := []struct {
		args []string
		want string
	}{
		{nil, "usage: w3c SUITE"},
		{[]string{"nosuch"}, `no suite "nosuch"`},
		{[]string{"rdb2rdf", "extra"}, "usage: w3c SUITE"},
		{[]string{"rdb2rdf", "--db", "oracle"}, `unknown database "oracle"`},
	}
	for _, tt := range tests {
		var stdout, stderr bytes.Buffer
		t.Setenv("VENEER_TEST_POSTGRES", "")
		if code := run(context.Background(), tt.args, &stdout, &stderr); code != 2 || !strings.Contains(stderr.String(), tt.want) {
			t.Errorf("run(%q) = %d, stderr %q; want 2 and %q", tt.args, code, stderr.String(), tt.want)
		}
	}
	var stdout, stderr bytes.Buffer
	t.Setenv("VENEER_TEST_POSTGRES", "")
	if code := run(context.Background(), []string{"--db", "postgres", "rdb2rdf"}, &stdout, &stderr); code != 2 || !strings.Contains(stderr.String(), "VENEER_TEST_POSTGRES") {
		t.Errorf("run without VENEER_TEST_POSTGRES = %d, stderr %q", code, stderr.String())
	}
}
