package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"log/slog"
	"net"
	"net/http"
	"os"
	"path/filepath"
	"runtime/pprof"
	"slices"
	"strconv"
	"strings"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"veneer/catalog"
	"veneer/catalog/r2rml"
	"veneer/catalog/source"
	"veneer/cmd/veneer-bench/bench"
	"veneer/cmd/veneer-bench/gen"
	"veneer/cmd/veneer-bench/mix"
	"veneer/cmd/veneer-bench/twin"
	"veneer/cmd/veneer/demo"
	"veneer/rewrite"
	"veneer/rewrite/exec"
	"veneer/server"
)

// benchOptions are the settings of a run.
type benchOptions struct {
	dbFlags
	load       string
	iterations int
	warmup     int
	budget     time.Duration
	translate  time.Duration
	clients    int
	throughput time.Duration
	out        string
	explain    bool
	cpuProfile string
	only       string
}

func runBench(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("run", flag.ContinueOnError)
	fs.SetOutput(stderr)
	var o benchOptions
	o.register(fs)
	fs.StringVar(&o.load, "load", "auto", "load the database first: auto (when it does not hold this SF), always, never")
	fs.IntVar(&o.iterations, "iterations", 21, "timed runs of each side per query")
	fs.IntVar(&o.warmup, "warmup", 3, "untimed runs of each side per query before the timed ones")
	fs.DurationVar(&o.budget, "budget", 20*time.Second, "time after which a slow query's timed runs stop (at least 3 are made)")
	fs.DurationVar(&o.translate, "translate-time", 300*time.Millisecond, "time spent timing each query's translation (at least 10 runs)")
	fs.IntVar(&o.clients, "clients", 64, "concurrent clients of the throughput measurement (0: skip it)")
	fs.DurationVar(&o.throughput, "throughput", 10*time.Second, "duration of each side's throughput measurement per query (at most 30s)")
	fs.StringVar(&o.out, "out", "bench-results", "directory for the Markdown and JSON reports")
	fs.BoolVar(&o.explain, "explain", false, "also write each query's plan (rewrite.Explain) next to the reports")
	fs.StringVar(&o.cpuProfile, "cpuprofile", "", "write a CPU profile of the measurements to this file")
	fs.StringVar(&o.only, "queries", "", "run only these queries of the mix (comma-separated names, e.g. 01-point,02-star)")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if o.throughput > bench.MaxThroughputTime {
		return fmt.Errorf("--throughput %s is over the bound of %s", o.throughput, bench.MaxThroughputTime)
	}
	t, err := o.target()
	if err != nil {
		return err
	}
	loadNote, err := ensureLoaded(ctx, t, o.sf, o.load, stderr)
	if err != nil {
		return err
	}
	report, err := benchmark(ctx, t, o, stderr)
	if err != nil {
		return err
	}
	report.Load = loadNote
	return writeReports(report, o.out, stdout)
}

// ensureLoaded loads the database as the --load setting says and describes it.
func ensureLoaded(ctx context.Context, t gen.Target, sf float64, mode string, progress io.Writer) (string, error) {
	switch mode {
	case "auto", "always", "never":
	default:
		return "", fmt.Errorf("--load %q: want auto, always or never", mode)
	}
	if mode == "never" || (mode == "auto" && gen.Loaded(ctx, t, sf)) {
		if !gen.Loaded(ctx, t, sf) {
			return "", fmt.Errorf("%s does not hold the data at SF %v; load it first", source.Redact(t.DSN), sf)
		}
		return fmt.Sprintf("Database %s, loaded before this run.", source.Redact(t.DSN)), nil
	}
	stats, err := gen.Load(ctx, t, sf, progress)
	if err != nil {
		return "", err
	}
	line := loadLine(t, sf, stats)
	fmt.Fprintln(progress, line)
	return strings.ToUpper(line[:1]) + line[1:] + ".", nil
}

// sides are the two handlers a run asks on one source, veneer's (with its
// planner) and the SQL twins', and the queries of the mix it asks them.
type sides struct {
	planner      *rewrite.Planner
	veneer, twin http.Handler
	queries      []mix.Query
}

// newSides wires both sides on src for the queries named in the
// comma-separated list only (all when it is empty).
func newSides(ctx context.Context, src source.Source, only string) (*sides, error) {
	planner, handler, err := veneer(ctx, src)
	if err != nil {
		return nil, err
	}
	params, err := mix.ReadParams(ctx, src)
	if err != nil {
		return nil, fmt.Errorf("choosing the resources the queries ask about: %w", err)
	}
	queries, err := selectQueries(mix.Queries(params, src.Dialect()), only)
	if err != nil {
		return nil, err
	}
	return &sides{planner: planner, veneer: handler, queries: queries,
		twin: twin.Handler(src, queries, server.DefaultConfig().Limits.QueryTimeout)}, nil
}

