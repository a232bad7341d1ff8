package deploy

import (
	"fmt"
	"os"
	"regexp"
	"slices"
	"strings"
	"testing"

	"sigs.k8s.io/yaml"
)

const (
	rulesFile     = "prometheus/rules.yaml"
	rulesTestFile = "prometheus/rules_test.yaml"
)

// ruleFile is a Prometheus rule file, decoded strictly.
type ruleFile struct {
	Groups []struct {
		Name  string `json:"name"`
		Rules []struct {
			Record      string            `json:"record,omitempty"`
			Alert       string            `json:"alert,omitempty"`
			Expr        string            `json:"expr"`
			For         string            `json:"for,omitempty"`
			Labels      map[string]string `json:"labels,omitempty"`
			Annotations map[string]string `json:"annotations,omitempty"`
		} `json:"rules"`
	} `json:"groups"`
}

// ruleTests is the part of a promtool unit test file the coverage check
// reads; the rest is promtool's to check.
type ruleTests struct {
	Tests []struct {
		AlertRuleTest []struct {
			Alertname string `json:"alertname"`
			ExpAlerts []any  `json:"exp_alerts"`
		} `json:"alert_rule_test"`
	} `json:"tests"`
}

func readRules(t *testing.T) *ruleFile {
	t.Helper()
	data, err := os.ReadFile(rulesFile)
	if err != nil {
		t.Fatal(err)
	}
	var rf ruleFile
	if err := yaml.UnmarshalStrict(data, &rf); err != nil {
		t.Fatalf("%s: %v", rulesFile, err)
	}
	return &rf
}

// TestRulesCheck runs promtool's own check of the rule file: syntax, PromQL,
// templates.
func TestRulesCheck(t *testing.T) {
	promtool := needTool(t, "promtool", "Debian package prometheus")
	runTool(t, "prometheus", promtool, "check", "rules", "rules.yaml")
}

// TestRulesUnit runs the rules' unit tests with promtool.
func TestRulesUnit(t *testing.T) {
	promtool := needTool(t, "promtool", "Debian package prometheus")
	runTool(t, "prometheus", promtool, "test", "rules", "rules_test.yaml")
}

// TestRulesUseContract checks that the rules read only metrics and labels
// of the contract (which deploy/verify checks against the server), select on
// its route values, and use recording rules that exist.
func TestRulesUseContract(t *testing.T) {
	rf := readRules(t)
	records := map[string]bool{}
	for _, g := range rf.Groups {
		for _, r := range g.Rules {
			if r.Record != "" {
				records[r.Record] = true
			}
		}
	}
	n := 0
	for _, g := range rf.Groups {
		for _, r := range g.Rules {
			name := r.Record + r.Alert
			checkExpr(t, rulesFile+": "+name, r.Expr, records)
			n++
		}
	}
	if n == 0 {
		t.Fatalf("%s has no rules", rulesFile)
	}
}

// TestAlertsAreComplete checks that every alert says how bad it is and what
// to do, and that the unit tests make every alert fire at least once.
func TestAlertsAreComplete(t *testing.T) {
	rf := readRules(t)
	data, err := os.ReadFile(rulesTestFile)
	if err != nil {
		t.Fatal(err)
	}
	var rt ruleTests
	if err := yaml.Unmarshal(data, &rt); err != nil {
		t.Fatalf("%s: %v", rulesTestFile, err)
	}
	fired := map[string]bool{}
	for _, tc := range rt.Tests {
		for _, a := range tc.AlertRuleTest {
			if len(a.ExpAlerts) > 0 {
				fired[a.Alertname] = true
			}
		}
	}
	var alerts []string
	for _, g := range rf.Groups {
		for _, r := range g.Rules {
			if r.Alert == "" {
				continue
			}
			alerts = append(alerts, r.Alert)
			if s := r.Labels["severity"]; s != "critical" && s != "warning" {
				t.Errorf("alert %s: severity %q, want critical or warning", r.Alert, s)
			}
			if r.Annotations["summary"] == "" || r.Annotations["description"] == "" {
				t.Errorf("alert %s: want a summary and a description", r.Alert)
			}
			if r.For == "" {
				t.Errorf("alert %s: no for: a single bad scrape would page", r.Alert)
			}
			if !fired[r.Alert] {
				t.Errorf("alert %s: no unit test in %s expects it to fire", r.Alert, rulesTestFile)
			}
		}
	}
	// The alerts issue 9 asks for, by the condition each watches.
	for _, want := range []string{
		"VeneerHighErrorRatio",          // high error ratio
		"VeneerHighLatencyP99",          // p99 latency
		"VeneerConcurrencySaturated",    // saturation of the concurrency limit
		"VeneerSourceUnready",           // sources unready
		"VeneerResidualEvaluationSpike", // residual-evaluation spikes
	} {
		if !slices.Contains(alerts, want) {
			t.Errorf("no alert %s", want)
		}
	}
}

