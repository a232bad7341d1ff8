// Package twin is the benchmark's minimal SQL handler: it answers each query of
// the mix by running the query's hand-written SQL twin through the same source
// (driver, pool, read-only transaction) veneer uses, turning the rows into RDF
// terms, and writing them in the same result formats veneer writes. It does
// what a hand-written service would do and nothing more: no parsing, no
// planning, no in-process operators.
package twin

import (
	"context"
	"io"
	"net/http"
	"strings"
	"time"

	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/cmd/veneer-bench/mix"
	"veneer/server/results"
)

// Path is the route prefix: a twin is asked for as Path + the query's name.
const Path = "/twin/"

// Handler serves the twins of queries on src, each under Path + its name,
// with its bind parameters as the "a" parameters of the URL's query string
// (mix.Twin.ArgsQuery). Every request runs under timeout.
func Handler(src source.Source, queries []mix.Query, timeout time.Duration) http.Handler {
	byName := make(map[string]mix.Query, len(queries))
	for _, q := range queries {
		q.Twin.SQL = mix.Rebind(q.Twin.SQL, src.Dialect())
		byName[q.Name] = q
	}
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		q, ok := byName[strings.TrimPrefix(r.URL.Path, Path)]
		if !ok {
			http.NotFound(w, r)
			return
		}
		// The values asked about come with the request, as they come to a
		// hand-written service.
		args, err := q.Twin.ReadArgs(r.URL.Query()["a"])
		if err != nil {
			http.Error(w, err.Error(), http.StatusBadRequest)
			return
		}
		ctx, cancel := context.WithTimeout(r.Context(), timeout)
		defer cancel()
		if err := answer(ctx, w, src, q, args); err != nil && r.Context().Err() == nil {
			// Once the body has begun, the status is sent: the broken document
			// tells the client something went wrong.
			http.Error(w, err.Error(), http.StatusInternalServerError)
		}
	})
}

// plain hides the ResponseWriter's Flush from the result writers, which
// otherwise flush the head of a document as soon as it is written: a
// hand-written handler leaves the buffering to net/http, which sends a small
// answer in one write with its Content-Length.
type plain struct{ io.Writer }

func answer(ctx context.Context, rw http.ResponseWriter, src source.Source, q mix.Query, args []any) error {
	t := q.Twin
	w := plain{rw}
	rows, err := src.Query(ctx, t.SQL, append([]any{t.Kinds}, args...)...)
	if err != nil {
		return err
	}
	defer rows.Close()
	switch q.Form {
	case mix.Ask:
		found := rows.Next()
		if err := rows.Err(); err != nil {
			return err
		}
		rw.Header().Set("Content-Type", results.JSON.ContentType())
		return results.WriteBoolean(results.JSON, w, found)
	case mix.Construct:
		rw.Header().Set("Content-Type", results.NTriples.ContentType())
		gw := results.NewNTriples(w)
		if err := gw.Begin(); err != nil {
			return err
		}
		// The answer is a graph, a set: each triple once.
		seen := map[rdf.Triple]bool{}
		var sol []rdf.Term
		for rows.Next() {
			sol = t.Solution(rows.Values(), sol)
			for _, tr := range t.Instantiate(sol) {
				if seen[tr] {
					continue
				}
				seen[tr] = true
				if err := gw.Triple(tr); err != nil {
					return err
				}
			}
		}
		if err := rows.Err(); err != nil {
			return err
		}
		return gw.End()
	}
	rw.Header().Set("Content-Type", results.JSON.ContentType())
	sw := results.NewJSON(w)
	if err := sw.Begin(t.Vars); err != nil {
		return err
	}
	var sol []rdf.Term
	for rows.Next() {
		sol = t.Solution(rows.Values(), sol)
		if err := sw.Row(sol); err != nil {
			return err
		}
	}
	if err := rows.Err(); err != nil {
		return err
	}
	return sw.End()
}
