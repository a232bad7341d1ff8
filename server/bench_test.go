package server

import (
	"context"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"net/url"
	"testing"

	"github.com/prometheus/client_golang/prometheus"

	"veneer/server/results"
)

// BenchmarkRequestOverhead times what the server adds to a query that costs
// nothing: protocol parsing, negotiation, admission, metrics, the access log
// (formatted, then dropped) and writing the answer, for an ASK answer and a
// one-row SELECT answer, with an engine that answers at once. It measures;
// it asserts nothing about time.
func BenchmarkRequestOverhead(b *testing.B) {
	for _, c := range []struct {
		name   string
		answer func(ctx context.Context, q Query) (*Answer, error)
	}{
		{"ask", func(context.Context, Query) (*Answer, error) {
			return &Answer{Kind: results.Boolean, Boolean: func() (bool, error) { return true, nil }}, nil
		}},
		{"select-1-row", rowsAnswer(1, -1)},
	} {
		b.Run(c.name, func(b *testing.B) {
			reg := prometheus.NewRegistry()
			log := slog.New(slog.NewTextHandler(io.Discard, nil))
			s, err := New(DefaultConfig(), &fakeEngine{answer: c.answer}, log, reg, reg)
			if err != nil {
				b.Fatal(err)
			}
			h := s.Handler()
			target := "/sparql?query=" + url.QueryEscape("ASK { ?x <https://vocab.veneer.example/windfarm#assignedTo> ?y }")
			b.ReportAllocs()
			for b.Loop() {
				req := httptest.NewRequest(http.MethodGet, target, nil)
				req.Header.Set("Accept", "application/sparql-results+json")
				w := httptest.NewRecorder()
				h.ServeHTTP(w, req)
				if w.Code != http.StatusOK {
					b.Fatalf("status %d: %s", w.Code, w.Body)
				}
			}
		})
	}
}
