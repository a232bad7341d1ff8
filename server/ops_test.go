package server

import (
	"context"
	"crypto/ecdsa"
	"crypto/elliptic"
	"crypto/rand"
	"crypto/tls"
	"crypto/x509"
	"crypto/x509/pkix"
	"encoding/json"
	"encoding/pem"
	"errors"
	"io"
	"log/slog"
	"math/big"
	"net"
	"net/http"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"veneer/server/console"
	"veneer/server/results"
)

func TestMetrics(t *testing.T) {
	served := 0
	e := explainingEngine{&fakeEngine{answer: func(ctx context.Context, q Query) (*Answer, error) {
		a, err := rowsAnswer(3, -1)(ctx, q)
		served++
		cached := served > 1 // the second run of a query finds its plan
		a.Stats = func() Stats {
			return Stats{SQLDuration: 20 * time.Millisecond, SQLRows: 9, ResidualEvaluations: 6,
				Translation: 250 * time.Microsecond, PlanCached: cached}
		}
		return a, err
	}}}
	env := newEnv(t, DefaultConfig(), e)
	for range 2 {
		if r := env.do(t, "GET", "/sparql?query=q", "", "Accept", "text/csv"); r.status != 200 {
			t.Fatalf("status %d", r.status)
		}
	}
	env.do(t, "GET", "/sparql?query=a&query=b", "")
	want := map[string]string{
		`veneer_http_requests_total{format="csv",route="sparql",status="200"}`:  "2",
		`veneer_http_requests_total{format="none",route="sparql",status="400"}`: "1",
		`veneer_rows_streamed_total{kind="solutions"}`:                          "6",
		`veneer_residual_evaluations_total`:                                     "12",
		`veneer_sql_duration_seconds_count`:                                     "2",
		`veneer_sql_duration_seconds_sum`:                                       "0.04",
		`veneer_query_duration_seconds_count{kind="solutions"}`:                 "2",
		`veneer_queries_in_flight`:                                              "0",
		`veneer_queries_queued`:                                                 "0",
		`veneer_db_connections_open{source="main"}`:                             "3",
		`veneer_db_connections_in_use{source="main"}`:                           "1",
		`veneer_db_connections_max{source="main"}`:                              "8",
		`veneer_db_connection_waits_total{source="main"}`:                       "5",
		`veneer_http_request_duration_seconds_count{route="sparql"}`:            "3",
		`veneer_plan_cache_lookups_total{result="hit"}`:                         "1",
		`veneer_plan_cache_lookups_total{result="miss"}`:                        "1",
		`veneer_translate_duration_seconds_sum`:                                 "0.0005",
		`veneer_translate_duration_seconds_bucket{le="0.00064"}`:                "2",
		`veneer_translate_duration_seconds_bucket{le="0.00016"}`:                "0",
	}
	all := env.metric(t, "veneer_")
	for name, v := range want {
		if !strings.Contains("\n"+all+"\n", "\n"+name+" "+v+"\n") {
			t.Errorf("want %s %s in\n%s", name, v, all)
		}
	}
}

func TestSlowQueryLog(t *testing.T) {
	e := &fakeEngine{answer: func(ctx context.Context, q Query) (*Answer, error) {
		c := &fakeCursor{ctx: ctx, n: 2, failAfter: -1, delay: 10 * time.Millisecond}
		return &Answer{Kind: results.Solutions, Solutions: c,
			SQL: func() []string {
				return []string{`SELECT "t0"."serial" FROM "turbine" AS "t0" WHERE "t0"."rated_power_kw" >= ?`}
			}}, nil
	}}
	cfg := DefaultConfig()
	cfg.SlowQuery = time.Millisecond
	env := newEnv(t, cfg, e)
	env.do(t, "GET", "/sparql?query=SELECT%20%3Fserial%20%7B%7D", "", RequestIDHeader, "slow-1")
	var found bool
	for _, line := range strings.Split(env.logs(), "\n") {
		var rec map[string]any
		if json.Unmarshal([]byte(line), &rec) != nil || rec["msg"] != "slow query" {
			continue
		}
		found = true
		sql, _ := rec["sql"].([]any)
		if rec["request_id"] != "slow-1" || rec["query"] != "SELECT ?serial {}" || rec["rows"] != 2.0 ||
			len(sql) != 1 || !strings.Contains(sql[0].(string), `FROM "turbine"`) {
			t.Errorf("slow-query record %v", rec)
		}
	}
	if !found {
		t.Errorf("no slow-query record in\n%s", env.logs())
	}
}

