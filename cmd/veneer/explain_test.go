package main

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"veneer/cmd/veneer/demo"
)

func TestExplainCommand(t *testing.T) {
	dir := t.TempDir()
	dbPath, mapping, query := filepath.Join(dir, "windfarm.db"), filepath.Join(dir, "mapping.ttl"), filepath.Join(dir, "q.rq")
	if err := demo.BuildSQLite(context.Background(), dbPath); err != nil {
		t.Fatal(err)
	}
	os.WriteFile(mapping, []byte(demo.Mapping()), 0o600)
	const q = prefixes + `SELECT ?serial WHERE { ?t wf:serialNumber ?serial ; wf:ratedPowerKW ?kw . FILTER(?kw >= 3000) }`
	os.WriteFile(query, []byte(q), 0o600)
	for _, arg := range []string{q, "@" + query} {
		var out, errOut bytes.Buffer
		err := run(context.Background(), []string{"explain", "--db", "sqlite:" + dbPath, "--mapping", mapping, arg}, &out, &errOut)
		if err != nil {
			t.Fatalf("%v\n%s", err, errOut.String())
		}
		got := out.String()
		for _, want := range []string{"algebra:\n", "serialNumber", "SELECT", "turbine"} {
			if !strings.Contains(got, want) {
				t.Errorf("explain %.20s…: output lacks %q:\n%s", arg, want, got)
			}
		}
	}
	var out bytes.Buffer
	err := run(context.Background(), []string{"explain", "--db", "sqlite:" + dbPath, "--mapping", mapping, "SELECT ?s WHERE {\n ?s ?p }"}, &out, &out)
	if err == nil || !strings.Contains(err.Error(), "line 2") {
		t.Errorf("a syntax error: %v; want one naming line 2", err)
	}
	if err := run(context.Background(), []string{"explain", "--db", "sqlite:" + dbPath}, &out, &out); err == nil {
		t.Errorf("explain without a query succeeded")
	}
}
