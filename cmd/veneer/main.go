// Command veneer publishes a relational database as a SPARQL endpoint, rewriting
// each query into SQL over the live tables through an R2RML mapping.
//
//	veneer demo    [--listen ADDR] [--config FILE] [options]
//	veneer serve   --db DSN [--mapping FILE]... [--listen ADDR] [--config FILE] [options]
//	veneer explain --db DSN [--mapping FILE]... QUERY|@FILE
//	veneer check   --db DSN --mapping FILE [--mapping FILE]... [--config FILE]
//	veneer draft   --db DSN [--base IRI] [--config FILE]
//
// Every option of serve can also come from a YAML file (--config) and from an
// environment variable; "veneer serve -h" lists them.
package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"os/signal"
	"strings"
	"syscall"
)

// exitUsage is the exit code for bad flags and for set-up failures such as an
// unreadable mapping or an unreachable database.
const exitUsage = 2

func main() { os.Exit(command(os.Args[1:])) }

// command runs veneer with the arguments after the program name until it is
// done or SIGINT or SIGTERM stops it, and returns the exit code.
func command(args []string) int {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	if err := run(ctx, args, os.Stdout, os.Stderr); err != nil {
		if !errors.Is(err, flag.ErrHelp) {
			fmt.Fprintln(os.Stderr, "veneer: "+oneLine(err.Error()))
		}
		return exitUsage
	}
	return 0
}

// oneLine folds a multi-line error (a syntax error shows its source line) so the
// first line says what failed and where.
func oneLine(s string) string {
	first, _, _ := strings.Cut(s, "\n")
	return first
}

const usage = `usage:
  veneer demo    [--listen ADDR] [--config FILE] [options]
  veneer serve   --db DSN [--mapping FILE]... [--listen ADDR] [--config FILE] [options]
  veneer explain --db DSN [--mapping FILE]... QUERY|@FILE
  veneer check   --db DSN --mapping FILE [--mapping FILE]... [--config FILE]
  veneer draft   --db DSN [--base IRI] [--config FILE]
run "veneer serve -h" for the options
`

func run(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 {
		fmt.Fprint(stderr, usage)
		return errors.New("missing subcommand")
	}
	switch args[0] {
	case "demo":
		return runDemo(ctx, args[1:], stdout, stderr)
	case "serve":
		return runServe(ctx, args[1:], stdout, stderr)
	case "explain":
		return runExplain(ctx, args[1:], stdout, stderr)
	case "check":
		return runCheck(ctx, args[1:], stdout, stderr)
	case "draft":
		return runDraft(ctx, args[1:], stdout, stderr)
	case "help", "-h", "--help":
		fmt.Fprint(stdout, usage)
		return nil
	}
	fmt.Fprint(stderr, usage)
	return fmt.Errorf("unknown subcommand %q", args[0])
}
