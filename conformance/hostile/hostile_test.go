package hostile

import (
	"context"
	"crypto/sha256"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"
	"unicode/utf8"

	"veneer/catalog"
	"veneer/catalog/r2rml"
	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/catalog/source/sourcetest"
	"veneer/cmd/veneer/demo"
	"veneer/conformance/differential"
	"veneer/server"
)

// The injection test: every value of testdata/values.txt in every template of
// Templates, through veneer's HTTP endpoint, on SQLite and (when
// VENEER_TEST_POSTGRES / VENEER_TEST_MYSQL name them) PostgreSQL and MariaDB.
// Each query must get the reference engine's answer (oxigraph over the graph
// that differential.Materialise builds from the same database) or a clean 400;
// the SQL veneer sends must hold none of the values; and the sentinel table
// must be neither read nor changed.
//
//	go test ./conformance/hostile -run TestHostile -v
//	go test ./conformance/hostile -run TestHostile/sqlite
//
// VENEER_HOSTILE_REPORT names a file that gets every failing query.

// baselines are benign values whose SQL shows which needles a template's SQL
// holds whatever the value (placeholders, keywords, table names), so that only
// what the hostile value brings is looked for.
var baselines = []string{"zq", "7", "2016-11-21", "2024-01-01T00:00:00"}

func TestHostile(t *testing.T) {
	corpus, err := os.ReadFile("testdata/values.txt")
	if err != nil {
		t.Fatal(err)
	}
	values, err := ReadValues("testdata/values.txt", corpus)
	if err != nil {
		t.Fatal(err)
	}
	if len(values) < 300 {
		t.Fatalf("the corpus has %d values; issue 8 asks for at least 300", len(values))
	}
	knownText, err := os.ReadFile("testdata/known-failures.txt")
	if err != nil {
		t.Fatal(err)
	}
	known, err := readKnown("testdata/known-failures.txt", knownText, values)
	if err != nil {
		t.Fatal(err)
	}
	refDir := installReference(t)
	refs := &references{dir: refDir, byGraph: map[[32]byte]*reference{}}
	t.Cleanup(refs.close)
	var report failureReport
	sourcetest.ForEach(t, func(t *testing.T, db *sourcetest.DB) {
		hostile(t, db, values, known, refs, &report)
	})
	report.write(t)
}

// hostile runs the corpus on one database.
func hostile(t *testing.T, db *sourcetest.DB, values []Value, known map[knownKey]string, refs *references, report *failureReport) {
	ctx := context.Background()
	dialect := db.Dialect.String()
	if err := demo.Build(ctx, func(ctx context.Context, q string, args ...any) error {
		_, err := db.Admin.ExecContext(ctx, q, args...)
		return err
	}, dialect); err != nil {
		t.Fatalf("building the demo database: %v", err)
	}
	stored := storeNotes(t, db, values)
	sent := newSentinel(t, db)

	cat := demoCatalog(t)
	g, err := differential.Materialise(ctx, differential.Database{DB: db.Admin, Dialect: dialect}, cat)
	if err != nil {
		t.Fatal(err)
	}
	ref := refs.forGraph(t, g)
	description, ok := firstObject(g, "https://vocab.veneer.example/windfarm#description")
	if !ok {
		t.Fatal("the demo graph has no wf:description")
	}
	templates := Templates(description)

	src := openSource(t, db, sent.appName)
	v := &veneer{url: differential.Serve(t, cat, src)}

	base := map[*Template]string{}
	for _, b := range baselines {
		for _, q := range Queries(templates, b) {
			src.take()
			v.ask(t, "/sparql", q.Text)
			base[q.Template] += strings.Join(src.take().sql, "\n") + "\n"
		}
	}

	var st stats
	start := time.Now()
	for _, val := range values {
		for _, q := range Queries(templates, val.Text) {
			st.queries++
			why := v.try(t, ref, g, src, q, val, base[q.Template], sent.marker, &st)
			key := knownKey{dialect, q.Template.Name, val.Line}
			if reason, ok := known[key]; ok {
				if why == "" {
					t.Errorf("%s, template %s, value of line %d is listed in testdata/known-failures.txt (%s) but passes: remove it",
						dialect, key.template, key.line, reason)
				} else {
					st.known++
					t.Logf("known failure (%s): %s, template %s, value of line %d: %s", reason, dialect, key.template, key.line, clip(why, 300))
				}
				continue
			}
			if why != "" {
				st.failed[q.Template.Name]++
				report.add(t, dialect, val, q, why)
			}
		}
	}
	t.Logf("%s: %d values (%d stored as inspection notes) in %d templates: %d queries in %s; "+
		"%d answered as the reference did (%d of them with an empty or false answer), %d refused with 400; "+
		"%d with a value among the bind arguments; SQL of %d queries checked for %d needles; %d known failures; %d failed %v",
		dialect, len(values), stored, len(templates), st.queries, time.Since(start).Round(time.Second),
		st.answered, st.empty, st.refused, st.bound, st.checkedSQL, st.needles, st.known, st.failures(), st.failed)
	t.Logf("%s: refusals by reason:\n%s", dialect, counted(st.refusal))
	t.Logf("%s: answers by term equality where the reference departs from the specifications:\n%s", dialect, counted(st.deviations))

	// The sentinel: veneer's sessions closed, nothing may have touched it.
	src.Close()
	if err := sent.check(ctx); err != nil {
		t.Errorf("%s: the sentinel table: %v", dialect, err)
	} else {
		t.Logf("%s: the sentinel table was not touched (%s)", dialect, sent.checks())
	}
	sent.selfTest(t)
}

