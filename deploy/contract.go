// Package deploy holds veneer's operations kit: Kubernetes manifests
// (kubernetes/base and the overlay kubernetes/overlays/example), Prometheus
// alerting and recording rules with their unit tests (prometheus/), and a
// dashboard definition (dashboard/veneer.json).
//
// This file is the one place that lists what the kit takes from the binary:
// the port, the HTTP paths, the files and environment variables a container
// is given, the shutdown timing, and the metrics with their labels. The tests
// of this package check that the manifests, rules and dashboard use exactly
// these values; the tests of deploy/verify check that the values agree with
// the server and the binary themselves, so that a change on either side
// fails a test instead of a deployment.
package deploy

import "time"

// Port is the TCP port veneer listens on (the binary's default listen address
// is 127.0.0.1 on this port; a container listens on every interface).
const Port = 7531

// ContainerListen is the listen address in a container: every interface, so
// that the kubelet's probes and the Service reach the process.
const ContainerListen = "0.0.0.0:7531"

// HTTP paths the kit points at.
const (
	// QueryPath is the SPARQL 1.1 Protocol endpoint.
	QueryPath = "/sparql"
	// HealthPath answers while the process runs: the liveness probe.
	HealthPath = "/healthz"
	// ReadyPath answers while the catalog is loaded and every source answers,
	// and turns 503 when shutdown begins: the readiness probe.
	ReadyPath = "/readyz"
	// MetricsPath serves the Prometheus text format.
	MetricsPath = "/metrics"
)

// Files and variables a container is given. The config file and the mappings
// come from a ConfigMap, the tokens from a Secret; the DSN comes from the
// same Secret through an environment variable, so that it appears in no file
// the ConfigMap shows and on no command line.
const (
	// ConfigFlag is the serve flag that names the YAML config file.
	ConfigFlag = "config"
	// ConfigDir is where the ConfigMap is mounted: the config file and the
	// mapping files it names, one per key.
	ConfigDir = "/etc/veneer/config"
	// ConfigFile is the YAML config file veneer serve reads (--config).
	ConfigFile = ConfigDir + "/veneer.yaml"
	// SecretsDir is where the Secret's tokens key is mounted.
	SecretsDir = "/etc/veneer/secrets"
	// TokensFile holds the bearer tokens, one a line.
	TokensFile = SecretsDir + "/tokens"
	// DSNEnv is the environment variable that carries the source's DSN.
	DSNEnv = "VENEER_DB"
	// SecretName is the Secret the operator creates with the keys below.
	SecretName = "veneer"
	// SecretDSNKey is the Secret key holding the DSN.
	SecretDSNKey = "dsn"
	// SecretTokensKey is the Secret key holding the bearer tokens file.
	SecretTokensKey = "tokens"
	// ConfigMapName is the ConfigMap holding the config file and mappings.
	ConfigMapName = "veneer-config"
)

// UID is the numeric user the image runs as (the run image's "nonroot" user,
// 65532, from memory of that image's conventions): numeric, so that the
// kubelet can check runAsNonRoot without looking inside the image.
const UID = 65532

// Shutdown timing. On SIGTERM the server turns /readyz to 503 and lets the
// requests in flight run for DrainTimeout before it cancels them. Kubernetes
// runs the preStop hook first, then sends SIGTERM, and kills the container
// when terminationGracePeriodSeconds (counted from the start of preStop)
// runs out; so the grace period must cover PreStopSleep + DrainTimeout +
// ShutdownMargin.
const (
	// DrainTimeout is the server's grace period for requests in flight.
	DrainTimeout = 20 * time.Second
	// PreStopSleep gives endpoint controllers time to take the pod out of
	// the Service before the server stops accepting connections (common
	// practice, no specification gives a number).
	PreStopSleep = 5 * time.Second
	// ShutdownMargin covers closing connections and writing the last logs
	// after the drain (common practice).
	ShutdownMargin = 5 * time.Second
)

// Route label values of veneer_http_requests_total that the rules select on.
const (
	// RouteQuery is the route label of /sparql.
	RouteQuery = "sparql"
	// RouteHealth is the route label of /healthz and /readyz; only /readyz
	// ever answers 503, so route="health",status="503" counts failed
	// readiness checks.
	RouteHealth = "health"
)

// MetricType is the Prometheus type of a metric family.
type MetricType string

// The metric types the kit uses.
const (
	Counter   MetricType = "counter"
	Gauge     MetricType = "gauge"
	Histogram MetricType = "histogram"
)

// Metric is a metric family the rules, the dashboard or the README rely on.
type Metric struct {
	// Name is the family name, without the _bucket, _sum and _count suffixes
	// of a histogram.
	Name string
	// Type is the family's type.
	Type MetricType
	// Labels are the variable label names, in the server's order.
	Labels []string
}

// Metrics lists every metric family the kit relies on: the ones the server
// registers (server/metrics.go) for issue 6.
var Metrics = []Metric{
	{"veneer_http_requests_total", Counter, []string{"route", "status", "format"}},
	{"veneer_http_request_duration_seconds", Histogram, []string{"route"}},
	{"veneer_query_duration_seconds", Histogram, []string{"kind"}},
	{"veneer_sql_duration_seconds", Histogram, nil},
	{"veneer_rows_streamed_total", Counter, []string{"kind"}},
	{"veneer_queries_in_flight", Gauge, nil},
	{"veneer_queries_queued", Gauge, nil},
	{"veneer_queries_rejected_total", Counter, []string{"reason"}},
	{"veneer_query_timeouts_total", Counter, nil},
	{"veneer_residual_evaluations_total", Counter, nil},
	{"veneer_stream_failures_total", Counter, nil},
	{"veneer_row_limit_exceeded_total", Counter, nil},
	{"veneer_catalog_reloads_total", Counter, []string{"result"}},
	{"veneer_translate_duration_seconds", Histogram, nil},
	{"veneer_plan_cache_lookups_total", Counter, []string{"result"}},
	{"veneer_db_connections_open", Gauge, []string{"source"}},
	{"veneer_db_connections_in_use", Gauge, []string{"source"}},
	{"veneer_db_connections_idle", Gauge, []string{"source"}},
	{"veneer_db_connections_max", Gauge, []string{"source"}},
	{"veneer_db_connection_waits_total", Counter, []string{"source"}},
	{"veneer_db_connection_wait_seconds_total", Counter, []string{"source"}},
	// A source with replicas: source is a constant label of these.
	{"veneer_db_member_up", Gauge, []string{"member"}},
	{"veneer_db_member_connections_open", Gauge, []string{"member"}},
	{"veneer_db_member_connections_in_use", Gauge, []string{"member"}},
	{"veneer_db_member_statements_total", Counter, []string{"member"}},
	{"veneer_db_member_removals_total", Counter, []string{"member"}},
}

// MetricByName returns the listed metric family of that name.
func MetricByName(name string) (Metric, bool) {
	for _, m := range Metrics {
		if m.Name == name {
			return m, true
		}
	}
	return Metric{}, false
}
