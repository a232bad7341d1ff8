package verify

import (
	"context"
	"database/sql"
	"errors"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"

	"github.com/prometheus/client_golang/prometheus"
	dto "github.com/prometheus/client_model/go"

	"veneer/catalog/rdf"
	"veneer/catalog/source"
	"veneer/deploy"
	"veneer/server"
	"veneer/server/results"
)

// stubEngine answers every query with no solutions and reports one pool, so
// that every collector of the server has something to show.
type stubEngine struct{ notReady error }

func (e *stubEngine) Prepare(server.Query) (server.Prepared, error) { return stubPrepared{}, nil }

// stubPrepared is a query of stubEngine.
type stubPrepared struct{}

func (stubPrepared) Start(context.Context) (*server.Answer, error) {
	return &server.Answer{Kind: results.Solutions, Solutions: emptySolutions{}}, nil
}

func (e *stubEngine) Ready(context.Context) error { return e.notReady }

func (e *stubEngine) PoolStats() map[string]sql.DBStats {
	return map[string]sql.DBStats{"default": {MaxOpenConnections: 8}}
}

type emptySolutions struct{}

func (emptySolutions) Vars() []string    { return []string{"x"} }
func (emptySolutions) Next() bool        { return false }
func (emptySolutions) Views() []rdf.View { return nil }
func (emptySolutions) Err() error        { return nil }
func (emptySolutions) Close() error      { return nil }

// recorder is a Registerer that keeps what is registered with it, so that
// the test sees every collector, including vectors that have no series yet.
type recorder struct {
	reg        *prometheus.Registry
	collectors []prometheus.Collector
}

func (r *recorder) Register(c prometheus.Collector) error {
	r.collectors = append(r.collectors, c)
	return r.reg.Register(c)
}

func (r *recorder) MustRegister(cs ...prometheus.Collector) {
	for _, c := range cs {
		if err := r.Register(c); err != nil {
			panic(err)
		}
	}
}

func (r *recorder) Unregister(c prometheus.Collector) bool { return r.reg.Unregister(c) }

// descRE reads a descriptor's name and variable labels from its String form,
// the only place client_golang shows them.
var descRE = regexp.MustCompile(`^Desc\{fqName: "([^"]+)", .*variableLabels: \{([^}]*)\}\}$`)

type family struct {
	labels []string
	typ    deploy.MetricType
}

// serverMetrics builds a server on the stub engine and returns the metric
// families it registers, by name, with the server's handler and registry.
func serverMetrics(t *testing.T, engine *stubEngine) (map[string]*family, http.Handler, *prometheus.Registry) {
	t.Helper()
	rec := &recorder{reg: prometheus.NewRegistry()}
	srv, err := server.New(server.DefaultConfig(), engine, slog.New(slog.NewTextHandler(io.Discard, nil)), rec, rec.reg)
	if err != nil {
		t.Fatal(err)
	}
	// A source with a replica, as veneer serve registers its members.
	dir := t.TempDir()
	var members []source.Member
	for _, name := range []string{"primary", "replica-1"} {
		path := filepath.Join(dir, name+".db")
		if err := os.WriteFile(path, nil, 0o600); err != nil {
			t.Fatal(err)
		}
		members = append(members, source.Member{Name: name, DSN: "sqlite:" + path})
	}
	g, err := source.OpenGroup(context.Background(), members)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { g.Close() })
	rec.MustRegister(g.Collector("default"))
	fams := map[string]*family{}
	for _, c := range rec.collectors {
		var typ deploy.MetricType
		switch c.(type) {
		case *prometheus.CounterVec:
			typ = deploy.Counter
		case *prometheus.GaugeVec:
			typ = deploy.Gauge
		case *prometheus.HistogramVec:
			typ = deploy.Histogram
		}
		descs := make(chan *prometheus.Desc, 64)
		c.Describe(descs)
		close(descs)
		for d := range descs {
			m := descRE.FindStringSubmatch(d.String())
			if m == nil {
				t.Fatalf("cannot read descriptor %s", d)
			}
			var labels []string
			if m[2] != "" {
				labels = strings.Split(m[2], ",")
			}
			fams[m[1]] = &family{labels: labels, typ: typ}
		}
		if typ != "" {
			continue
		}
		// A single metric or a custom collector: its samples say its type.
		ms := make(chan prometheus.Metric, 64)
		c.Collect(ms)
		close(ms)
		for m := range ms {
			name := descRE.FindStringSubmatch(m.Desc().String())[1]
			var pb dto.Metric
			if err := m.Write(&pb); err != nil {
				t.Fatal(err)
			}
			switch {
			case pb.Counter != nil:
				fams[name].typ = deploy.Counter
			case pb.Gauge != nil:
				fams[name].typ = deploy.Gauge
			case pb.Histogram != nil:
				fams[name].typ = deploy.Histogram
			default:
				fams[name].typ = "other"
			}
		}
	}
	return fams, srv.Handler(), rec.reg
}

