// Package bench measures veneer against hand-written SQL: for each query of the
// mix it asks veneer's SPARQL endpoint and the minimal SQL handler (package
// twin) over HTTP on loopback, in alternation, checks that the answers are the
// same, and reports the median latencies, their ratio, the translation time and
// the throughput of many clients at once.
package bench

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"net/http"
	"net/url"
	"slices"
	"time"

	"veneer/cmd/veneer-bench/mix"
	"veneer/server/results"
)

// Config is one benchmark run.
type Config struct {
	// DB is the database's dialect name: sqlite, postgres or mysql.
	DB string
	SF float64
	// Veneer is the URL of veneer's SPARQL endpoint; Twin the URL prefix under
	// which the SQL handler answers each query by name.
	Veneer, Twin string
	// Translate parses and plans a query, as veneer does before running it.
	Translate func(query string) error
	// Iterations is the number of timed runs of each side per query, after
	// Warmup untimed ones. QueryBudget cuts the timed runs of a slow query
	// short, leaving at least minRuns.
	Iterations, Warmup int
	QueryBudget        time.Duration
	// TranslateBudget bounds the time spent timing one query's translation
	// (at least ten runs are timed).
	TranslateBudget time.Duration
	// Clients and ThroughputTime set the concurrency measurement: Clients
	// goroutines ask for ThroughputTime per side and query.
	Clients        int
	ThroughputTime time.Duration
	// Progress receives a line per query as the run goes.
	Progress io.Writer
}

// minRuns is the fewest timed runs per side a median is taken over.
const minRuns = 3

// translateRuns bounds the translations timed per query.
const translateRuns = 500

// QueryResult is the measurement of one query.
type QueryResult struct {
	Name string `json:"name"`
	Kind string `json:"kind"`
	// Rows is the answer's size: solutions, triples, or 1 for ASK.
	Rows int `json:"rows"`
	// Veneer and SQL are the median latencies; Ratio is Veneer / SQL.
	Veneer Micros  `json:"veneer_us"`
	SQL    Micros  `json:"sql_us"`
	Ratio  float64 `json:"ratio"`
	// Translate is the median parse + plan time.
	Translate Micros `json:"translate_us"`
	Runs      int    `json:"runs"`
	// Equal says the answers were compared and found the same.
	Equal bool `json:"equal"`
	// Error is why the query has no ratio: veneer's error, or how the answers
	// differ.
	Error string `json:"error,omitempty"`
}

// Micros is a duration written as microseconds in JSON.
type Micros time.Duration

// MarshalJSON writes the duration in microseconds.
func (m Micros) MarshalJSON() ([]byte, error) {
	return fmt.Appendf(nil, "%.1f", float64(m)/float64(time.Microsecond)), nil
}

// Report is the outcome of a run.
type Report struct {
	DB      string        `json:"db"`
	SF      float64       `json:"sf"`
	Started time.Time     `json:"started"`
	Queries []QueryResult `json:"queries"`
	// MedianRatio and WorstRatio are over the queries with equal answers;
	// NaN when there is none.
	MedianRatio float64 `json:"median_ratio"`
	WorstRatio  float64 `json:"worst_ratio"`
	WorstQuery  string  `json:"worst_query"`
	// TranslationMedian is the median of the queries' translation medians.
	TranslationMedian Micros       `json:"translation_median_us"`
	Throughput        []Throughput `json:"throughput"`
	// Load describes the database: how it was loaded, or that it was there.
	Load string `json:"load"`
}

