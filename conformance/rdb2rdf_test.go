package conformance

import (
	"context"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
	"time"

	"veneer/catalog/source"
	"veneer/catalog/source/sourcetest"
	"veneer/conformance/w3cdir"
)

// The environment variables that name the test servers (DEVELOPERS.md).
var serverEnv = map[source.Dialect]string{
	source.Postgres: sourcetest.EnvPostgres,
	source.MySQL:    sourcetest.EnvMySQL,
}

// testServer opens the server a test runs on, closed when the test ends.
func testServer(t *testing.T, d source.Dialect) *Server {
	t.Helper()
	dsn := ""
	if env, ok := serverEnv[d]; ok {
		if dsn = os.Getenv(env); dsn == "" {
			sourcetest.NoDatabase(t, "%s is not set", env)
		}
	}
	ctx, cancel := context.WithTimeout(context.Background(), 15*time.Second)
	defer cancel()
	srv, err := OpenServer(ctx, d, dsn)
	if err != nil {
		sourcetest.NoDatabase(t, "%v", err)
	}
	t.Cleanup(func() {
		if err := srv.Close(); err != nil {
			t.Error(err)
		}
	})
	return srv
}

// TestRDB2RDF runs the W3C RDB2RDF test cases (rdb2rdf-tests D000…D025, every
// R2RML and Direct Mapping test their manifests list) on each database: a
// test that fails and is not in testdata/skip-rdb2rdf.txt fails this test.
func TestRDB2RDF(t *testing.T) {
	runOnEachDatabase(t, RDB2RDF(), func(t *testing.T, rep *Report) {
		checkReport(t, rep)
		if floor := passFloor(t, "rdb2rdf-passed.txt", rep.DB); rep.Passed < floor {
			t.Errorf("%d tests passed, fewer than the %d recorded in testdata/rdb2rdf-passed.txt", rep.Passed, floor)
		}
	})
}

// runOnEachDatabase runs a suite, with its skip list and known failures, on
// each database whose server the test can have, and checks each report.
func runOnEachDatabase(t *testing.T, s Suite, check func(t *testing.T, rep *Report)) {
	dir := w3cdir.ForTest(t)
	skips, err := SkipListFor(s.Name())
	if err != nil {
		t.Fatal(err)
	}
	known, err := KnownFailuresFor(s.Name())
	if err != nil {
		t.Fatal(err)
	}
	for _, d := range []source.Dialect{source.SQLite, source.Postgres, source.MySQL} {
		t.Run(d.String(), func(t *testing.T) {
			srv := testServer(t, d)
			rep, err := Run(context.Background(), s, Options{Dir: dir, Server: srv, Skips: skips, Known: known}, nil)
			if err != nil {
				t.Fatal(err)
			}
			check(t, rep)
		})
	}
}

// passFloor reads the pass count recorded for a database in a testdata file
// of "DB COUNT" lines ('#' starts a comment): the test fails when fewer pass,
// so that a change that breaks passing tests shows, while tests that still
// fail (the engine is being completed) do not fail the build.
func passFloor(t *testing.T, file, db string) int {
	t.Helper()
	path := filepath.Join("testdata", file)
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	floor, found := 0, false
	for n, line := range strings.Split(string(data), "\n") {
		line = strings.TrimSpace(line)
		if line == "" || strings.HasPrefix(line, "#") {
			continue
		}
		name, count, ok := strings.Cut(line, " ")
		v, err := strconv.Atoi(strings.TrimSpace(count))
		if !ok || err != nil || !knownDBs[name] {
			t.Fatalf("%s:%d: %q is not \"DB COUNT\"", path, n+1, line)
		}
		if name == db {
			floor, found = v, true
		}
	}
	if !found {
		t.Fatalf("%s records no count for %s", path, db)
	}
	return floor
}

// checkReport fails t for every failure of a run that the known failures list
// does not expect, and for every warning, and logs the summary.
func checkReport(t *testing.T, rep *Report) {
	t.Helper()
	for _, r := range rep.Results {
		switch {
		case r.Outcome != Failed:
			continue
		case r.Known != "":
			t.Logf("%s (%s): %s", r.ID, r.Group, r.Reason)
		default:
			t.Errorf("%s (%s): %s", r.ID, r.Group, r.Reason)
		}
		for _, line := range r.Details {
			t.Log("    " + line)
		}
	}
	for _, w := range rep.Warnings {
		t.Error(w)
	}
	t.Log(rep.Summary())
}