// stats counts the outcomes on one database.
type stats struct {
	queries, answered, empty, refused, bound, checkedSQL, needles, known int
	failed, refusal, deviations                                          map[string]int
}

func (s *stats) failures() int {
	n := 0
	for _, k := range s.failed {
		n += k
	}
	return n
}

// counted lists counts by reason.
func counted(m map[string]int) string {
	var lines []string
	for r, n := range m {
		lines = append(lines, fmt.Sprintf("  %5d  %s", n, r))
	}
	slices.Sort(lines)
	return strings.Join(lines, "\n")
}

var (
	positionRE = regexp.MustCompile(`line \d+, column \d+|\d+:\d+`)
	quotedRE   = regexp.MustCompile(`"(?:[^"\\]|\\.)*"|'[^']*'|<[^>]*>|\^+`)
)

// reasonOf shortens a 400's message to its kind, for the summary.
func reasonOf(body string) string {
	line, _, _ := strings.Cut(strings.TrimSpace(body), "\n")
	line = positionRE.ReplaceAllString(line, "L:C")
	line = quotedRE.ReplaceAllString(line, "…")
	if len(line) > 110 {
		line = line[:110] + "…"
	}
	return line
}

// try runs one query on veneer and on the reference, and returns why the
// outcome is wrong, or "".
func (v *veneer) try(t *testing.T, ref *reference, g *differential.Graph, src *recorder, q Query, val Value, base, marker string, st *stats) string {
	if st.failed == nil {
		st.failed, st.refusal, st.deviations = map[string]int{}, map[string]int{}, map[string]int{}
	}
	src.take()
	resp := v.ask(t, "/sparql", q.Text)
	run := src.take()
	if why := sqlHolds(run.sql, val.Text, q, base, st); why != "" {
		return why
	}
	if strings.Contains(resp.body, marker) {
		return "the response holds the sentinel table's secret"
	}
	for _, args := range run.args {
		if slices.ContainsFunc(args, func(a any) bool { s, ok := a.(string); return ok && s == val.Text }) {
			st.bound++
			break
		}
	}

	// What the reference says. Its requests travel as JSON, which cannot
	// carry bytes that are not UTF-8: such a query has no reference answer,
	// and the SPARQL grammar (§19.1: a query string is a Unicode string)
	// leaves only a refusal.
	var want *differential.Answer
	var refErr error
	if utf8.ValidString(q.Text) {
		want, refErr = ref.answer(q.Reference)
		var qe *differential.QueryError
		if refErr != nil && !errors.As(refErr, &qe) {
			t.Fatalf("the reference engine: %v", refErr)
		}
		want, refErr = deviations(q, val.Text, g, want, refErr, st)
	} else {
		refErr = errors.New("the query text is not UTF-8")
	}

	switch resp.status {
	case http.StatusOK:
		if refErr != nil {
			return fmt.Sprintf("veneer answered a query the reference refuses (%v):\n%s", refErr, clip(resp.body, 600))
		}
		got, err := differential.ParseResultsJSON([]byte(resp.body))
		if err != nil {
			return fmt.Sprintf("veneer's answer does not parse: %v\n%s", err, clip(resp.body, 600))
		}
		if err := differential.Compare(differential.Query{Mode: differential.Bag}, want, got, nil); err != nil {
			return "a different answer: " + err.Error()
		}
		if len(want.Solutions) == 0 && (want.Boolean == nil || !*want.Boolean) {
			st.empty++
		}
		st.answered++
		return v.explained(t, q, val.Text, base, st)
	case http.StatusBadRequest:
		if why := unclean(resp); why != "" {
			return why
		}
		st.refused++
		st.refusal[reasonOf(resp.body)]++
		return ""
	}
	return fmt.Sprintf("HTTP %d (the reference %s): %s", resp.status, refOutcome(refErr), clip(resp.body, 600))
}

