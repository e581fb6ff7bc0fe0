package api

import (
	"strconv"
	"time"

	"github.com/gin-gonic/gin"
	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"
	"github.com/prometheus/client_golang/prometheus/promhttp"
)

// metrics are the server's Prometheus metrics, on a registry of its own so
// that several servers (tests) do not collide. Labels are route templates,
// never ids, to keep cardinality low.
type metrics struct {
	reg      *prometheus.Registry
	requests *prometheus.CounterVec
	duration *prometheus.HistogramVec
}

func newMetrics() *metrics {
	m := &metrics{
		reg: prometheus.NewRegistry(),
		requests: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "rotorwright_http_requests_total", Help: "HTTP requests by route template, method and status code.",
		}, []string{"method", "route", "code"}),
		duration: prometheus.NewHistogramVec(prometheus.HistogramOpts{
			Name: "rotorwright_http_request_duration_seconds", Help: "HTTP request duration by route template and method.",
			Buckets: prometheus.DefBuckets,
		}, []string{"method", "route"}),
	}
	m.reg.MustRegister(m.requests, m.duration, collectors.NewGoCollector(),
		collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}))
	return m
}

// observe records every request after it is served.
func (m *metrics) observe() gin.HandlerFunc {
	return func(c *gin.Context) {
		start := time.Now()
		c.Next()
		route := c.FullPath()
		if route == "" {
			route = "unmatched"
		}
		status := c.Writer.Status()
		if c.GetBool(ctxClientGone) {
			status = StatusClientGone
		}
		m.requests.WithLabelValues(c.Request.Method, route, strconv.Itoa(status)).Inc()
		m.duration.WithLabelValues(c.Request.Method, route).Observe(time.Since(start).Seconds())
	}
}

func (s *Server) metricsHandler(c *gin.Context) {
	promhttp.HandlerFor(s.metrics.reg, promhttp.HandlerOpts{}).ServeHTTP(c.Writer, c.Request)
}
