package api

import (
	"crypto/subtle"
	"encoding/json"
	"net/http"
	"strconv"
	"strings"
	"time"

	"github.com/gin-gonic/gin"
	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"
	"github.com/prometheus/client_golang/prometheus/promhttp"

	"github.com/rotorwright/rotorwright/fleet"
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
		method := c.Request.Method
		if !knownMethods[method] {
			method = "other" // a client may send any method: it must not add a series
		}
		m.requests.WithLabelValues(method, route, strconv.Itoa(status)).Inc()
		m.duration.WithLabelValues(method, route).Observe(time.Since(start).Seconds())
	}
}

// knownMethods are the methods that get their own label.
var knownMethods = map[string]bool{"GET": true, "HEAD": true, "POST": true, "PUT": true, "PATCH": true,
	"DELETE": true, "OPTIONS": true}

// metricsHandler serves /metrics on the API's address: 404 when metrics
// are served on an address of their own, 401 without the metrics token
// when one is set.
func (s *Server) metricsHandler(c *gin.Context) {
	if s.limits.MetricsElsewhere {
		s.fail(c, fleet.Errorf(fleet.ENOTFOUND, "metrics are served on another address"))
		return
	}
	s.MetricsHandler().ServeHTTP(c.Writer, c.Request)
}

// MetricsHandler serves the Prometheus metrics, asking for the metrics
// token when one is set.
func (s *Server) MetricsHandler() http.Handler {
	h := promhttp.HandlerFor(s.metrics.reg, promhttp.HandlerOpts{})
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		if want := s.limits.MetricsToken; want != "" {
			got, _ := strings.CutPrefix(r.Header.Get("Authorization"), "Bearer ")
			if subtle.ConstantTimeCompare([]byte(got), []byte(want)) != 1 {
				w.Header().Set("WWW-Authenticate", `Bearer realm="rotorwright metrics"`)
				w.Header().Set("Content-Type", "application/problem+json")
				w.WriteHeader(http.StatusUnauthorized)
				_ = json.NewEncoder(w).Encode(Problem{Type: "/problems/unauthorized", Title: "Unauthorized", Status: 401,
					Detail: "send Authorization: Bearer <metrics token>", Instance: r.URL.Path, Code: fleet.EUNAUTHORIZED})
				return
			}
		}
		h.ServeHTTP(w, r)
	})
}