// langTag and iriRef are SPARQL 1.1's LANGTAG (without its "@") and the
// characters IRIREF admits (§19.8).
var (
	langTag = regexp.MustCompile(`^[a-zA-Z]+(-[a-zA-Z0-9]+)*$`)
	iriRef  = regexp.MustCompile("^[^<>\"{}|^`\\\\\\x00-\\x20]*$")
)

// Where the reference engine is known to depart from the specifications, the
// answer by term equality over the graph (Template.Lookup) stands in for its
// answer:
//
//   - It matches the literals of a triple pattern by value, so that
//     "01"^^xsd:integer finds the objects "1"^^xsd:integer; BGP matching is by
//     RDF term equality (SPARQL 1.1 Query §18.3; RDF 1.1 Concepts §3.3), and the
//     demo graph holds canonical forms only. Seen with oxigraph 0.5.11.
//   - It refuses a language tag that is not well-formed BCP 47 ("@e",
//     "@undefined"), which SPARQL's LANGTAG production (§19.8) admits, and an
//     IRI with characters that RFC 3987 leaves out but IRIREF (§19.8) admits
//     ("[", U+007F, U+FFFF). veneer may answer such a query: no term of the
//     graph has such a tag or IRI, so Lookup gives no solutions.
//   - It reads spellings of infinity that the xsd:double lexical space (XSD
//     1.1 Part 2 §3.3.5: INF, +INF, -INF) does not hold, such as "-Infinity",
//     as numbers. Such a literal is ill-typed, a comparison with it is a type
//     error (SPARQL 1.1 Query §17.3), and the FILTER keeps no solution.
func deviations(q Query, v string, g *differential.Graph, want *differential.Answer, refErr error, st *stats) (*differential.Answer, error) {
	if refErr == nil && q.Template.Name == "double-greater" && !doubleLexical(v) && len(want.Solutions) > 0 {
		st.deviations["the reference reads a double the xsd:double lexical space does not hold"]++
		return &differential.Answer{Vars: want.Vars}, nil
	}
	if q.Template.Lookup == nil {
		return want, refErr
	}
	alt := q.Template.Lookup(g, v)
	switch {
	case refErr != nil && q.Template.Name == "language-tag" && langTag.MatchString(v):
		st.deviations["the reference refuses a language tag that LANGTAG admits"]++
		return alt, nil
	case refErr != nil && q.Template.Name == "part-subject-raw" && iriRef.MatchString(v):
		st.deviations["the reference refuses an IRI that IRIREF admits"]++
		return alt, nil
	case refErr == nil && differential.Compare(differential.Query{Mode: differential.Bag}, want, alt, nil) != nil:
		st.deviations["the reference matches a pattern's literal by value"]++
		return alt, nil
	}
	return want, refErr
}

// doubleLexical is the xsd:double lexical space, as the regular expression
// of XSD 1.1 Part 2 §3.3.5.2 gives it.
var doubleLexical = regexp.MustCompile(`^((\+|-)?([0-9]+(\.[0-9]*)?|\.[0-9]+)([Ee](\+|-)?[0-9]+)?|(\+|-)?INF|NaN)$`).MatchString

func refOutcome(err error) string {
	if err != nil {
		return "refuses it: " + clip(err.Error(), 300)
	}
	return "answers it"
}

// explained checks the SQL of the explain route's plan for the query.
func (v *veneer) explained(t *testing.T, q Query, value, base string, st *stats) string {
	resp := v.ask(t, "/explain", q.Text, "Accept", "application/json")
	if resp.status != http.StatusOK {
		return fmt.Sprintf("the explain route: HTTP %d: %s", resp.status, clip(resp.body, 300))
	}
	var e server.Explanation
	if err := json.Unmarshal([]byte(resp.body), &e); err != nil {
		return fmt.Sprintf("the explain route's JSON: %v", err)
	}
	var sqls []string
	for line := range strings.Lines(e.Plan) {
		if s, ok := strings.CutPrefix(strings.TrimSpace(line), "sql: "); ok && !strings.HasPrefix(s, "none (") {
			sqls = append(sqls, s)
		}
	}
	return sqlHolds(sqls, value, q, base, st)
}