func TestReload(t *testing.T) {
	old := &fakeEngine{answer: rowsAnswer(1, -1)}
	next := &fakeEngine{answer: rowsAnswer(2, -1)}
	fail := true
	cfg := DefaultConfig()
	cfg.Reload = func(context.Context) (Engine, error) {
		if fail {
			return nil, errors.New("mapping.ttl:3:7: unknown term rr:tableNam")
		}
		return next, nil
	}
	env := newEnv(t, cfg, old)
	count := func() int {
		var doc struct{ Results struct{ Bindings []any } }
		json.Unmarshal([]byte(env.do(t, "GET", "/sparql?query=q", "").body), &doc)
		return len(doc.Results.Bindings)
	}
	if err := env.srv.Reload(context.Background()); err == nil {
		t.Fatal("a failing reload reported success")
	}
	if n := count(); n != 1 {
		t.Errorf("after a failed reload the answer has %d rows; the old engine should still answer (1)", n)
	}
	fail = false
	if err := env.srv.Reload(context.Background()); err != nil {
		t.Fatal(err)
	}
	if n := count(); n != 2 {
		t.Errorf("after a reload the answer has %d rows, want the new engine's 2", n)
	}
	m := env.metric(t, "veneer_catalog_reloads_total")
	if !strings.Contains(m, `{result="failed"} 1`) || !strings.Contains(m, `{result="ok"} 1`) {
		t.Errorf("reloads not counted: %q", m)
	}
	if !strings.Contains(env.logs(), "rr:tableNam") {
		t.Errorf("the reload error is not logged")
	}
}

func TestExplainRoute(t *testing.T) {
	env := newEnv(t, DefaultConfig(), explainingEngine{&fakeEngine{answer: kindsAnswer}})
	r := env.do(t, "POST", "/explain", "query=ASK%7B%7D", "Content-Type", "application/x-www-form-urlencoded")
	var e Explanation
	if r.status != 200 || json.Unmarshal([]byte(r.body), &e) != nil || e.Algebra != "(bgp ASK{})" || !strings.Contains(e.Plan, "sql: SELECT 1") {
		t.Errorf("JSON explain: %d %s", r.status, r.body)
	}
	r = env.do(t, "GET", "/explain?query=q", "", "Accept", "text/plain")
	if r.status != 200 || r.body != "algebra:\n  (bgp q)\nsql: SELECT 1\nin-process: nothing\n" {
		t.Errorf("text explain: %d %q", r.status, r.body)
	}
	// The same view on the query endpoint itself: /sparql?explain.
	r = env.do(t, "GET", "/sparql?explain&query=q", "", "Accept", "text/plain")
	if r.status != 200 || !strings.Contains(r.body, "in-process: nothing") {
		t.Errorf("/sparql?explain: %d %q", r.status, r.body)
	}
	plain := newEnv(t, DefaultConfig(), &fakeEngine{answer: kindsAnswer})
	if r := plain.do(t, "GET", "/explain?query=q", ""); r.status != 501 {
		t.Errorf("engine without Explain: %d", r.status)
	}
}

