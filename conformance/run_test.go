package conformance

import (
	"context"
	"errors"
	"reflect"
	"strings"
	"testing"

	"veneer/catalog/source"
)

// fakeSuite is a suite of made-up tests, for the runner's own behaviour
// (common practice; no external source).
type fakeSuite struct {
	groups []*Group
	db     bool
}

func (s fakeSuite) Name() string                  { return "fake" }
func (s fakeSuite) NeedsDatabase() bool           { return s.db }
func (s fakeSuite) Load(string) ([]*Group, error) { return s.groups, nil }

func TestRun(t *testing.T) {
	pass := func(context.Context, *Scratch) error { return nil }
	suite := fakeSuite{groups: []*Group{{
		Name: "g1",
		Tests: []Test{
			{ID: "pass", Run: pass},
			{ID: "fail", Run: func(context.Context, *Scratch) error { return errors.New("wrong\nanswer") }},
			{ID: "skip", Run: func(context.Context, *Scratch) error { return Skip("not built") }},
			{ID: "listed", Run: func(context.Context, *Scratch) error { return errors.New("must not run") }},
			{ID: "expected", Run: func(context.Context, *Scratch) error { return FailedAsExpected(errors.New("bad mapping")) }},
			{ID: "panics", Run: func(context.Context, *Scratch) error { panic("boom") }},
			{ID: "mismatch", Run: func(context.Context, *Scratch) error { return &Mismatch{Want: 1, Missing: []string{"<a> <b> <c> ."}} }},
		},
	}}}
	skips, err := ParseSkipList("skip.txt", []byte("listed  known bug\nlisted@postgres other\ngone  removed test\n"))
	if err != nil {
		t.Fatal(err)
	}
	var seen []string
	rep, err := Run(context.Background(), suite, Options{Skips: skips}, func(r Result) { seen = append(seen, r.ID) })
	if err != nil {
		t.Fatal(err)
	}
	if got, want := rep.Summary(), "fake none: 2 passed, 3 failed, 2 skipped"; got != want {
		t.Errorf("Summary() = %q, want %q", got, want)
	}
	if !reflect.DeepEqual(seen, []string{"pass", "fail", "skip", "listed", "expected", "panics", "mismatch"}) {
		t.Errorf("results seen in order %v", seen)
	}
	want := map[string]struct {
		outcome Outcome
		reason  string
	}{
		"pass":     {Passed, ""},
		"fail":     {Failed, "wrong | answer"},
		"skip":     {Skipped, "not built"},
		"listed":   {Skipped, "skip list: known bug"},
		"expected": {Passed, "failed as expected: bad mapping"},
		"panics":   {Failed, "panic: boom"},
		"mismatch": {Failed, "got 0 quads, want 1; missing 1: <a> <b> <c> ."},
	}
	for _, r := range rep.Results {
		w := want[r.ID]
		if r.Outcome != w.outcome || r.Reason != w.reason {
			t.Errorf("%s: %v %q, want %v %q", r.ID, r.Outcome, r.Reason, w.outcome, w.reason)
		}
		switch r.ID {
		case "panics":
			if len(r.Details) == 0 || !strings.Contains(strings.Join(r.Details, "\n"), "run_test.go") {
				t.Errorf("panic details lack the stack: %q", r.Details)
			}
		case "mismatch":
			if !reflect.DeepEqual(r.Details, []string{"- <a> <b> <c> ."}) {
				t.Errorf("mismatch details %q", r.Details)
			}
		}
	}
	if len(rep.Warnings) != 1 || !strings.Contains(rep.Warnings[0], "gone") {
		t.Errorf("warnings %q, want one about the entry for gone", rep.Warnings)
	}
}

// A database suite needs a server; a group whose set-up fails fails its tests;
// a group whose tests are all skipped gets no database.
func TestRunSetUp(t *testing.T) {
	ran := false
	suite := fakeSuite{db: true, groups: []*Group{
		{
			Name: "broken",
			Setup: func(ctx context.Context, db *Scratch) error {
				return db.Load(ctx, "create.sql", []byte(`INSERT INTO "missing" ("x") VALUES (1)`))
			},
			Tests: []Test{{ID: "a", Run: func(context.Context, *Scratch) error { ran = true; return nil }}},
		},
		{
			Name:  "all skipped",
			Setup: func(context.Context, *Scratch) error { t.Error("set-up of a group without tests to run"); return nil },
			Tests: []Test{{ID: "b", Run: func(context.Context, *Scratch) error { return nil }}},
		},
		{
			Name: "fine",
			Setup: func(ctx context.Context, db *Scratch) error {
				return db.Load(ctx, "create.sql", []byte(`CREATE TABLE "T" ("x" INT); INSERT INTO "T" ("x") VALUES (1);`))
			},
			Tests: []Test{{ID: "c", Run: func(ctx context.Context, db *Scratch) error {
				src, err := db.Source(ctx)
				if err != nil {
					return err
				}
				rows, err := src.Query(ctx, `SELECT "x" FROM "T"`)
				if err != nil {
					return err
				}
				defer rows.Close()
				if !rows.Next() || rows.Values()[0] != int64(1) {
					return errors.New("the row is not there")
				}
				return rows.Err()
			}}},
		},
	}}
	if _, err := Run(context.Background(), suite, Options{}, nil); err == nil {
		t.Error("a database suite ran without a server")
	}
	srv := testServer(t, source.SQLite)
	skips, _ := ParseSkipList("skip.txt", []byte("b  not now\n"))
	rep, err := Run(context.Background(), suite, Options{Server: srv, Skips: skips}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if ran {
		t.Error("a test ran after its group's set-up failed")
	}
	if got, want := rep.Summary(), "fake sqlite: 1 passed, 1 failed, 1 skipped"; got != want {
		t.Errorf("Summary() = %q, want %q; results %+v", got, want, rep.Results)
	}
	if r := rep.Results[0]; !strings.HasPrefix(r.Reason, "setting up broken: create.sql: statement 1 on sqlite:") {
		t.Errorf("set-up failure reason %q", r.Reason)
	}
}

// A test the known failures list has fails with the list's reason in Known,
// and fails too when it passes, so that the list cannot go stale.
func TestRunKnown(t *testing.T) {
	suite := fakeSuite{groups: []*Group{{
		Name: "g1",
		Tests: []Test{
			{ID: "fails", Run: func(context.Context, *Scratch) error { return errors.New("no answer") }},
			{ID: "passes", Run: func(context.Context, *Scratch) error { return nil }},
			{ID: "other", Run: func(context.Context, *Scratch) error { return errors.New("broken") }},
		},
	}}}
	known, err := ParseSkipList("known.txt", []byte("fails  no property paths yet\npasses  no federation yet\n"))
	if err != nil {
		t.Fatal(err)
	}
	rep, err := Run(context.Background(), suite, Options{Known: known}, nil)
	if err != nil {
		t.Fatal(err)
	}
	if got, want := rep.Summary(), "fake none: 0 passed, 3 failed, 0 skipped"; got != want {
		t.Errorf("Summary() = %q, want %q", got, want)
	}
	want := map[string]struct{ reason, known string }{
		"fails":  {"known failure (no property paths yet): no answer", "no property paths yet"},
		"passes": {"passes now: remove it from known.txt (no federation yet)", ""},
		"other":  {"broken", ""},
	}
	for _, r := range rep.Results {
		if w := want[r.ID]; r.Reason != w.reason || r.Known != w.known {
			t.Errorf("%s: reason %q, known %q; want %q, %q", r.ID, r.Reason, r.Known, w.reason, w.known)
		}
	}
}
