package main

import (
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"testing"
)

// summaryLine is the form the issue gives the run's last line.
var summaryLine = regexp.MustCompile(`^bench sqlite sf=0\.01: median ratio (\d+\.\d\d|n/a), worst ratio (\d+\.\d\d|n/a), translation median \d+ us$`)

// TestSmoke runs the whole benchmark at SF 0.01 on SQLite, with one timed run
// per side and a short throughput measurement: the generator loads, both
// handlers answer every query, and veneer's answers equal the SQL twins'.
// A query veneer cannot answer yet (an HTTP error, a plan error) is logged,
// since the benchmark records such queries in its table; a different answer
// fails the test.
func TestSmoke(t *testing.T) {
	dir := t.TempDir()
	var stdout, stderr strings.Builder
	err := run(context.Background(), []string{"run", "--db", "sqlite:" + filepath.Join(dir, "bench.db"), "--sf", "0.01",
		"--iterations", "1", "--warmup", "0", "--translate-time", "1ms", "--clients", "4", "--throughput", "200ms", "--out", dir}, &stdout, &stderr)
	if err != nil {
		t.Fatalf("%v\n%s", err, stderr.String())
	}
	lines := strings.Split(strings.TrimSpace(stdout.String()), "\n")
	if last := lines[len(lines)-1]; !summaryLine.MatchString(last) {
		t.Errorf("last line %q is not the summary line", last)
	}
	body, err := os.ReadFile(filepath.Join(dir, "bench-sqlite-sf0_01.json"))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(filepath.Join(dir, "bench-sqlite-sf0_01.md")); err != nil {
		t.Error(err)
	}
	var report struct {
		Queries []struct {
			Name  string `json:"name"`
			Rows  int    `json:"rows"`
			Equal bool   `json:"equal"`
			Error string `json:"error"`
		} `json:"queries"`
		Throughput []struct {
			Query string `json:"query"`
		} `json:"throughput"`
	}
	if err := json.Unmarshal(body, &report); err != nil {
		t.Fatal(err)
	}
	if len(report.Queries) < 14 {
		t.Errorf("%d queries in the mix, want at least 14", len(report.Queries))
	}
	equal := 0
	for _, q := range report.Queries {
		switch {
		case strings.HasPrefix(q.Error, "sql twin:"):
			t.Errorf("%s: the SQL twin failed: %s", q.Name, q.Error)
		case strings.HasPrefix(q.Error, "answers differ"):
			t.Errorf("%s: %s", q.Name, q.Error)
		case q.Error != "":
			t.Logf("%s: veneer cannot answer it yet: %s", q.Name, q.Error)
		case q.Equal:
			equal++
		}
	}
	if equal == 0 {
		t.Error("no query was answered alike by veneer and its SQL twin")
	}
	if len(report.Throughput) != 2 {
		t.Errorf("%d throughput measurements, want 2 (point and star)", len(report.Throughput))
	}
}