var (
	// metricRef finds a metric name with its label matchers, if any.
	metricRef = regexp.MustCompile(`\b(veneer_[a-z0-9_]+)(\{[^}]*\})?`)
	// recordRef finds a reference to a recording rule (level:metric:operations).
	recordRef = regexp.MustCompile(`\bveneer:[a-z0-9_:]+`)
	// matcherRef finds the label name and value of one label matcher.
	matcherRef = regexp.MustCompile(`([a-zA-Z_][a-zA-Z0-9_]*)\s*(?:=~|!~|!=|=)\s*"([^"]*)"`)
)

// Labels every series has or gets from the scrape: the target's job and
// instance, and a histogram bucket's upper bound.
var scrapeLabels = []string{"job", "instance"}

// checkExpr checks one PromQL expression: every veneer_ metric is in the
// contract (a histogram through its _bucket, _sum or _count series), every
// label matcher names one of its labels, route matchers use the contract's
// values, and every veneer: name is a recording rule.
func checkExpr(t reporter, where, expr string, records map[string]bool) {
	t.Helper()
	for _, m := range metricRef.FindAllStringSubmatch(expr, -1) {
		series, matchers := m[1], m[2]
		metric, labels, ok := contractSeries(series)
		if !ok {
			t.Errorf("%s: %s is not a metric of the contract (deploy/contract.go)", where, series)
			continue
		}
		for _, lm := range matcherRef.FindAllStringSubmatch(matchers, -1) {
			label, value := lm[1], lm[2]
			if !slices.Contains(labels, label) {
				t.Errorf("%s: %s has no label %q (it has %v)", where, metric.Name, label, labels)
			}
			if label == "route" && value != RouteQuery && value != RouteHealth {
				t.Errorf("%s: route %q is not one the contract names", where, value)
			}
		}
	}
	for _, r := range recordRef.FindAllString(expr, -1) {
		if !records[r] {
			t.Errorf("%s: %s is not a recording rule of %s", where, r, rulesFile)
		}
	}
}

// contractSeries finds the contract metric a series name belongs to, and the
// labels a selector on that series may name.
func contractSeries(series string) (Metric, []string, bool) {
	if m, ok := MetricByName(series); ok && m.Type != Histogram {
		return m, append(slices.Clone(m.Labels), scrapeLabels...), true
	}
	for _, suffix := range []string{"_bucket", "_sum", "_count"} {
		base, found := strings.CutSuffix(series, suffix)
		if !found {
			continue
		}
		if m, ok := MetricByName(base); ok && m.Type == Histogram {
			labels := append(slices.Clone(m.Labels), scrapeLabels...)
			if suffix == "_bucket" {
				labels = append(labels, "le")
			}
			return m, labels, true
		}
	}
	return Metric{}, nil, false
}

// reporter is the part of testing.T the checks report through.
type reporter interface {
	Helper()
	Errorf(format string, args ...any)
}

// recordingT is a reporter that keeps the errors, to test the checks.
type recordingT struct{ errors []string }

func (r *recordingT) Helper() {}

func (r *recordingT) Errorf(format string, args ...any) {
	r.errors = append(r.errors, fmt.Sprintf(format, args...))
}

// TestCheckExprFinds shows that checkExpr reports what it should, by running
// it on bad and good expressions.
func TestCheckExprFinds(t *testing.T) {
	records := map[string]bool{"veneer:query_requests:rate5m": true}
	tests := []struct {
		name, expr string
		want       string
	}{
		{"unknown metric", `rate(veneer_queries_total[5m])`, "veneer_queries_total is not a metric"},
		{"histogram without suffix", `rate(veneer_sql_duration_seconds[5m])`, "veneer_sql_duration_seconds is not a metric"},
		{"unknown label", `veneer_queries_in_flight{pod="a"}`, `no label "pod"`},
		{"le outside buckets", `veneer_sql_duration_seconds_count{le="1"}`, `no label "le"`},
		{"unknown route", `veneer_http_requests_total{route="query"}`, `route "query"`},
		{"unknown record", `veneer:query_errors:ratio_rate1m > 0`, "veneer:query_errors:ratio_rate1m is not a recording rule"},
		{"good", `sum(rate(veneer_http_request_duration_seconds_bucket{route="sparql",le="1.024"}[5m])) / veneer:query_requests:rate5m`, ""},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			rec := &recordingT{}
			checkExpr(rec, "test", tt.expr, records)
			got := strings.Join(rec.errors, "\n")
			if tt.want == "" && got != "" || !strings.Contains(got, tt.want) {
				t.Errorf("checkExpr(%s) reported %q, want %q", tt.expr, got, tt.want)
			}
		})
	}
}
