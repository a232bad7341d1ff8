package server

import (
	"strconv"
	"sync"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"veneer/server/results"
)

// metrics are the server's own Prometheus metrics. Labels take values from
// small fixed sets (routes, statuses, format names), never from requests.
type metrics struct {
	requests       *prometheus.CounterVec
	duration       *prometheus.HistogramVec
	queryDuration  *prometheus.HistogramVec
	sqlDuration    prometheus.Histogram
	rows           *prometheus.CounterVec
	rejected       *prometheus.CounterVec
	timeouts       prometheus.Counter
	residual       prometheus.Counter
	streamFailures prometheus.Counter
	rowLimit       prometheus.Counter
	reloads        *prometheus.CounterVec
	translation    prometheus.Histogram
	planCache      *prometheus.CounterVec

	// The children of the vectors above that every query touches, looked
	// up once: by answer kind, and the plan cache's two results.
	kinds             map[results.Kind]kindMetrics
	planHit, planMiss prometheus.Counter
	// The children of requests and duration by their labels, looked up
	// once each (a label lookup hashes every value, at every request).
	requestChildren sync.Map // requestLabels → requestMetrics
}

// requestLabels are the labels of a request's metrics.
type requestLabels struct {
	route  string
	status int
	format string
}

// requestMetrics are the metrics of the requests of one requestLabels.
type requestMetrics struct {
	count    prometheus.Counter
	duration prometheus.Observer
}

// request counts a finished request and observes its duration d.
func (m *metrics) request(l requestLabels, d time.Duration) {
	v, ok := m.requestChildren.Load(l)
	if !ok {
		v, _ = m.requestChildren.LoadOrStore(l, requestMetrics{
			count:    m.requests.WithLabelValues(l.route, strconv.Itoa(l.status), l.format),
			duration: m.duration.WithLabelValues(l.route),
		})
	}
	rm := v.(requestMetrics)
	rm.count.Inc()
	rm.duration.Observe(d.Seconds())
}

// kindMetrics are the metrics of the queries of one answer kind.
type kindMetrics struct {
	duration prometheus.Observer
	rows     prometheus.Counter
}

// ofKind returns the metrics of answer kind k.
func (m *metrics) ofKind(k results.Kind) kindMetrics {
	if km, ok := m.kinds[k]; ok {
		return km
	}
	return kindMetrics{m.queryDuration.WithLabelValues(k.String()), m.rows.WithLabelValues(k.String())}
}

// Histogram buckets from 1 ms to about 65 s, four to a decade and a bit:
// SPARQL answers range from point look-ups to scans at the timeout.
var durationBuckets = prometheus.ExponentialBuckets(0.001, 4, 9)