func TestHealthAndReadiness(t *testing.T) {
	e := &fakeEngine{answer: kindsAnswer}
	env := newEnv(t, DefaultConfig(), e)
	for _, path := range []string{"/healthz", "/readyz"} {
		if r := env.do(t, "GET", path, ""); r.status != 200 {
			t.Errorf("%s: %d", path, r.status)
		}
	}
	e.ready = errors.New("dial tcp 10.0.0.7:5432: connection refused")
	r := env.do(t, "GET", "/readyz", "")
	if r.status != 503 || strings.Contains(r.body, "refused") {
		t.Errorf("/readyz with a failing source: %d %q; want 503 without the internal reason", r.status, r.body)
	}
	if !strings.Contains(env.logs(), "connection refused") {
		t.Errorf("the readiness failure is not logged")
	}
	if r := env.do(t, "GET", "/healthz", ""); r.status != 200 {
		t.Errorf("/healthz follows the process, not the source: %d", r.status)
	}
}

func TestConsole(t *testing.T) {
	cfg := DefaultConfig()
	cfg.Console.Examples = []console.Example{{Name: "Turbines </script>", Query: "SELECT * { ?t a ?c }"}}
	env := newEnv(t, cfg, &fakeEngine{answer: kindsAnswer})
	r := env.do(t, "GET", "/", "")
	if r.status != 200 || !strings.Contains(r.body, `data-endpoint="sparql"`) || !strings.Contains(r.body, `src="console/app.js"`) {
		t.Errorf("page: %d %.300s", r.status, r.body)
	}
	// The example's text is data in the page, never markup.
	if strings.Contains(r.body, "Turbines </script>") || !strings.Contains(r.body, `Turbines \u003c/script\u003e`) {
		t.Errorf("example not escaped for the script element:\n%s", r.body)
	}
	for path, ctype := range map[string]string{"/console/app.js": "text/javascript; charset=utf-8", "/console/app.css": "text/css; charset=utf-8"} {
		if r := env.do(t, "GET", path, ""); r.status != 200 || r.header.Get("Content-Type") != ctype || len(r.body) < 100 {
			t.Errorf("%s: %d %q", path, r.status, r.header.Get("Content-Type"))
		}
	}
	if r := env.do(t, "GET", "/console/index.html", ""); r.status != 404 {
		t.Errorf("template source served: %d", r.status)
	}
}

// serveOn starts Serve on a loopback listener and returns its URL and the
// channel Serve's result arrives on.
func serveOn(t *testing.T, s *Server, ctx context.Context, scheme string) (string, <-chan error) {
	t.Helper()
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		t.Fatal(err)
	}
	done := make(chan error, 1)
	go func() { done <- s.Serve(ctx, ln) }()
	return scheme + "://" + ln.Addr().String(), done
}

func newServer(t *testing.T, cfg Config, e Engine) *Server {
	t.Helper()
	reg := prometheus.NewRegistry()
	s, err := New(cfg, e, slog.New(slog.NewTextHandler(io.Discard, nil)), reg, reg)
	if err != nil {
		t.Fatal(err)
	}
	return s
}

func TestGracefulShutdownDrains(t *testing.T) {
	// A query that takes some 300 ms is running when shutdown starts: it
	// finishes, complete, and Serve returns after it.
	started := make(chan struct{}, 1)
	e := &fakeEngine{answer: func(ctx context.Context, q Query) (*Answer, error) {
		started <- struct{}{}
		return &Answer{Kind: results.Solutions, Solutions: &fakeCursor{ctx: ctx, n: 30, failAfter: -1, delay: 10 * time.Millisecond}}, nil
	}}
	s := newServer(t, DefaultConfig(), e)
	ctx, stop := context.WithCancel(context.Background())
	base, done := serveOn(t, s, ctx, "http")
	type got struct {
		body []byte
		err  error
	}
	res := make(chan got, 1)
	go func() {
		resp, err := http.Get(base + "/sparql?query=q")
		if err != nil {
			res <- got{nil, err}
			return
		}
		b, err := io.ReadAll(resp.Body)
		resp.Body.Close()
		res <- got{b, err}
	}()
	<-started
	stop()
	r := <-res
	var doc struct{ Results struct{ Bindings []any } }
	if r.err != nil || json.Unmarshal(r.body, &doc) != nil || len(doc.Results.Bindings) != 30 {
		t.Errorf("the query in flight did not finish whole: %v, %d bytes", r.err, len(r.body))
	}
	if err := <-done; err != nil {
		t.Errorf("Serve: %v", err)
	}
	if _, err := http.Get(base + "/healthz"); err == nil {
		t.Errorf("the server still accepts after shutdown")
	}
}

