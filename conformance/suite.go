// Package conformance runs W3C test suites against veneer: it reads each
// suite's manifests from a checkout of the suites (never a copy in this
// repository), sets up what the tests need (a throw-away database filled by the
// suite's SQL script), runs every test through veneer's own pipeline and
// reports one outcome per test. The command conformance/cmd/w3c and the
// package's Go tests are two front ends to the same Run.
//
// A suite plugs in by implementing Suite: it turns its manifests into groups of
// tests, each group sharing one set-up.
package conformance

import (
	"context"
	"errors"
	"fmt"
)

// Suite is one W3C test suite.
type Suite interface {
	// Name is the suite's name on the command line and in the summary line.
	Name() string
	// NeedsDatabase reports whether the suite's tests run on a database; the
	// summary line then names the database, else "none".
	NeedsDatabase() bool
	// Load reads the suite's manifests under dir, the root of the W3C suites
	// checkout, and returns its tests.
	Load(dir string) ([]*Group, error)
}

// Group is a set of tests that share one set-up.
type Group struct {
	// Name identifies the group in messages (e.g. the test directory's name).
	Name string
	// Setup fills a fresh throw-away database for the group's tests. Nil means the
	// tests need no database; they then get a nil *Scratch.
	Setup func(ctx context.Context, db *Scratch) error
	Tests []Test
}

// Test is one test of a suite.
type Test struct {
	// ID is the test's identifier as the manifest gives it; skip lists use it.
	ID string
	// Run runs the test. A nil error is a pass, and so is an error made by
	// FailedAsExpected; an error made by Skip is a skip; any other error is a
	// failure whose message is the reason. An error with a Details method adds
	// lines that the verbose report shows.
	Run func(ctx context.Context, db *Scratch) error
}

// Outcome is what became of a test.
type Outcome int

// The outcomes.
const (
	Passed Outcome = iota + 1
	Failed
	Skipped
)

// String returns the outcome as the report writes it: PASS, FAIL or SKIP.
func (o Outcome) String() string {
	switch o {
	case Passed:
		return "PASS"
	case Failed:
		return "FAIL"
	case Skipped:
		return "SKIP"
	}
	return fmt.Sprintf("Outcome(%d)", int(o))
}

// Result is the outcome of one test.
type Result struct {
	ID      string
	Group   string
	Outcome Outcome
	// Reason says why the test failed or was skipped; for a pass, empty or the
	// error the test expected and got.
	Reason string
	// Details are further lines about a failure (such as the quads that differ).
	Details []string
	// Known, for a failure, is the reason the run's known failures list
	// (Options.Known) gives for it: the failure was expected.
	Known string
}

// skipError is the error Skip makes.
type skipError struct{ reason string }

func (e *skipError) Error() string { return "skipped: " + e.reason }

// Skip returns the error by which a test reports that it cannot run here, and
// why (for example, a part of veneer that does not exist yet).
func Skip(reason string) error { return &skipError{reason: reason} }

// expectedError is the error FailedAsExpected makes.
type expectedError struct{ err error }

func (e *expectedError) Error() string { return "failed as expected: " + e.err.Error() }

// FailedAsExpected returns the error by which a test that expects an error
// reports that it passed, with the error it got, for the verbose report: an
// error test passes on any error, so a reader should be able to see which.
func FailedAsExpected(err error) error { return &expectedError{err: err} }

// detailer is implemented by errors that carry more lines for the report.
type detailer interface{ Details() []string }

// resultOf turns what a test's Run returned into a result.
func resultOf(g *Group, t Test, err error) Result {
	r := Result{ID: t.ID, Group: g.Name, Outcome: Passed}
	if err == nil {
		return r
	}
	var skip *skipError
	if errors.As(err, &skip) {
		r.Outcome, r.Reason = Skipped, skip.reason
		return r
	}
	var expected *expectedError
	if errors.As(err, &expected) {
		r.Reason = expected.Error()
		return r
	}
	r.Outcome, r.Reason = Failed, err.Error()
	var d detailer
	if errors.As(err, &d) {
		r.Details = d.Details()
	}
	return r
}