// Run measures every query, then the throughput of the point and star queries.
func Run(ctx context.Context, cfg Config, queries []mix.Query) (*Report, error) {
	c := newClient(cfg.Clients)
	r := &Report{DB: cfg.DB, SF: cfg.SF, Started: time.Now().UTC()}
	for _, q := range queries {
		if err := ctx.Err(); err != nil {
			return r, err
		}
		res := measure(ctx, cfg, c, q)
		r.Queries = append(r.Queries, res)
		note := "equal"
		if res.Error != "" {
			note = res.Error
		}
		fmt.Fprintf(cfg.Progress, "%-16s veneer %9.2f ms  sql %9.2f ms  ratio %5.2f  translate %7.1f us  rows %7d  %s\n",
			q.Name, ms(res.Veneer), ms(res.SQL), res.Ratio, us(res.Translate), res.Rows, note)
	}
	r.summarise()
	for _, name := range []string{"01-point", "02-star"} {
		i := slices.IndexFunc(queries, func(q mix.Query) bool { return q.Name == name })
		if i < 0 || cfg.Clients <= 0 || cfg.ThroughputTime <= 0 {
			continue
		}
		t := throughput(ctx, cfg, c, queries[i])
		r.Throughput = append(r.Throughput, t)
		fmt.Fprintf(cfg.Progress, "%-16s %d clients: veneer %8.0f q/s  sql %8.0f q/s  ratio %.2f  errors %d/%d\n",
			name, t.Clients, t.VeneerQPS, t.SQLQPS, t.Ratio, t.VeneerErrors, t.SQLErrors)
	}
	return r, nil
}

func ms(d Micros) float64 { return float64(d) / float64(time.Millisecond) }
func us(d Micros) float64 { return float64(d) / float64(time.Microsecond) }

// summarise computes the overall figures from the queries' results.
func (r *Report) summarise() {
	var ratios []float64
	var translations []time.Duration
	r.WorstRatio, r.MedianRatio = math.NaN(), math.NaN()
	for _, q := range r.Queries {
		if q.Translate > 0 {
			translations = append(translations, time.Duration(q.Translate))
		}
		if !q.Equal || q.Error != "" {
			continue
		}
		ratios = append(ratios, q.Ratio)
		if math.IsNaN(r.WorstRatio) || q.Ratio > r.WorstRatio {
			r.WorstRatio, r.WorstQuery = q.Ratio, q.Name
		}
	}
	if len(ratios) > 0 {
		r.MedianRatio = median(ratios)
	}
	if len(translations) > 0 {
		r.TranslationMedian = Micros(median(translations))
	}
}

