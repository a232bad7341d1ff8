package conformance

import (
	"context"
	"errors"
	"fmt"
	"runtime/debug"
	"strings"
	"time"
)

// DefaultTimeout bounds one test, or one group's set-up, when Options sets none.
const DefaultTimeout = time.Minute

// Options configure a run.
type Options struct {
	// Dir is the root of the W3C suites checkout (holding rdb2rdf-tests, rdf-tests).
	Dir string
	// Server makes the throw-away databases; it may be nil for a suite that
	// needs none.
	Server *Server
	// Skips are the tests to leave out; nil leaves none out.
	Skips *SkipList
	// Known are the tests expected to fail, each with the capability veneer
	// lacks for it. Such a test still counts as failed, with the reason in
	// Result.Known; one that passes fails too, so that the list cannot go
	// stale. Nil expects no failure.
	Known *SkipList
	// Timeout bounds each test and each set-up; zero means DefaultTimeout.
	Timeout time.Duration
}

// Counts are the numbers of tests by outcome.
type Counts struct {
	Passed, Failed, Skipped int
}

// Report is what a run found.
type Report struct {
	Suite string
	// DB is the database the tests ran on, or "none".
	DB      string
	Results []Result
	Counts
	// Warnings are problems that fail no test, such as a skip list entry that
	// names no test of the suite, or a scratch database that could not be removed.
	Warnings []string
}

// Summary is the report's last line: "SUITE DB: N passed, M failed, K skipped".
func (r *Report) Summary() string {
	return fmt.Sprintf("%s %s: %d passed, %d failed, %d skipped", r.Suite, r.DB, r.Passed, r.Failed, r.Skipped)
}

// Run runs every test of a suite and returns the report; each, when not nil,
// sees each result as soon as it is known. The error is for a run that could
// not start (unreadable manifests, a database suite without a server); what
// goes wrong in a test or a group's set-up is a failed test.
func Run(ctx context.Context, s Suite, opt Options, each func(Result)) (*Report, error) {
	rep := &Report{Suite: s.Name(), DB: "none"}
	if s.NeedsDatabase() {
		if opt.Server == nil {
			return nil, fmt.Errorf("suite %s needs a database", s.Name())
		}
		rep.DB = opt.Server.Name()
	}
	if opt.Timeout <= 0 {
		opt.Timeout = DefaultTimeout
	}
	groups, err := s.Load(opt.Dir)
	if err != nil {
		return nil, fmt.Errorf("suite %s: %w", s.Name(), err)
	}
	ids := map[string]bool{}
	for _, g := range groups {
		for _, t := range g.Tests {
			if ids[t.ID] {
				return nil, fmt.Errorf("suite %s: two tests are called %s", s.Name(), t.ID)
			}
			ids[t.ID] = true
		}
	}
	rep.Warnings = append(opt.Skips.unknown(ids), opt.Known.unknown(ids)...)
	record := func(r Result) {
		rep.Results = append(rep.Results, r)
		switch r.Outcome {
		case Passed:
			rep.Passed++
		case Failed:
			rep.Failed++
		case Skipped:
			rep.Skipped++
		}
		if each != nil {
			each(r)
		}
	}
	for _, g := range groups {
		if err := ctx.Err(); err != nil {
			return rep, err
		}
		runGroup(ctx, g, rep.DB, opt, rep, record)
	}
	return rep, nil
}

// runGroup sets a group up, runs its tests that the skip list leaves in and
// removes the set-up again.
func runGroup(ctx context.Context, g *Group, db string, opt Options, rep *Report, record func(Result)) {
	skipped := map[string]string{}
	for _, t := range g.Tests {
		if reason, skip := opt.Skips.Reason(t.ID, db); skip {
			skipped[t.ID] = "skip list: " + reason
		}
	}
	var sc *Scratch
	var setupErr error
	if g.Setup != nil && len(skipped) < len(g.Tests) {
		if opt.Server == nil {
			setupErr = errors.New("the group needs a database and the run has none")
		} else if sc, setupErr = setUp(ctx, g, opt); setupErr == nil {
			defer func() {
				if err := sc.Close(); err != nil {
					rep.Warnings = append(rep.Warnings, fmt.Sprintf("removing the database of %s: %v", g.Name, err))
				}
			}()
		}
	}
	for _, t := range g.Tests {
		switch reason, skip := skipped[t.ID]; {
		case skip:
			record(Result{ID: t.ID, Group: g.Name, Outcome: Skipped, Reason: reason})
		case setupErr != nil:
			record(Result{ID: t.ID, Group: g.Name, Outcome: Failed, Reason: "setting up " + g.Name + ": " + oneLine(setupErr.Error())})
		default:
			r := runTest(ctx, g, t, sc, opt.Timeout)
			if reason, known := opt.Known.Reason(t.ID, db); known {
				r = expectFailure(r, reason, opt.Known.name)
			}
			record(r)
		}
	}
}

// expectFailure marks the result of a test the known failures list (the file
// list) has, for reason.
func expectFailure(r Result, reason, list string) Result {
	switch r.Outcome {
	case Failed:
		r.Known = reason
		r.Reason = "known failure (" + reason + "): " + r.Reason
	case Passed:
		r.Outcome, r.Details = Failed, nil
		r.Reason = "passes now: remove it from " + list + " (" + reason + ")"
	}
	return r
}

// setUp makes the group's database and runs its Setup.
func setUp(ctx context.Context, g *Group, opt Options) (*Scratch, error) {
	ctx, cancel := context.WithTimeout(ctx, opt.Timeout)
	defer cancel()
	sc, err := opt.Server.Create(ctx)
	if err != nil {
		return nil, err
	}
	if err := g.Setup(ctx, sc); err != nil {
		sc.Close()
		return nil, err
	}
	return sc, nil
}

// runTest runs one test with its deadline; a panic fails the test, with the
// stack in the details.
func runTest(ctx context.Context, g *Group, t Test, sc *Scratch, timeout time.Duration) (r Result) {
	ctx, cancel := context.WithTimeout(ctx, timeout)
	defer cancel()
	defer func() {
		if p := recover(); p != nil {
			r = Result{ID: t.ID, Group: g.Name, Outcome: Failed, Reason: fmt.Sprintf("panic: %v", p),
				Details: strings.Split(strings.TrimSpace(string(debug.Stack())), "\n")}
		}
	}()
	r = resultOf(g, t, t.Run(ctx, sc))
	r.Reason = oneLine(r.Reason)
	return r
}

// oneLine puts a reason on one line, the report having one row per test: line
// breaks become " | "; other white space stays, as it may be part of a value.
func oneLine(s string) string {
	return strings.ReplaceAll(strings.TrimSpace(s), "\n", " | ")
}
