package results_test

import (
	"context"
	"database/sql"
	"fmt"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"net/url"
	"os"
	"path/filepath"
	"runtime"
	"runtime/metrics"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/jackc/pgx/v5/pgxpool"
	"github.com/prometheus/client_golang/prometheus"
	_ "modernc.org/sqlite"

	"veneer/catalog"
	"veneer/catalog/r2rml"
	"veneer/catalog/source"
	"veneer/cmd/veneer-bench/gen"
	"veneer/cmd/veneer/demo"
	"veneer/rewrite"
	"veneer/rewrite/exec"
	"veneer/server"
	"veneer/server/results"
)

// The benchmarks and the test here measure result streaming end to end, from
// the database's rows to the bytes of a result document: the rate veneer
// streams at (bindings per second) against the rate at which the raw driver
// only scans the same statement's rows, and the heap it needs for a large
// answer. They measure; the heap test alone checks a bound, and only when asked
// for (it takes a minute).

// streamQuery asks for five attributes of every work order.
const streamQuery = `PREFIX wf: <https://vocab.veneer.example/windfarm#>
SELECT ?wo ?number ?opened ?priority ?status WHERE {
  ?wo wf:orderNumber ?number ; wf:openedAt ?opened ; wf:priority ?priority ; wf:status ?status .
}`

// streamSF is the scale factor of the streaming benchmarks' database: 10 000
// work orders, 50 000 bindings per answer.
const streamSF = 1

// engineOn wires veneer as `veneer serve` does, over the demo mapping or
// another one.
func engineOn(tb testing.TB, src source.Source, mapping string) *exec.Engine {
	tb.Helper()
	cat, err := r2rml.Load("mapping.ttl", []byte(mapping))
	if err != nil {
		tb.Fatal(err)
	}
	cols, err := catalog.ProbeColumns(context.Background(), src, cat)
	if err != nil {
		tb.Fatal(err)
	}
	return &exec.Engine{Planner: rewrite.NewPlanner(cat, cols, src.Dialect()), Source: src}
}

// scanOf finds the SQL statement of a plan that is one scan, perhaps projected.
func scanOf(tb testing.TB, op rewrite.Op) *rewrite.Scan {
	tb.Helper()
	switch o := op.(type) {
	case *rewrite.Scan:
		return o
	case *rewrite.Project:
		return scanOf(tb, o.Input)
	}
	tb.Fatalf("the plan is not a single SQL scan: %T", op)
	return nil
}

// BenchmarkStream streams the answer of streamQuery from SQLite: "raw-scan" is
// the driver alone scanning the rows of the SQL veneer generates for it, through
// database/sql; "source" is veneer's source layer reading them (read-only
// transaction, value normalisation); the formats are the whole path, SQL to
// terms to a document, without the network.
// BenchmarkStream measures streaming on SQLite, and on PostgreSQL when
// VENEER_TEST_POSTGRES names a server (the benchmark database veneer_bench_sf1
// is loaded there unless it holds SF 1 already).
func BenchmarkStream(b *testing.B) {
	b.Run("sqlite", func(b *testing.B) {
		benchStream(b, "sqlite:"+filepath.Join(b.TempDir(), "stream.db"))
	})
	if dsn := os.Getenv("VENEER_TEST_POSTGRES"); dsn != "" {
		b.Run("postgres", func(b *testing.B) { benchStream(b, dsn) })
	}
}

// benchStream measures streaming on the benchmark database of dsn's server.
func benchStream(b *testing.B, dsn string) {
	target, err := gen.TargetFor(dsn, streamSF)
	if err != nil {
		b.Fatal(err)
	}
	ctx := context.Background()
	if !gen.Loaded(ctx, target, streamSF) {
		if _, err := gen.Load(ctx, target, streamSF, io.Discard); err != nil {
			b.Fatal(err)
		}
	}
	src, err := source.Open(ctx, target.DSN)
	if err != nil {
		b.Fatal(err)
	}
	defer src.Close()
	engine := engineOn(b, src, demo.Mapping())
	plan, err := engine.Planner.Compile(streamQuery)
	if err != nil {
		b.Fatal(err)
	}
	scan := scanOf(b, plan.Root)
	const vars = 5

	report := func(b *testing.B, rows int) {
		b.ReportMetric(float64(rows*vars)/b.Elapsed().Seconds(), "bindings/s")
		b.ReportMetric(float64(rows/b.N), "rows/op")
	}
	b.Run("raw-scan", func(b *testing.B) {
		scanRows, done := rawScanner(b, target)
		defer done()
		rows := 0
		for b.Loop() {
			rows += scanRows(ctx, scan.SQL, scan.Args)
		}
		report(b, rows)
	})
	b.Run("source", func(b *testing.B) {
		rows := 0
		for b.Loop() {
			rs, err := src.Query(ctx, scan.SQL, scan.Args...)
			if err != nil {
				b.Fatal(err)
			}
			for rs.Next() {
				rows++
			}
			if err := rs.Err(); err != nil {
				b.Fatal(err)
			}
			rs.Close()
		}
		report(b, rows)
	})
	for _, f := range []results.Format{results.JSON, results.CSV, results.XML} {
		b.Run(f.Name(), func(b *testing.B) {
			rows := 0
			var bytes countWriter
			for b.Loop() {
				n, err := streamOnce(ctx, engine, streamQuery, f, &bytes)
				if err != nil {
					b.Fatal(err)
				}
				rows += n
			}
			report(b, rows)
			b.ReportMetric(float64(bytes)/float64(rows), "bytes/row")
		})
	}
}