// TestMetricsMatchServer checks the contract's metric list against the
// server, both ways: every metric the kit relies on is registered with its
// type and labels, and every metric the server registers is in the contract
// (and so documented in the README and open to the rules and dashboard).
func TestMetricsMatchServer(t *testing.T) {
	fams, _, _ := serverMetrics(t, &stubEngine{})
	for _, m := range deploy.Metrics {
		f, ok := fams[m.Name]
		if !ok {
			t.Errorf("%s: the server registers no such metric", m.Name)
			continue
		}
		if f.typ != m.Type {
			t.Errorf("%s: the server's is a %s, the contract says %s", m.Name, f.typ, m.Type)
		}
		if !slices.Equal(f.labels, m.Labels) {
			t.Errorf("%s: the server's labels are %v, the contract says %v", m.Name, f.labels, m.Labels)
		}
	}
	for name := range fams {
		if _, ok := deploy.MetricByName(name); !ok {
			t.Errorf("%s: the server registers it but deploy/contract.go does not list it", name)
		}
	}
}

// TestRouteLabels checks the label values the rules select on by making the
// server count them: a query counts under route RouteQuery, and a failed
// readiness check as status 503 under route RouteHealth, the only 503 that
// route gives.
func TestRouteLabels(t *testing.T) {
	engine := &stubEngine{}
	_, h, reg := serverMetrics(t, engine)
	do := func(method, target, body string, want int) {
		t.Helper()
		req := httptest.NewRequest(method, target, strings.NewReader(body))
		if body != "" {
			req.Header.Set("Content-Type", "application/sparql-query")
		}
		rr := httptest.NewRecorder()
		h.ServeHTTP(rr, req)
		if rr.Code != want {
			t.Fatalf("%s %s: status %d, want %d", method, target, rr.Code, want)
		}
	}
	do("GET", deploy.HealthPath, "", http.StatusOK)
	do("GET", deploy.ReadyPath, "", http.StatusOK)
	do("POST", deploy.QueryPath, "SELECT ?x WHERE { ?x ?p ?o }", http.StatusOK)
	engine.notReady = errors.New("the source does not answer")
	do("GET", deploy.ReadyPath, "", http.StatusServiceUnavailable)
	do("GET", deploy.HealthPath, "", http.StatusOK)

	got := map[string]float64{}
	mfs, err := reg.Gather()
	if err != nil {
		t.Fatal(err)
	}
	for _, mf := range mfs {
		if mf.GetName() != "veneer_http_requests_total" {
			continue
		}
		for _, m := range mf.Metric {
			l := map[string]string{}
			for _, lp := range m.Label {
				l[lp.GetName()] = lp.GetValue()
			}
			got[l["route"]+" "+l["status"]] += m.GetCounter().GetValue()
		}
	}
	for key, want := range map[string]float64{
		deploy.RouteQuery + " 200":  1,
		deploy.RouteHealth + " 200": 3,
		deploy.RouteHealth + " 503": 1,
	} {
		if got[key] != want {
			t.Errorf("veneer_http_requests_total{route,status=%q} = %v, want %v (all: %v)", key, got[key], want, got)
		}
	}
}

// TestServerDefaults checks the timing the manifests are sized for against
// the server's defaults, which hold when a config file leaves them out.
func TestServerDefaults(t *testing.T) {
	if d := server.DefaultConfig().DrainTimeout; d != deploy.DrainTimeout {
		t.Errorf("the server drains for %v by default; deploy.DrainTimeout (and terminationGracePeriodSeconds) assume %v", d, deploy.DrainTimeout)
	}
}
