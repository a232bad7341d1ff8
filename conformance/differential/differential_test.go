package differential

import (
	"context"
	"errors"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"os"
	"path/filepath"
	"slices"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"veneer/catalog"
	"veneer/catalog/r2rml"
	"veneer/catalog/source/sourcetest"
	"veneer/cmd/veneer/demo"
)

// The differential test: on the demo database, generated queries answered by
// veneer's HTTP endpoint must equal the answers of the reference engine (the npm
// package oxigraph) over the graph the independent materialiser builds.
//
//	go test ./conformance/differential -run TestDifferential            # SQLite; PostgreSQL and MariaDB when
//	                                                                    # VENEER_TEST_POSTGRES / VENEER_TEST_MYSQL are set
//	go test ./conformance/differential -run 'TestDifferential/sqlite/q0042'   # one query
//
// VENEER_DIFF_SEED and VENEER_DIFF_COUNT change the seed and the number of
// queries; VENEER_DIFF_REPORT names a file that gets every failing query with
// its difference.

const (
	defaultSeed  = 20250630
	defaultCount = 600
)

func TestDifferential(t *testing.T) {
	seed := uint64(envInt(t, "VENEER_DIFF_SEED", defaultSeed))
	count := envInt(t, "VENEER_DIFF_COUNT", defaultCount)
	refDir := installedReference(t)
	var report reportFile
	graphs := map[string]*Graph{}
	sourcetest.ForEach(t, func(t *testing.T, db *sourcetest.DB) {
		graphs[db.Dialect.String()] = differential(t, db, refDir, seed, count, &report)
	})
	report.write(t)
	// The demo data are the same on every database, and so must the graph be:
	// a difference is a mistake of the materialiser (or of a driver).
	var first string
	for _, d := range sourcetest.Dialects {
		g := graphs[d.String()]
		switch {
		case g == nil:
		case first == "":
			first = d.String()
		default:
			if diff := graphDiff(graphs[first], g); diff != "" {
				t.Errorf("the materialised graphs of %s and %s differ: %s", first, d, diff)
			}
		}
	}
}

// graphDiff returns the first difference between two graphs, or "".
func graphDiff(a, b *Graph) string {
	for i := range min(len(a.Triples), len(b.Triples)) {
		if x, y := ntriple(a.Triples[i]), ntriple(b.Triples[i]); x != y {
			return fmt.Sprintf("triple %d is %s in one and %s in the other", i+1, strings.TrimSpace(x), strings.TrimSpace(y))
		}
	}
	if len(a.Triples) != len(b.Triples) {
		return fmt.Sprintf("%d triples and %d", len(a.Triples), len(b.Triples))
	}
	return ""
}

// differential runs the generated queries on one database and returns the
// materialised graph.
func differential(t *testing.T, db *sourcetest.DB, refDir string, seed uint64, count int, report *reportFile) *Graph {
	ctx := context.Background()
	dialect := db.Dialect.String()
	err := demo.Build(ctx, func(ctx context.Context, q string, args ...any) error {
		_, err := db.Admin.ExecContext(ctx, q, args...)
		return err
	}, dialect)
	if err != nil {
		t.Fatalf("building the demo database: %v", err)
	}

	// The expected side: the materialised graph in the reference engine.
	cat := demoCatalog(t)
	g, err := Materialise(ctx, Database{DB: db.Admin, Dialect: dialect}, cat)
	if err != nil {
		t.Fatal(err)
	}
	graphPath := filepath.Join(t.TempDir(), "demo.nt")
	f, err := os.Create(graphPath)
	if err != nil {
		t.Fatal(err)
	}
	if err := errors.Join(g.WriteNTriples(f), f.Close()); err != nil {
		t.Fatal(err)
	}
	ref, err := StartReference(refDir, graphPath, 30*time.Second)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { ref.Close() })
	if ref.Size != len(g.Triples) {
		t.Fatalf("the reference engine loaded %d triples of the %d materialised", ref.Size, len(g.Triples))
	}

	// The side under test: veneer's endpoint over the same database.
	endpoint := Serve(t, demoCatalog(t), db.Open(t)) + "/sparql"

	qs := Generate(g, seed, count)
	passed, empty := 0, 0
	failedBy := map[string]int{}
	start := time.Now()
	for _, q := range qs {
		name := fmt.Sprintf("q%04d-%s", q.ID, strings.ReplaceAll(q.Family, "/", "-"))
		ok := t.Run(name, func(t *testing.T) {
			isEmpty, err := check(q, ref, endpoint)
			if isEmpty {
				empty++
			}
			if err != nil {
				report.add(dialect, q, err)
				t.Errorf("%s query (seed %d, %s comparison):\n%s\n%v", dialect, seed, q.Mode, q.Text, err)
			}
		})
		if ok {
			passed++
		} else {
			failedBy[q.Family]++
		}
	}
	var fams []string
	for f, n := range failedBy {
		fams = append(fams, fmt.Sprintf("%s %d", f, n))
	}
	slices.Sort(fams)
	t.Logf("%s: seed %d, %d triples, %d queries in %s: %d passed, %d failed (by family: %s); "+
		"the reference's answer was empty or false for %d",
		dialect, seed, len(g.Triples), len(qs), time.Since(start).Round(time.Second), passed, len(qs)-passed,
		strings.Join(fams, ", "), empty)
	return g
}