// rawScanner opens the driver veneer's source uses for target's database
// without veneer, and returns a function that runs a statement and scans
// every row into Go values, as a program using the driver alone would, and
// returns the rows.
func rawScanner(b *testing.B, target gen.Target) (func(context.Context, string, []any) int, func()) {
	b.Helper()
	if target.Dialect == "postgres" {
		pool, err := pgxpool.New(context.Background(), target.DSN)
		if err != nil {
			b.Fatal(err)
		}
		return func(ctx context.Context, query string, args []any) int {
			rs, err := pool.Query(ctx, query, args...)
			if err != nil {
				b.Fatal(err)
			}
			defer rs.Close()
			n := 0
			for rs.Next() {
				if _, err := rs.Values(); err != nil {
					b.Fatal(err)
				}
				n++
			}
			if err := rs.Err(); err != nil {
				b.Fatal(err)
			}
			return n
		}, pool.Close
	}
	db, err := sql.Open("sqlite", "file:"+strings.TrimPrefix(target.DSN, "sqlite:")+"?mode=ro")
	if err != nil {
		b.Fatal(err)
	}
	return func(ctx context.Context, query string, args []any) int {
		rs, err := db.QueryContext(ctx, query, args...)
		if err != nil {
			b.Fatal(err)
		}
		defer rs.Close()
		cols, _ := rs.Columns()
		dest := make([]any, len(cols))
		ptrs := make([]any, len(cols))
		for i := range dest {
			ptrs[i] = &dest[i]
		}
		n := 0
		for rs.Next() {
			if err := rs.Scan(ptrs...); err != nil {
				b.Fatal(err)
			}
			n++
		}
		if err := rs.Err(); err != nil {
			b.Fatal(err)
		}
		return n
	}, func() { db.Close() }
}

// streamOnce answers a query in format f into w and returns the solutions.
func streamOnce(ctx context.Context, e *exec.Engine, query string, f results.Format, w io.Writer) (int, error) {
	cur, err := e.Query(ctx, query)
	if err != nil {
		return 0, err
	}
	defer cur.Close()
	sw, err := results.NewSelectWriter(f, w)
	if err != nil {
		return 0, err
	}
	if err := sw.Begin(cur.Vars()); err != nil {
		return 0, err
	}
	n := 0
	for cur.Next() {
		if err := sw.Views(cur.Views()); err != nil {
			return n, err
		}
		n++
	}
	if err := cur.Err(); err != nil {
		return n, err
	}
	return n, sw.End()
}

type countWriter int64

func (c *countWriter) Write(p []byte) (int, error) {
	*c += countWriter(len(p))
	return len(p), nil
}

// heapRows × heapVars is the size of the heap test's answer: ten million
// bindings.
const (
	heapRows = 1_000_000
	heapVars = 10
)

// heapBound is the target for the peak heap while streaming ten million
// bindings.
const heapBound = 64 << 20

