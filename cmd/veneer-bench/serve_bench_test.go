package main

import (
	"context"
	"net/http"
	"net/http/httptest"
	"net/url"
	"os"
	"testing"
	"time"

	"veneer/catalog/source"
	"veneer/cmd/veneer-bench/bench"
	"veneer/cmd/veneer-bench/mix"
	"veneer/cmd/veneer-bench/twin"
)

// BenchmarkServe sends each query of the mix to veneer's handler and to its
// SQL twin's, in this process and one at a time, on a database that `run`
// would use: VENEER_BENCH_DB is its DSN, VENEER_BENCH_QUERIES an optional
// comma-separated list of query names. Besides time and allocations it
// reports this process's CPU time per request (cpu-us/op), which leaves out
// the database's work and the time spent waiting for it, so that the two
// sides' own costs compare in one run. It measures; it asserts nothing about
// time.
func BenchmarkServe(b *testing.B) {
	dsn := os.Getenv("VENEER_BENCH_DB")
	if dsn == "" {
		b.Skip("set VENEER_BENCH_DB to the DSN of a database loaded by `veneer-bench load`")
	}
	ctx := context.Background()
	src, err := source.Open(ctx, dsn)
	if err != nil {
		b.Fatal(err)
	}
	defer src.Close()
	s, err := newSides(ctx, src, os.Getenv("VENEER_BENCH_QUERIES"))
	if err != nil {
		b.Fatal(err)
	}
	for _, q := range s.queries {
		accept := "application/sparql-results+json"
		if q.Form == mix.Construct {
			accept = "application/n-triples"
		}
		for _, side := range []struct {
			name   string
			h      http.Handler
			target string
		}{
			{"veneer", s.veneer, "/sparql?query=" + url.QueryEscape(q.SPARQL)},
			{"twin", s.twin, twin.Path + q.Name + "?" + q.Twin.ArgsQuery()},
		} {
			b.Run(q.Name+"/"+side.name, func(b *testing.B) {
				b.ReportAllocs()
				cpu := bench.ProcessCPU()
				for b.Loop() {
					req := httptest.NewRequest(http.MethodGet, side.target, nil)
					req.Header.Set("Accept", accept)
					w := httptest.NewRecorder()
					side.h.ServeHTTP(w, req)
					if w.Code != http.StatusOK {
						b.Fatalf("status %d: %s", w.Code, w.Body)
					}
				}
				b.ReportMetric(float64(bench.ProcessCPU()-cpu)/float64(b.N)/float64(time.Microsecond), "cpu-us/op")
			})
		}
	}
}
