package server

import "github.com/prometheus/client_golang/prometheus"

// metrics are the server's own Prometheus metrics.
type metrics struct {
	requests       *prometheus.CounterVec
	duration       *prometheus.HistogramVec
	streamFailures prometheus.Counter
}

func newMetrics(reg prometheus.Registerer) *metrics {
	m := &metrics{
		requests: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "veneer_http_requests_total",
			Help: "HTTP requests by route and status (0: aborted while streaming).",
		}, []string{"route", "status"}),
		duration: prometheus.NewHistogramVec(prometheus.HistogramOpts{
			Name:    "veneer_http_request_duration_seconds",
			Help:    "Time to answer an HTTP request, streaming included.",
			Buckets: prometheus.ExponentialBuckets(0.001, 4, 9),
		}, []string{"route"}),
		streamFailures: prometheus.NewCounter(prometheus.CounterOpts{
			Name: "veneer_stream_failures_total",
			Help: "Responses aborted because the query failed after streaming began.",
		}),
	}
	reg.MustRegister(m.requests, m.duration, m.streamFailures)
	return m
}
