// Command veneer-bench measures what asking in SPARQL through veneer costs
// against asking the same question in hand-written SQL, on the demo scenario's
// database generated at a scale factor.
//
//	veneer-bench load --db DSN --sf N
//	veneer-bench run  --db DSN --sf N [flags]
//	veneer-bench drop --db DSN --sf N
//
// For sqlite:PATH the database is that file; for postgres:// and mysql:// DSNs
// it is the database veneer_bench_sfN on the same server (veneer_bench_sf0_01
// for SF 0.01), created through the DSN's connection and kept for the next run
// until dropped.
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
	"time"

	"veneer/catalog/source"
	"veneer/cmd/veneer-bench/gen"
)

const usage = `usage:
  veneer-bench load --db DSN --sf N     generate and load the database at scale factor N
  veneer-bench run  --db DSN --sf N     benchmark veneer against hand-written SQL (loads if needed)
  veneer-bench drop --db DSN --sf N     remove the benchmark database
DSN: sqlite:PATH, postgres://user@host:port/db, mysql://user@host:port/db
`

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	defer stop()
	if err := run(ctx, os.Args[1:], os.Stdout, os.Stderr); err != nil {
		if !errors.Is(err, flag.ErrHelp) {
			first, _, _ := strings.Cut(err.Error(), "\n")
			fmt.Fprintln(os.Stderr, "veneer-bench: "+first)
		}
		os.Exit(2)
	}
}

func run(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 {
		fmt.Fprint(stderr, usage)
		return errors.New("missing subcommand")
	}
	switch args[0] {
	case "load":
		return runLoad(ctx, args[1:], stdout, stderr)
	case "run":
		return runBench(ctx, args[1:], stdout, stderr)
	case "drop":
		return runDrop(ctx, args[1:], stderr)
	case "help", "-h", "--help":
		fmt.Fprint(stdout, usage)
		return nil
	}
	fmt.Fprint(stderr, usage)
	return fmt.Errorf("unknown subcommand %q", args[0])
}

// dbFlags are the flags every subcommand takes.
type dbFlags struct {
	dsn string
	sf  float64
}

func (f *dbFlags) register(fs *flag.FlagSet) {
	fs.StringVar(&f.dsn, "db", "", "database DSN: sqlite:PATH, postgres://… or mysql://…")
	fs.Float64Var(&f.sf, "sf", 1, "scale factor: 1 ≈ 10 000 work orders")
}

func (f *dbFlags) target() (gen.Target, error) {
	if f.dsn == "" {
		return gen.Target{}, errors.New("--db is required")
	}
	if err := gen.CheckScale(f.sf); err != nil {
		return gen.Target{}, err
	}
	return gen.TargetFor(f.dsn, f.sf)
}

func runLoad(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("load", flag.ContinueOnError)
	fs.SetOutput(stderr)
	var f dbFlags
	f.register(fs)
	if err := fs.Parse(args); err != nil {
		return err
	}
	t, err := f.target()
	if err != nil {
		return err
	}
	stats, err := gen.Load(ctx, t, f.sf, stderr)
	if err != nil {
		return err
	}
	fmt.Fprintln(stdout, loadLine(t, f.sf, stats))
	return nil
}

// loadLine says what a load did, in one line.
func loadLine(t gen.Target, sf float64, s gen.LoadStats) string {
	return fmt.Sprintf("loaded %s at SF %v: %d rows in %s (indexes and statistics %s) into %s",
		t.Dialect, sf, s.Rows(), s.Total.Round(100*time.Millisecond), s.Indexes.Round(100*time.Millisecond),
		source.Redact(t.DSN))
}

func runDrop(ctx context.Context, args []string, stderr io.Writer) error {
	fs := flag.NewFlagSet("drop", flag.ContinueOnError)
	fs.SetOutput(stderr)
	var f dbFlags
	f.register(fs)
	if err := fs.Parse(args); err != nil {
		return err
	}
	t, err := f.target()
	if err != nil {
		return err
	}
	return gen.Drop(ctx, t)
}