// benchmark serves veneer and the SQL twins on loopback and measures them.
func benchmark(ctx context.Context, t gen.Target, o benchOptions, progress io.Writer) (*bench.Report, error) {
	src, err := source.Open(ctx, t.DSN)
	if err != nil {
		return nil, err
	}
	defer src.Close()
	s, err := newSides(ctx, src, o.only)
	if err != nil {
		return nil, err
	}
	planner, queries := s.planner, s.queries
	if o.explain {
		if err := writeExplain(planner, queries, o.out, t.Dialect, o.sf); err != nil {
			return nil, err
		}
	}
	veneerURL, stopVeneer, err := listen("veneer", s.veneer)
	if err != nil {
		return nil, err
	}
	defer stopVeneer()
	twinURL, stopTwin, err := listen("twin", s.twin)
	if err != nil {
		return nil, err
	}
	defer stopTwin()
	if o.cpuProfile != "" {
		f, err := os.Create(o.cpuProfile)
		if err != nil {
			return nil, err
		}
		defer f.Close()
		if err := pprof.StartCPUProfile(f); err != nil {
			return nil, err
		}
		defer pprof.StopCPUProfile()
	}
	cfg := bench.Config{
		DB: t.Dialect, SF: o.sf,
		Veneer: veneerURL + "/sparql", Twin: twinURL + twin.Path,
		Translate: func(q string) error {
			_, err := planner.CompileFresh(q) // the first-time cost, not the plan cache's
			return err
		},
		Iterations: o.iterations, Warmup: o.warmup, QueryBudget: o.budget, TranslateBudget: o.translate,
		Clients: o.clients, ThroughputTime: o.throughput,
		Progress: progress,
	}
	return bench.Run(ctx, cfg, queries)
}

// selectQueries keeps the queries named in the comma-separated list only, or
// all of them when it is empty.
func selectQueries(all []mix.Query, only string) ([]mix.Query, error) {
	if only == "" {
		return all, nil
	}
	var out []mix.Query
	for name := range strings.SplitSeq(only, ",") {
		i := slices.IndexFunc(all, func(q mix.Query) bool { return q.Name == strings.TrimSpace(name) })
		if i < 0 {
			return nil, fmt.Errorf("--queries: the mix has no query %q", name)
		}
		out = append(out, all[i])
	}
	return out, nil
}

// veneer wires veneer as `veneer serve` does: the demo mapping, probed against
// the source, planned and executed, behind the server's HTTP handler.
func veneer(ctx context.Context, src source.Source) (*rewrite.Planner, http.Handler, error) {
	cat, err := r2rml.Load("demo/mapping.ttl", []byte(demo.Mapping()))
	if err != nil {
		return nil, nil, fmt.Errorf("loading the demo mapping: %w", err)
	}
	probeCtx, cancel := context.WithTimeout(ctx, 30*time.Second)
	cols, err := catalog.ProbeColumns(probeCtx, src, cat)
	cancel()
	if err != nil {
		return nil, nil, err
	}
	planner := rewrite.NewPlanner(cat, cols, src.Dialect())
	engine := &exec.Engine{Planner: planner, Source: src}
	reg := prometheus.NewRegistry()
	// The server logs as it does in production, in JSON at level info (the
	// defaults of `veneer serve`); the lines are dropped here.
	log := slog.New(slog.NewJSONHandler(io.Discard, nil))
	srv, err := server.New(server.DefaultConfig(), server.FromExec(engine), log, reg, reg)
	if err != nil {
		return nil, nil, err
	}
	return planner, srv.Handler(), nil
}

// listen serves h on a loopback port and returns its base URL.
func listen(name string, h http.Handler) (string, func(), error) {
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		return "", nil, err
	}
	hs := &http.Server{Handler: h, ReadHeaderTimeout: 10 * time.Second}
	go pprof.Do(context.Background(), pprof.Labels("server", name), func(context.Context) { hs.Serve(ln) })
	stop := func() {
		ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
		defer cancel()
		hs.Shutdown(ctx)
	}
	return "http://" + ln.Addr().String(), stop, nil
}

// reportName is the file name stem of a run's reports: bench-postgres-sf10.
func reportName(db string, sf float64) string {
	return "bench-" + db + "-sf" + strings.ReplaceAll(strconv.FormatFloat(sf, 'f', -1, 64), ".", "_")
}

// writeReports writes the Markdown and JSON reports into dir and the Markdown
// and the summary line to stdout; the summary line comes last.
func writeReports(r *bench.Report, dir string, stdout io.Writer) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	stem := filepath.Join(dir, reportName(r.DB, r.SF))
	var md strings.Builder
	if err := r.WriteMarkdown(&md); err != nil {
		return err
	}
	var js strings.Builder
	if err := r.WriteJSON(&js); err != nil {
		return err
	}
	if err := errors.Join(os.WriteFile(stem+".md", []byte(md.String()), 0o644),
		os.WriteFile(stem+".json", []byte(js.String()), 0o644)); err != nil {
		return err
	}
	fmt.Fprint(stdout, md.String())
	if failed := r.Failed(); len(failed) > 0 {
		fmt.Fprintf(stdout, "\nwithout a ratio: %s\n", strings.Join(failed, ", "))
	}
	fmt.Fprintln(stdout, r.Summary())
	return nil
}

// writeExplain writes each query's plan, or why it has none.
func writeExplain(pl *rewrite.Planner, queries []mix.Query, dir, db string, sf float64) error {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return err
	}
	var b strings.Builder
	for _, q := range queries {
		fmt.Fprintf(&b, "==== %s (%s)\n%s\n---- plan\n", q.Name, q.Kind, q.SPARQL)
		p, err := pl.Compile(q.SPARQL)
		if err != nil {
			fmt.Fprintf(&b, "error: %v\n\n", err)
			continue
		}
		fmt.Fprintf(&b, "%s\n", rewrite.Explain(p))
	}
	name := filepath.Join(dir, strings.Replace(reportName(db, sf), "bench-", "explain-", 1)+".txt")
	return os.WriteFile(name, []byte(b.String()), 0o644)
}
