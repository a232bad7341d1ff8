// Command w3c runs a W3C test suite against veneer and reports the outcome:
//
//	go run ./conformance/cmd/w3c SUITE [--db sqlite|postgres|mysql] [--w3c DIR] [-v]
//
// It prints one row per failing test (its identifier and the reason) and ends
// with the line "SUITE DB: N passed, M failed, K skipped", DB being "none" for
// a suite that needs no database; a test the suite's known failures list has
// is a failure too, its row saying so. DIR, the checkout of the W3C suites,
// defaults to $VENEER_W3C or else ../shared/w3c from the module's root; the
// test servers' DSNs come from VENEER_TEST_POSTGRES and VENEER_TEST_MYSQL.
// The exit status is 0 when no test failed, 1 when some did, 2 when the run
// could not be made.
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"sort"
	"strings"

	"veneer/catalog/source"
	"veneer/conformance"
	"veneer/conformance/w3cdir"
)

// suites are the suites the command knows, by name.
var suites = map[string]conformance.Suite{}

func init() {
	for _, s := range []conformance.Suite{
		conformance.RDB2RDF(), conformance.SPARQLSyntax(), conformance.SPARQLEval(),
		conformance.Turtle(), conformance.NTriples(), conformance.NQuads(), conformance.Protocol(),
		conformance.SPARQLService(),
	} {
		suites[s.Name()] = s
	}
}

// serverEnv names the environment variable with each server's DSN.
var serverEnv = map[source.Dialect]string{
	source.Postgres: "VENEER_TEST_POSTGRES",
	source.MySQL:    "VENEER_TEST_MYSQL",
}

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt)
	code := run(ctx, os.Args[1:], os.Stdout, os.Stderr)
	stop()
	os.Exit(code)
}

// errUsage marks a command line the command cannot read; the usage has been shown.
var errUsage = errors.New("usage")

func run(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	suite, opt, verbose, err := parseArgs(ctx, args, stderr)
	if err != nil {
		if !errors.Is(err, errUsage) {
			fmt.Fprintln(stderr, "w3c:", err)
		}
		return 2
	}
	if opt.Server != nil {
		defer opt.Server.Close()
	}
	rep, err := conformance.Run(ctx, suite, opt, func(r conformance.Result) {
		if r.Outcome == conformance.Failed || verbose {
			printResult(stdout, r, verbose)
		}
	})
	if err != nil {
		fmt.Fprintln(stderr, "w3c:", err)
		return 2
	}
	for _, w := range rep.Warnings {
		fmt.Fprintln(stderr, "w3c: warning:", w)
	}
	fmt.Fprintln(stdout, rep.Summary())
	if rep.Failed > 0 {
		return 1
	}
	return 0
}

// parseArgs reads "SUITE [flags]" or "[flags] SUITE" and opens the database
// server the run needs.
func parseArgs(ctx context.Context, args []string, stderr io.Writer) (conformance.Suite, conformance.Options, bool, error) {
	var opt conformance.Options
	fs := flag.NewFlagSet("w3c", flag.ContinueOnError)
	fs.SetOutput(stderr)
	db := fs.String("db", "sqlite", "database to run database suites on: sqlite, postgres or mysql")
	fs.StringVar(&opt.Dir, "w3c", w3cdir.Dir(), "directory of the W3C test suites")
	verbose := fs.Bool("v", false, "show every test, and the details of failures")
	fs.Usage = func() {
		names := make([]string, 0, len(suites))
		for n := range suites {
			names = append(names, n)
		}
		sort.Strings(names)
		fmt.Fprintf(stderr, "usage: w3c SUITE [--db sqlite|postgres|mysql] [--w3c DIR] [-v]\nsuites: %s\n", strings.Join(names, ", "))
		fs.PrintDefaults()
	}
	var name string
	if len(args) > 0 && !strings.HasPrefix(args[0], "-") {
		name, args = args[0], args[1:]
	}
	if err := fs.Parse(args); err != nil {
		return nil, opt, false, errUsage
	}
	if name == "" && fs.NArg() > 0 {
		name = fs.Arg(0)
	} else if fs.NArg() > 0 {
		fs.Usage()
		return nil, opt, false, errUsage
	}
	suite, ok := suites[name]
	if !ok {
		if name != "" {
			fmt.Fprintf(stderr, "w3c: no suite %q\n", name)
		}
		fs.Usage()
		return nil, opt, false, errUsage
	}
	var err error
	if opt.Skips, err = conformance.SkipListFor(suite.Name()); err != nil {
		return nil, opt, false, err
	}
	if opt.Known, err = conformance.KnownFailuresFor(suite.Name()); err != nil {
		return nil, opt, false, err
	}
	if suite.NeedsDatabase() {
		d, err := conformance.ParseDialect(*db)
		if err != nil {
			return nil, opt, false, err
		}
		dsn := ""
		if env, ok := serverEnv[d]; ok {
			if dsn = os.Getenv(env); dsn == "" {
				return nil, opt, false, fmt.Errorf("--db %s needs the server's DSN in %s", d, env)
			}
		}
		if opt.Server, err = conformance.OpenServer(ctx, d, dsn); err != nil {
			return nil, opt, false, err
		}
	}
	return suite, opt, *verbose, nil
}

// printResult writes one row for a result, and with verbose its details.
func printResult(w io.Writer, r conformance.Result, verbose bool) {
	if r.Reason == "" {
		fmt.Fprintf(w, "%s %s\n", r.Outcome, r.ID)
	} else {
		fmt.Fprintf(w, "%s %s  %s\n", r.Outcome, r.ID, r.Reason)
	}
	if verbose {
		for _, d := range r.Details {
			fmt.Fprintf(w, "    %s\n", d)
		}
	}
}