// median returns the middle value, or the mean of the two middle ones.
func median[T int64 | float64 | time.Duration](xs []T) T {
	s := slices.Clone(xs)
	slices.Sort(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}

// side is one way of asking a query: its request and how to read the answer.
type side struct {
	url   string
	parse func([]byte) (*Answer, error)
	// req is the request, made once: the load generator should not spend
	// on parsing a long URL again for each request what it then charges to
	// the side asked. err is why there is none.
	req *http.Request
	err error
}

func newSide(url, accept string, parse func([]byte) (*Answer, error)) side {
	s := side{url: url, parse: parse}
	if s.req, s.err = http.NewRequest(http.MethodGet, url, nil); s.err == nil {
		s.req.Header.Set("Accept", accept)
	}
	return s
}

func sides(cfg Config, q mix.Query) (veneer, twin side) {
	accept, parse := results.JSON.MediaType(), ParseJSON
	if q.Form == mix.Construct {
		accept, parse = results.NTriples.MediaType(), ParseNTriples
	}
	veneer = newSide(cfg.Veneer+"?query="+url.QueryEscape(q.SPARQL), accept, parse)
	twin = newSide(cfg.Twin+q.Name+"?"+q.Twin.ArgsQuery(), accept, parse)
	return veneer, twin
}

func measure(ctx context.Context, cfg Config, c *client, q mix.Query) QueryResult {
	res := QueryResult{Name: q.Name, Kind: q.Kind}
	if cfg.Translate != nil {
		d, err := translation(cfg.Translate, q.SPARQL, cfg.TranslateBudget)
		if err != nil {
			res.Error = "plan: " + oneLine(err.Error())
		}
		res.Translate = Micros(d)
	}
	veneer, twin := sides(cfg, q)
	want, first, err := c.answer(ctx, twin)
	if err != nil {
		res.Error = "sql twin: " + oneLine(err.Error())
		return res
	}
	res.Rows = want.Size()
	got, _, err := c.answer(ctx, veneer)
	if err != nil {
		if res.Error == "" {
			res.Error = "veneer: " + oneLine(err.Error())
		}
		res.SQL = c.alone(ctx, twin)
		return res
	}
	if got.form() != want.form() {
		res.Error = "veneer: answered with " + got.form() + ", not " + want.form()
		res.SQL = c.alone(ctx, twin)
		return res
	}
	if diff := Compare(got, want, q.Ordered); diff != "" {
		res.Error = "answers differ: " + diff
		res.SQL = c.alone(ctx, twin)
		return res
	}
	res.Equal = true
	runs := cfg.Iterations
	if cfg.QueryBudget > 0 && first > 0 {
		runs = max(minRuns, min(runs, int(cfg.QueryBudget/(2*first))))
	}
	for range min(cfg.Warmup, runs) {
		c.fetch(ctx, veneer)
		c.fetch(ctx, twin)
	}
	var vt, st []time.Duration
	for i := range runs {
		// Alternate which side goes first, so neither always finds the
		// caches as the other left them.
		order := []side{veneer, twin}
		if i%2 == 1 {
			order = []side{twin, veneer}
		}
		for _, s := range order {
			_, d, err := c.fetch(ctx, s)
			if err != nil {
				res.Error = "during the timed runs: " + oneLine(err.Error())
				res.Equal = false
				return res
			}
			if s.url == veneer.url {
				vt = append(vt, d)
			} else {
				st = append(st, d)
			}
		}
	}
	res.Runs = runs
	res.Veneer, res.SQL = Micros(median(vt)), Micros(median(st))
	res.Ratio = float64(res.Veneer) / float64(res.SQL)
	return res
}

// translation times parse + plan of a query: the median of up to translateRuns
// runs within budget, after a few untimed ones.
func translation(translate func(string) error, text string, budget time.Duration) (time.Duration, error) {
	for range 5 {
		if err := translate(text); err != nil {
			return 0, err
		}
	}
	var ds []time.Duration
	deadline := time.Now().Add(budget)
	for len(ds) < translateRuns && (len(ds) < 10 || time.Now().Before(deadline)) {
		start := time.Now()
		if err := translate(text); err != nil {
			return 0, err
		}
		ds = append(ds, time.Since(start))
	}
	return median(ds), nil
}

// client is the HTTP client both sides are asked through.
type client struct{ http *http.Client }

func newClient(conns int) *client {
	tr := &http.Transport{
		MaxIdleConns:        max(conns, 16) * 2,
		MaxIdleConnsPerHost: max(conns, 16) * 2,
		DisableCompression:  true,
		IdleConnTimeout:     time.Minute,
	}
	return &client{&http.Client{Transport: tr}}
}

// maxBody bounds an answer the client reads.
const maxBody = 1 << 30

// fetch asks once and reads the whole answer; the duration runs from sending
// the request to reading the last byte.
func (c *client) fetch(ctx context.Context, s side) ([]byte, time.Duration, error) {
	if s.err != nil {
		return nil, 0, s.err
	}
	// A shallow copy: the transport changes neither the URL nor the header.
	req := s.req.WithContext(ctx)
	start := time.Now()
	resp, err := c.http.Do(req)
	if err != nil {
		return nil, 0, err
	}
	defer resp.Body.Close()
	body, err := io.ReadAll(io.LimitReader(resp.Body, maxBody))
	d := time.Since(start)
	if err != nil {
		return nil, d, err
	}
	if resp.StatusCode != http.StatusOK {
		return nil, d, fmt.Errorf("HTTP %d: %s", resp.StatusCode, truncate(string(body), 300))
	}
	return body, d, nil
}

// alone times one side by itself, for a query whose other side failed: the
// median of minRuns runs, 0 if one fails.
func (c *client) alone(ctx context.Context, s side) Micros {
	var ds []time.Duration
	for range minRuns {
		_, d, err := c.fetch(ctx, s)
		if err != nil {
			return 0
		}
		ds = append(ds, d)
	}
	return Micros(median(ds))
}

// answer asks once and decodes the answer.
func (c *client) answer(ctx context.Context, s side) (*Answer, time.Duration, error) {
	body, d, err := c.fetch(ctx, s)
	if err != nil {
		return nil, d, err
	}
	a, err := s.parse(body)
	if err != nil {
		return nil, d, errors.Join(err, fmt.Errorf("in %s", truncate(string(body), 200)))
	}
	return a, d, nil
}

func truncate(s string, n int) string {
	if len(s) <= n {
		return s
	}
	return s[:n] + "…"
}

func oneLine(s string) string {
	for i, r := range s {
		if r == '\n' {
			return s[:i]
		}
	}
	return s
}
