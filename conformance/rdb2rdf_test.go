package conformance

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"veneer/catalog/source"
)

// The environment variables that name the test servers (DEVELOPERS.md).
var serverEnv = map[source.Dialect]string{
	source.Postgres: "VENEER_TEST_POSTGRES",
	source.MySQL:    "VENEER_TEST_MYSQL",
}

// noDatabase skips a test that cannot have its database server, or in CI
// (CI=true) fails it; the message starts with "no database:".
func noDatabase(t *testing.T, format string, args ...any) {
	t.Helper()
	msg := "no database: " + fmt.Sprintf(format, args...)
	if os.Getenv("CI") == "true" {
		t.Fatal(msg + " (CI=true: a database test may not be skipped)")
	}
	t.Skip(msg)
}

// testServer opens the server a test runs on, closed when the test ends.
func testServer(t *testing.T, d source.Dialect) *Server {
	t.Helper()
	dsn := ""
	if env, ok := serverEnv[d]; ok {
		if dsn = os.Getenv(env); dsn == "" {
			noDatabase(t, "%s is not set", env)
		}
	}
	ctx, cancel := context.WithTimeout(context.Background(), 15*time.Second)
	defer cancel()
	srv, err := OpenServer(ctx, d, dsn)
	if err != nil {
		noDatabase(t, "%v", err)
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
	dir := w3cDir(t)
	skips, err := SkipListFor("rdb2rdf")
	if err != nil {
		t.Fatal(err)
	}
	for _, d := range []source.Dialect{source.SQLite, source.Postgres, source.MySQL} {
		t.Run(d.String(), func(t *testing.T) {
			srv := testServer(t, d)
			rep, err := Run(context.Background(), RDB2RDF(), Options{Dir: dir, Server: srv, Skips: skips}, nil)
			if err != nil {
				t.Fatal(err)
			}
			for _, r := range rep.Results {
				if r.Outcome != Failed {
					continue
				}
				t.Errorf("%s (%s): %s", r.ID, r.Group, r.Reason)
				for _, line := range r.Details {
					t.Log("    " + line)
				}
			}
			for _, w := range rep.Warnings {
				t.Error(w)
			}
			if floor := passFloor(t, "rdb2rdf-passed.txt", d.String()); rep.Passed < floor {
				t.Errorf("%d tests passed, fewer than the %d recorded in testdata/rdb2rdf-passed.txt", rep.Passed, floor)
			}
			t.Log(rep.Summary())
		})
	}
}

// passFloor reads the pass count recorded for a database in a testdata file of
// "database count" lines (# starts a comment).
func passFloor(t *testing.T, file, db string) int {
	t.Helper()
	data, err := os.ReadFile(filepath.Join("testdata", file))
	if err != nil {
		t.Fatal(err)
	}
	for _, line := range strings.Split(string(data), "\n") {
		var name string
		var n int
		if strings.HasPrefix(line, "#") {
			continue
		}
		if _, err := fmt.Sscanf(line, "%s %d", &name, &n); err == nil && name == db {
			return n
		}
	}
	t.Fatalf("testdata/%s records no count for %s", file, db)
	return 0
}