func TestShutdownCancelsQueriesPastTheGracePeriod(t *testing.T) {
	started, canceled := make(chan struct{}, 1), make(chan struct{})
	e := &fakeEngine{answer: func(ctx context.Context, q Query) (*Answer, error) {
		started <- struct{}{}
		<-ctx.Done()
		close(canceled)
		return nil, ctx.Err()
	}}
	cfg := DefaultConfig()
	cfg.DrainTimeout = 50 * time.Millisecond
	s := newServer(t, cfg, e)
	ctx, stop := context.WithCancel(context.Background())
	base, done := serveOn(t, s, ctx, "http")
	go http.Get(base + "/sparql?query=q")
	<-started
	stop()
	select {
	case <-canceled:
	case <-time.After(30 * time.Second):
		t.Fatal("the query was not cancelled after the grace period")
	}
	if err := <-done; err != nil {
		t.Errorf("Serve: %v", err)
	}
}

func TestTLS(t *testing.T) {
	dir := t.TempDir()
	certFile, keyFile, pool := selfSigned(t, dir)
	cfg := DefaultConfig()
	cfg.TLSCert, cfg.TLSKey = certFile, keyFile
	s := newServer(t, cfg, &fakeEngine{answer: kindsAnswer})
	ctx, stop := context.WithCancel(context.Background())
	defer stop()
	base, _ := serveOn(t, s, ctx, "https")
	client := &http.Client{Transport: &http.Transport{TLSClientConfig: &tls.Config{RootCAs: pool}}}
	resp, err := client.Get(base + "/sparql")
	if err != nil {
		t.Fatal(err)
	}
	body, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	if resp.TLS == nil || !strings.Contains(string(body), "<"+base+"/sparql>") {
		t.Errorf("over TLS the description should name the https endpoint:\n%s", body)
	}
}

// selfSigned writes a certificate for 127.0.0.1 and its key.
func selfSigned(t *testing.T, dir string) (certFile, keyFile string, pool *x509.CertPool) {
	t.Helper()
	key, err := ecdsa.GenerateKey(elliptic.P256(), rand.Reader)
	if err != nil {
		t.Fatal(err)
	}
	tmpl := &x509.Certificate{
		SerialNumber: big.NewInt(1),
		Subject:      pkix.Name{CommonName: "veneer test"},
		NotBefore:    time.Now().Add(-time.Hour),
		NotAfter:     time.Now().Add(time.Hour),
		IPAddresses:  []net.IP{net.ParseIP("127.0.0.1")},
		KeyUsage:     x509.KeyUsageDigitalSignature,
		ExtKeyUsage:  []x509.ExtKeyUsage{x509.ExtKeyUsageServerAuth},
	}
	der, err := x509.CreateCertificate(rand.Reader, tmpl, tmpl, &key.PublicKey, key)
	if err != nil {
		t.Fatal(err)
	}
	kder, err := x509.MarshalECPrivateKey(key)
	if err != nil {
		t.Fatal(err)
	}
	certFile, keyFile = filepath.Join(dir, "cert.pem"), filepath.Join(dir, "key.pem")
	os.WriteFile(certFile, pem.EncodeToMemory(&pem.Block{Type: "CERTIFICATE", Bytes: der}), 0o600)
	os.WriteFile(keyFile, pem.EncodeToMemory(&pem.Block{Type: "EC PRIVATE KEY", Bytes: kder}), 0o600)
	cert, _ := x509.ParseCertificate(der)
	pool = x509.NewCertPool()
	pool.AddCert(cert)
	return certFile, keyFile, pool
}