// sqlHolds reports a SQL text that holds the value, or what the value became in
// the query text, unless the template's baseline SQL holds it too.
func sqlHolds(sqls []string, value string, q Query, base string, st *stats) string {
	if len(sqls) == 0 {
		return ""
	}
	st.checkedSQL++
	for _, needle := range []string{value, q.Template.Place(value)} {
		if needle == "" || strings.Contains(base, needle) {
			continue
		}
		st.needles++
		for _, s := range sqls {
			if strings.Contains(s, needle) {
				return fmt.Sprintf("the SQL holds the value as text: %s", clip(s, 600))
			}
		}
	}
	return ""
}

// unclean says what is wrong with a 400 response, or "" for a clean one: a
// plain-text message in UTF-8 that says what is wrong, with no sign of the
// server's insides (a stack, SQL, a driver's message).
func unclean(r response) string {
	switch {
	case !strings.HasPrefix(r.header.Get("Content-Type"), "text/plain"):
		return "a 400 that is not text/plain: " + r.header.Get("Content-Type")
	case strings.TrimSpace(r.body) == "":
		return "a 400 with no message"
	case !utf8.ValidString(r.body):
		return "a 400 whose message is not UTF-8: " + clip(r.body, 300)
	}
	for _, inside := range []string{"internal error", "panic", "goroutine ", "SQLSTATE", "Error 1", "sqlite", "pgx", "FROM \"", "SELECT \""} {
		if strings.Contains(r.body, inside) {
			return fmt.Sprintf("a 400 that shows the server's insides (%q): %s", inside, clip(r.body, 600))
		}
	}
	return ""
}

// veneer is the endpoint under test.
type veneer struct{ url string }

type response struct {
	status int
	header http.Header
	body   string
}

var client = &http.Client{Timeout: 60 * time.Second}

// ask sends a query by POST, URL-encoded (SPARQL 1.1 Protocol §2.1.2).
func (v *veneer) ask(t *testing.T, path, query string, header ...string) response {
	req, err := http.NewRequest(http.MethodPost, v.url+path, strings.NewReader(url.Values{"query": {query}}.Encode()))
	if err != nil {
		t.Fatal(err)
	}
	req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	req.Header.Set("Accept", "application/sparql-results+json")
	for i := 0; i+1 < len(header); i += 2 {
		req.Header.Set(header[i], header[i+1])
	}
	resp, err := client.Do(req)
	if err != nil {
		t.Fatalf("POST %s: %v", path, err)
	}
	defer resp.Body.Close()
	body, err := io.ReadAll(resp.Body)
	if err != nil {
		t.Fatalf("POST %s: reading the answer: %v", path, err)
	}
	return response{resp.StatusCode, resp.Header, string(body)}
}

func demoCatalog(t *testing.T) *catalog.Catalog {
	cat, err := r2rml.Load("demo/mapping.ttl", []byte(demo.Mapping()))
	if err != nil {
		t.Fatal(err)
	}
	return cat
}

// storeNotes adds one inspection per value that all three databases can hold
// in a TEXT column (UTF-8 without NUL, within MySQL's 65,535 bytes), with the
// value as its notes, so that a value matched exactly has an answer. It
// returns the number stored.
func storeNotes(t *testing.T, db *sourcetest.DB, values []Value) int {
	insert := `INSERT INTO inspection (inspection_id, turbine_id, technician_id, inspected_on, blade_condition, vibration_mm_s, passed, notes)
		SELECT ?, turbine_id, technician_id, inspected_on, blade_condition, vibration_mm_s, passed, ? FROM inspection WHERE inspection_id = 1`
	if db.Dialect == source.Postgres {
		insert = strings.Replace(strings.Replace(insert, "?", "$1::integer", 1), "?", "$2::text", 1)
	}
	n := 0
	for i, v := range values {
		if !utf8.ValidString(v.Text) || strings.ContainsRune(v.Text, 0) || len(v.Text) > 60000 {
			continue
		}
		if _, err := db.Admin.Exec(insert, 900000+i, v.Text); err != nil {
			t.Fatalf("storing the value of line %d: %v", v.Line, err)
		}
		n++
	}
	return n
}

func firstObject(g *differential.Graph, predicate string) (string, bool) {
	for _, tr := range g.Triples {
		if l, ok := tr.O.(rdf.Literal); ok && tr.P == rdf.IRI(predicate) {
			return l.Lexical, true
		}
	}
	return "", false
}

// references starts one reference engine per distinct graph and remembers its
// answers: the databases hold the same data, so their graphs are normally one.
type references struct {
	dir     string
	byGraph map[[32]byte]*reference
}

type reference struct {
	engine  *differential.Reference
	answers map[string]refAnswer
}