// TestStreamPeakHeap streams ten million bindings (a million rows of ten
// variables) from SQLite through veneer's HTTP handler to a client that reads
// and discards them, samples the heap every few milliseconds, and checks the
// peak against heapBound. It runs only with VENEER_STREAM_HEAP=1: building the
// table and streaming take about a minute.
func TestStreamPeakHeap(t *testing.T) {
	if os.Getenv("VENEER_STREAM_HEAP") != "1" {
		t.Skip("set VENEER_STREAM_HEAP=1 to stream ten million bindings and measure the heap")
	}
	path := filepath.Join(t.TempDir(), "heap.db")
	db, err := sql.Open("sqlite", path)
	if err != nil {
		t.Fatal(err)
	}
	cols := make([]string, heapVars-1)
	for i := range cols {
		cols[i] = fmt.Sprintf("c%d", i)
	}
	// The rows are made by the database itself, from a recursive count.
	exprs := make([]string, len(cols))
	for i := range exprs {
		exprs[i] = fmt.Sprintf("'value %d of row ' || n", i)
	}
	for _, stmt := range []string{
		"CREATE TABLE big (id INTEGER PRIMARY KEY, " + strings.Join(cols, " VARCHAR(40) NOT NULL, ") + " VARCHAR(40) NOT NULL)",
		fmt.Sprintf("INSERT INTO big WITH RECURSIVE seq(n) AS (SELECT 1 UNION ALL SELECT n + 1 FROM seq WHERE n < %d) SELECT n, %s FROM seq",
			heapRows, strings.Join(exprs, ", ")),
	} {
		if _, err := db.Exec(stmt); err != nil {
			t.Fatal(err)
		}
	}
	db.Close()

	var mapping strings.Builder
	mapping.WriteString(`@prefix rr: <http://www.w3.org/ns/r2rml#> .
@prefix ex: <https://vocab.veneer.example/heap#> .
<#Big> rr:logicalTable [ rr:tableName "big" ] ;
  rr:subjectMap [ rr:template "https://data.veneer.example/heap/{id}" ]`)
	query := "PREFIX ex: <https://vocab.veneer.example/heap#>\nSELECT * WHERE { ?s"
	for i, c := range cols {
		fmt.Fprintf(&mapping, " ;\n  rr:predicateObjectMap [ rr:predicate ex:%s ; rr:objectMap [ rr:column %q ] ]", c, c)
		if i > 0 {
			query += " ;"
		}
		query += fmt.Sprintf(" ex:%s ?%s", c, c)
	}
	mapping.WriteString(" .\n")
	query += " }"

	ctx := context.Background()
	src, err := source.Open(ctx, "sqlite:"+path)
	if err != nil {
		t.Fatal(err)
	}
	defer src.Close()
	engine := engineOn(t, src, mapping.String())
	cfg := server.DefaultConfig()
	cfg.Limits.MaxRows = 0 // the answer is larger than the default allows
	cfg.Limits.QueryTimeout = 10 * time.Minute
	reg := prometheus.NewRegistry()
	srv, err := server.New(cfg, server.FromExec(engine), slog.New(slog.NewTextHandler(io.Discard, nil)), reg, reg)
	if err != nil {
		t.Fatal(err)
	}
	hs := httptest.NewServer(srv.Handler())
	defer hs.Close()

	runtime.GC()
	base := heapBytes()
	stop := make(chan struct{})
	var peak uint64
	var wg sync.WaitGroup
	wg.Go(func() {
		tick := time.NewTicker(5 * time.Millisecond)
		defer tick.Stop()
		for {
			peak = max(peak, heapBytes())
			select {
			case <-stop:
				return
			case <-tick.C:
			}
		}
	})
	start := time.Now()
	req, _ := http.NewRequest(http.MethodGet, hs.URL+"/sparql?query="+url.QueryEscape(query), nil)
	req.Header.Set("Accept", results.JSON.MediaType())
	resp, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	n, err := io.Copy(io.Discard, resp.Body)
	resp.Body.Close()
	close(stop)
	wg.Wait()
	if err != nil || resp.StatusCode != http.StatusOK {
		t.Fatalf("status %d, %d bytes read: %v", resp.StatusCode, n, err)
	}
	took := time.Since(start)
	t.Logf("streamed %d bindings (%d MB of JSON) in %s: %.0f bindings/s; heap before %.1f MiB, peak %.1f MiB",
		heapRows*heapVars, n>>20, took.Round(time.Millisecond), float64(heapRows*heapVars)/took.Seconds(),
		float64(base)/(1<<20), float64(peak)/(1<<20))
	// The answer must be all there: a JSON binding per row, ten terms each.
	if least := int64(heapRows * heapVars * 20); n < least {
		t.Errorf("only %d bytes for %d bindings", n, heapRows*heapVars)
	}
	if peak > heapBound {
		t.Errorf("peak heap %.1f MiB while streaming, over the bound of %d MiB", float64(peak)/(1<<20), heapBound>>20)
	}
}

// heapBytes is the memory occupied by heap objects, live or not yet swept.
func heapBytes() uint64 {
	s := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
	metrics.Read(s)
	return s[0].Value.Uint64()
}