func newMetrics(reg prometheus.Registerer) *metrics {
	m := &metrics{
		requests: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "veneer_http_requests_total",
			Help: "HTTP requests by route, status (0: aborted while streaming) and result format.",
		}, []string{"route", "status", "format"}),
		duration: prometheus.NewHistogramVec(prometheus.HistogramOpts{
			Name:    "veneer_http_request_duration_seconds",
			Help:    "Time to answer an HTTP request, streaming included.",
			Buckets: durationBuckets,
		}, []string{"route"}),
		queryDuration: prometheus.NewHistogramVec(prometheus.HistogramOpts{
			Name:    "veneer_query_duration_seconds",
			Help:    "Time from a query's admission to the end of its answer, by answer kind.",
			Buckets: durationBuckets,
		}, []string{"kind"}),
		sqlDuration: prometheus.NewHistogram(prometheus.HistogramOpts{
			Name:    "veneer_sql_duration_seconds",
			Help:    "Time a query spent in the database, as its engine measured it.",
			Buckets: durationBuckets,
		}),
		rows: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "veneer_rows_streamed_total",
			Help: "Solutions and triples written to clients, by answer kind.",
		}, []string{"kind"}),
		rejected: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "veneer_queries_rejected_total",
			Help: "Queries turned away with 503 because of the concurrency limit: queue_full or queue_timeout.",
		}, []string{"reason"}),
		timeouts: prometheus.NewCounter(prometheus.CounterOpts{
			Name: "veneer_query_timeouts_total",
			Help: "Queries stopped at their time limit.",
		}),
		residual: prometheus.NewCounter(prometheus.CounterOpts{
			Name: "veneer_residual_evaluations_total",
			Help: "Operators evaluated in-process on decoded solutions because SQL could not express them.",
		}),
		streamFailures: prometheus.NewCounter(prometheus.CounterOpts{
			Name: "veneer_stream_failures_total",
			Help: "Responses aborted because the query failed after streaming began.",
		}),
		rowLimit: prometheus.NewCounter(prometheus.CounterOpts{
			Name: "veneer_row_limit_exceeded_total",
			Help: "Queries refused or aborted because their answer went over the row limit.",
		}),
		reloads: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "veneer_catalog_reloads_total",
			Help: "Catalog reloads by result: ok, or failed (the old catalog stays).",
		}, []string{"result"}),
		translation: prometheus.NewHistogram(prometheus.HistogramOpts{
			Name: "veneer_translate_duration_seconds",
			Help: "Time spent parsing and planning each query (plan cache lookups included).",
			// 10 µs to about 0.7 s: a cached plan takes microseconds.
			Buckets: prometheus.ExponentialBuckets(0.00001, 4, 9),
		}),
		planCache: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "veneer_plan_cache_lookups_total",
			Help: "Plan cache lookups by result: hit (by the query text, or by its shape with the VALUES data bound in) or miss.",
		}, []string{"result"}),
	}
	m.kinds = map[results.Kind]kindMetrics{}
	for _, k := range []results.Kind{results.Solutions, results.Boolean, results.Graph} {
		m.kinds[k] = kindMetrics{m.queryDuration.WithLabelValues(k.String()), m.rows.WithLabelValues(k.String())}
	}
	m.planHit, m.planMiss = m.planCache.WithLabelValues("hit"), m.planCache.WithLabelValues("miss")
	reg.MustRegister(m.requests, m.duration, m.queryDuration, m.sqlDuration, m.rows, m.rejected,
		m.timeouts, m.residual, m.streamFailures, m.rowLimit, m.reloads, m.translation, m.planCache)
	return m
}

// poolCollector reports the connection pools of the engine serving now.
type poolCollector struct {
	engine                                     func() Engine
	open, inUse, idle, maxOpen, waits, waitSec *prometheus.Desc
}

func newPoolCollector(engine func() Engine) *poolCollector {
	d := func(name, help string) *prometheus.Desc {
		return prometheus.NewDesc(name, help, []string{"source"}, nil)
	}
	return &poolCollector{
		engine:  engine,
		open:    d("veneer_db_connections_open", "Connections open to the source, in use or idle."),
		inUse:   d("veneer_db_connections_in_use", "Connections running a statement."),
		idle:    d("veneer_db_connections_idle", "Idle connections."),
		maxOpen: d("veneer_db_connections_max", "Most connections the pool opens."),
		waits:   d("veneer_db_connection_waits_total", "Times a statement waited for a connection."),
		waitSec: d("veneer_db_connection_wait_seconds_total", "Time statements waited for a connection."),
	}
}

// Describe implements prometheus.Collector.
func (c *poolCollector) Describe(ch chan<- *prometheus.Desc) {
	for _, d := range []*prometheus.Desc{c.open, c.inUse, c.idle, c.maxOpen, c.waits, c.waitSec} {
		ch <- d
	}
}

// Collect implements prometheus.Collector.
func (c *poolCollector) Collect(ch chan<- prometheus.Metric) {
	ps, ok := c.engine().(PoolStater)
	if !ok {
		return
	}
	for name, st := range ps.PoolStats() {
		ch <- prometheus.MustNewConstMetric(c.open, prometheus.GaugeValue, float64(st.OpenConnections), name)
		ch <- prometheus.MustNewConstMetric(c.inUse, prometheus.GaugeValue, float64(st.InUse), name)
		ch <- prometheus.MustNewConstMetric(c.idle, prometheus.GaugeValue, float64(st.Idle), name)
		ch <- prometheus.MustNewConstMetric(c.maxOpen, prometheus.GaugeValue, float64(st.MaxOpenConnections), name)
		ch <- prometheus.MustNewConstMetric(c.waits, prometheus.CounterValue, float64(st.WaitCount), name)
		ch <- prometheus.MustNewConstMetric(c.waitSec, prometheus.CounterValue, st.WaitDuration.Seconds(), name)
	}
}