type refAnswer struct {
	a   *differential.Answer
	err error
}

func (r *references) forGraph(t *testing.T, g *differential.Graph) *reference {
	var b strings.Builder
	if err := g.WriteNTriples(&b); err != nil {
		t.Fatal(err)
	}
	key := sha256.Sum256([]byte(b.String()))
	if ref, ok := r.byGraph[key]; ok {
		return ref
	}
	if len(r.byGraph) > 0 {
		t.Logf("the graph differs from that of the database before; starting another reference engine")
	}
	path := filepath.Join(t.TempDir(), "graph.nt")
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	e, err := differential.StartReference(r.dir, path, 60*time.Second)
	if err != nil {
		t.Fatal(err)
	}
	if e.Size != len(g.Triples) {
		t.Fatalf("the reference engine loaded %d triples of the %d materialised", e.Size, len(g.Triples))
	}
	ref := &reference{engine: e, answers: map[string]refAnswer{}}
	r.byGraph[key] = ref
	return ref
}

func (r *references) close() {
	for _, ref := range r.byGraph {
		ref.engine.Close()
	}
}

// answer is the reference's parsed answer; an error it gives for the query is
// a *differential.QueryError.
func (r *reference) answer(query string) (*differential.Answer, error) {
	if a, ok := r.answers[query]; ok {
		return a.a, a.err
	}
	text, err := r.engine.Answer(query, false)
	var a *differential.Answer
	if err == nil {
		a, err = differential.ParseResultsJSON(text)
	}
	r.answers[query] = refAnswer{a, err}
	return a, err
}

// installReference installs the reference engine in a temporary directory.
// Without node or npm the test skips, or fails under CI=true.
func installReference(t *testing.T) string {
	dir := t.TempDir()
	differential.RequireReference(t, differential.InstallReference(context.Background(), "../differential/reference", dir, 5*time.Minute))
	return dir
}

// failureReport collects failures, to show the first few and to write them
// all to VENEER_HOSTILE_REPORT.
type failureReport struct {
	mu sync.Mutex
	b  strings.Builder
	n  int
}

// shown is how many failures the test output shows in full.
const shown = 40

func (r *failureReport) add(t *testing.T, dialect string, v Value, q Query, why string) {
	r.mu.Lock()
	defer r.mu.Unlock()
	r.n++
	entry := fmt.Sprintf("%s, value of line %d %s, template %s:\n%s\n--> %s", dialect, v.Line, clip(fmt.Sprintf("%q", v.Text), 80),
		q.Template.Name, clip(q.Text, 800), why)
	fmt.Fprintf(&r.b, "==== %s\n\n", entry)
	if r.n <= shown {
		t.Error(entry)
	} else {
		t.Fail()
	}
}

func (r *failureReport) write(t *testing.T) {
	if r.n > shown {
		t.Logf("%d failures; the first %d are shown", r.n, shown)
	}
	path := os.Getenv("VENEER_HOSTILE_REPORT")
	if path == "" {
		return
	}
	if err := os.WriteFile(path, []byte(r.b.String()), 0o644); err != nil {
		t.Errorf("writing the report: %v", err)
	}
	t.Logf("%d failures written to %s", r.n, path)
}

func clip(s string, n int) string {
	if len(s) <= n {
		return s
	}
	return s[:n] + "…"
}

// knownKey names one query on one database.
type knownKey struct {
	dialect, template string
	line              int
}

// readKnown reads the list of known failures: lines "DIALECTS TEMPLATE LINE
// REASON", DIALECTS a comma-separated list or "*", LINE the corpus line of the
// value. Blank lines and lines starting with '#' are skipped.
func readKnown(name string, b []byte, values []Value) (map[knownKey]string, error) {
	lines := map[int]bool{}
	for _, v := range values {
		lines[v.Line] = true
	}
	known := map[knownKey]string{}
	for i, line := range strings.Split(string(b), "\n") {
		f := strings.Fields(line)
		if len(f) == 0 || strings.HasPrefix(f[0], "#") {
			continue
		}
		n := 0
		if len(f) >= 4 {
			n, _ = strconv.Atoi(f[2])
		}
		if !lines[n] {
			return nil, fmt.Errorf("%s:%d: want DIALECTS TEMPLATE LINE REASON, with LINE a line of the corpus holding a value", name, i+1)
		}
		dialects := strings.Split(f[0], ",")
		if f[0] == "*" {
			dialects = []string{"sqlite", "postgres", "mysql"}
		}
		for _, d := range dialects {
			known[knownKey{d, f[1], n}] = strings.Join(f[3:], " ")
		}
	}
	return known, nil
}