// check answers q on both sides and compares. It reports whether the
// reference's answer was empty (no solutions or triples, or false), which
// makes the comparison a weaker check.
func check(q Query, ref *Reference, endpoint string) (bool, error) {
	wantText, err := ref.Answer(q.Text, q.Graph)
	if err != nil {
		return false, fmt.Errorf("the reference engine failed (the generator should not make such a query): %w", err)
	}
	want, err := parseAnswer(wantText, q.Graph)
	if err != nil {
		return false, fmt.Errorf("the reference engine's answer: %w", err)
	}
	empty := len(want.Solutions) == 0 && len(want.Triples) == 0 && (want.Boolean == nil || !*want.Boolean)
	var all *Answer
	if q.Mode == Limited {
		allText, err := ref.Answer(q.Unlimited, false)
		if err != nil {
			return empty, fmt.Errorf("the reference engine failed on the query without its slice: %w", err)
		}
		if all, err = parseAnswer(allText, false); err != nil {
			return empty, fmt.Errorf("the reference engine's answer to the query without its slice: %w", err)
		}
	}
	gotText, err := askVeneer(endpoint, q)
	if err != nil {
		return empty, fmt.Errorf("veneer failed: %w", err)
	}
	got, err := parseAnswer(gotText, q.Graph)
	if err != nil {
		return empty, fmt.Errorf("veneer's answer: %w", err)
	}
	return empty, Compare(q, want, got, all)
}

func parseAnswer(b []byte, graph bool) (*Answer, error) {
	if graph {
		return ParseGraph(b)
	}
	return ParseResultsJSON(b)
}

var httpClient = &http.Client{Timeout: 60 * time.Second}

// askVeneer sends q to the endpoint by the SPARQL 1.1 Protocol (query via POST,
// URL-encoded, §2.1.2).
func askVeneer(endpoint string, q Query) ([]byte, error) {
	req, err := http.NewRequest(http.MethodPost, endpoint, strings.NewReader(url.Values{"query": {q.Text}}.Encode()))
	if err != nil {
		return nil, err
	}
	req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	if q.Graph {
		req.Header.Set("Accept", "application/n-triples")
	} else {
		req.Header.Set("Accept", "application/sparql-results+json")
	}
	resp, err := httpClient.Do(req)
	if err != nil {
		return nil, err
	}
	defer resp.Body.Close()
	body, err := io.ReadAll(resp.Body)
	if err != nil {
		return nil, fmt.Errorf("reading the answer: %w", err)
	}
	if resp.StatusCode != http.StatusOK {
		return nil, &QueryError{Msg: fmt.Sprintf("HTTP %d: %s", resp.StatusCode, clip(strings.TrimSpace(string(body)), 1500))}
	}
	return body, nil
}

func demoCatalog(t *testing.T) *catalog.Catalog {
	cat, err := r2rml.Load("demo/mapping.ttl", []byte(demo.Mapping()))
	if err != nil {
		t.Fatal(err)
	}
	return cat
}

var (
	installOnce sync.Once
	installDir  string
	installErr  error
)

// installedReference installs the reference engine once per test binary, in a
// temporary directory, and returns it. Without node or npm the test skips, or
// fails under CI=true.
func installedReference(t *testing.T) string {
	installOnce.Do(func() {
		installDir, installErr = os.MkdirTemp("", "veneer-reference-")
		if installErr == nil {
			installErr = InstallReference(context.Background(), "reference", installDir, 5*time.Minute)
		}
	})
	RequireReference(t, installErr)
	return installDir
}

func TestMain(m *testing.M) {
	code := m.Run()
	if installDir != "" {
		os.RemoveAll(installDir)
	}
	os.Exit(code)
}

func envInt(t *testing.T, name string, def int) int {
	s := os.Getenv(name)
	if s == "" {
		return def
	}
	n, err := strconv.Atoi(s)
	if err != nil || n < 0 {
		t.Fatalf("%s=%q: want a non-negative integer", name, s)
	}
	return n
}

// reportFile collects the failures for VENEER_DIFF_REPORT.
type reportFile struct {
	mu sync.Mutex
	b  strings.Builder
	n  int
}

func (r *reportFile) add(dialect string, q Query, err error) {
	r.mu.Lock()
	defer r.mu.Unlock()
	r.n++
	fmt.Fprintf(&r.b, "==== %s q%04d %s (%s comparison)\n%s---- difference\n%v\n\n", dialect, q.ID, q.Family, q.Mode, q.Text, err)
}

func (r *reportFile) write(t *testing.T) {
	path := os.Getenv("VENEER_DIFF_REPORT")
	if path == "" {
		return
	}
	if err := os.WriteFile(path, []byte(r.b.String()), 0o644); err != nil {
		t.Errorf("writing the report: %v", err)
	}
	t.Logf("%d failures written to %s", r.n, path)
}
