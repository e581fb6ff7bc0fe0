package api

import (
	"crypto/subtle"
	"encoding/json"
	"io"
	"mime"
	"net/http"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"time"

	"github.com/gin-gonic/gin"
	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"
	"github.com/prometheus/client_golang/prometheus/promhttp"

	"github.com/rotorwright/rotorwright/fleet"
)

// Metrics are the server's Prometheus metrics, on a registry of its own so
// that several servers (tests) do not collide. Labels are route templates,
// job names, fixed outcomes and problem codes, never ids, to keep
// cardinality low. The command wires the scheduled jobs and the webhook
// deliverer to them through JobRun and Delivery.
type Metrics struct {
	reg      *prometheus.Registry
	requests *prometheus.CounterVec
	duration *prometheus.HistogramVec
	seriesMu sync.RWMutex
	resolved map[seriesKey]*requestSeries // see series

	ingests        *prometheus.CounterVec   // outcome
	ingestRefusals *prometheus.CounterVec   // reason: the problem's code
	ingestBytes    prometheus.Counter       // request body bytes read
	ingestDuration *prometheus.HistogramVec // outcome

	recomputes        *prometheus.CounterVec   // scope, outcome
	recomputeDuration *prometheus.HistogramVec // scope

	jobRuns        *prometheus.CounterVec   // job, status
	jobDuration    *prometheus.HistogramVec // job (runs that ran: ok or failed)
	jobLastSuccess *prometheus.GaugeVec     // job

	deliveries  *prometheus.CounterVec // outcome
	retries     prometheus.Counter     // attempts after a row's first
	webhookURLs prometheus.Gauge

	dbUp prometheus.Gauge // kept by dbState
}

// slowBuckets are for work that takes from milliseconds to minutes (an
// upload, a recompute, a scheduled job), where DefBuckets stop at 10 s.
var slowBuckets = []float64{.005, .01, .025, .05, .1, .25, .5, 1, 2.5, 5, 10, 30, 60, 120, 300, 600}

func newMetrics() *Metrics {
	m := &Metrics{
		reg:      prometheus.NewRegistry(),
		resolved: map[seriesKey]*requestSeries{},
		requests: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "rotorwright_http_requests_total", Help: "HTTP requests by route template, method and status code.",
		}, []string{"method", "route", "code"}),
		duration: prometheus.NewHistogramVec(prometheus.HistogramOpts{
			Name: "rotorwright_http_request_duration_seconds", Help: "HTTP request duration by route template and method.",
			Buckets: prometheus.DefBuckets,
		}, []string{"method", "route"}),
		ingests: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "rotorwright_ingest_uploads_total",
			Help: "Flight-log uploads by outcome: created, duplicate (the log was already recorded), refused (4xx, 503), failed (500), abandoned (the client went away).",
		}, []string{"outcome"}),
		ingestRefusals: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "rotorwright_ingest_refusals_total", Help: "Refused flight-log uploads by reason (the problem code: invalid, unprocessable, too_large, conflict, unavailable...).",
		}, []string{"reason"}),
		ingestBytes: prometheus.NewCounter(prometheus.CounterOpts{
			Name: "rotorwright_ingest_bytes_total", Help: "Bytes of flight-log upload request bodies read (multipart, as sent: gzip stays compressed).",
		}),
		ingestDuration: prometheus.NewHistogramVec(prometheus.HistogramOpts{
			Name: "rotorwright_ingest_duration_seconds", Help: "Flight-log upload time in the server, by outcome.", Buckets: slowBuckets,
		}, []string{"outcome"}),
		recomputes: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "rotorwright_recompute_runs_total",
			Help: "Verdict and due-list recomputes the API runs, by scope (after_flight, after_record, fleet) and outcome (ok, failed).",
		}, []string{"scope", "outcome"}),
		recomputeDuration: prometheus.NewHistogramVec(prometheus.HistogramOpts{
			Name: "rotorwright_recompute_duration_seconds", Help: "Recompute time by scope.", Buckets: slowBuckets,
		}, []string{"scope"}),
		jobRuns: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "rotorwright_job_runs_total", Help: "Scheduled-job run attempts by job and status (ok, failed, skipped: another replica ran it).",
		}, []string{"job", "status"}),
		jobDuration: prometheus.NewHistogramVec(prometheus.HistogramOpts{
			Name: "rotorwright_job_duration_seconds", Help: "Scheduled-job run time by job (ok and failed runs).", Buckets: slowBuckets,
		}, []string{"job"}),
		jobLastSuccess: prometheus.NewGaugeVec(prometheus.GaugeOpts{
			Name: "rotorwright_job_last_success_timestamp_seconds", Help: "Unix time of the last ok run of each job in this process.",
		}, []string{"job"}),
		deliveries: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "rotorwright_outbox_deliveries_total",
			Help: "Webhook delivery attempts on outbox rows by outcome: delivered, failed (retried later), given_up.",
		}, []string{"outcome"}),
		retries: prometheus.NewCounter(prometheus.CounterOpts{
			Name: "rotorwright_outbox_retries_total", Help: "Webhook delivery attempts after a row's first.",
		}),
		webhookURLs: prometheus.NewGauge(prometheus.GaugeOpts{
			Name: "rotorwright_webhook_urls", Help: "Webhook URLs configured; with none the outbox keeps its notifications undelivered.",
		}),
		dbUp: prometheus.NewGauge(prometheus.GaugeOpts{
			Name: "rotorwright_database_up", Help: "1 while the database answers, 0 from a failed check until one succeeds.",
		}),
	}
	m.dbUp.Set(1)
	// Every bounded label value starts at 0, so a series exists (and rate()
	// and the alert rules see it) before its first event.
	for _, o := range []string{"created", "duplicate", "refused", "failed", "abandoned"} {
		m.ingests.WithLabelValues(o)
		m.ingestDuration.WithLabelValues(o)
	}
	for _, scope := range []string{"after_flight", "after_record", "fleet"} {
		m.recomputes.WithLabelValues(scope, "ok")
		m.recomputes.WithLabelValues(scope, "failed")
		m.recomputeDuration.WithLabelValues(scope)
	}
	for _, o := range []string{"delivered", "failed", "given_up"} {
		m.deliveries.WithLabelValues(o)
	}
	m.reg.MustRegister(m.requests, m.duration, m.ingests, m.ingestRefusals, m.ingestBytes, m.ingestDuration,
		m.recomputes, m.recomputeDuration, m.jobRuns, m.jobDuration, m.jobLastSuccess, m.deliveries, m.retries,
		m.webhookURLs, m.dbUp, collectors.NewGoCollector(), collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}))
	return m
}

// Metrics returns the server's metrics, for the command to hook the
// scheduled jobs and the webhook deliverer to.
func (s *Server) Metrics() *Metrics { return s.metrics }

// InitJob starts a registered job's series at 0, so its failures show as
// an increase from 0 (the command calls it for each job it registers).
func (m *Metrics) InitJob(job string) {
	for _, st := range []string{"ok", "failed", "skipped"} {
		m.jobRuns.WithLabelValues(job, st)
	}
	m.jobDuration.WithLabelValues(job)
}

// JobRun records one scheduled-job attempt (schedule.Config.Observe).
func (m *Metrics) JobRun(job, status string, took time.Duration) {
	m.jobRuns.WithLabelValues(job, status).Inc()
	if status == "skipped" {
		return // another replica ran it: no work here to time
	}
	m.jobDuration.WithLabelValues(job).Observe(took.Seconds())
	if status == "ok" {
		m.jobLastSuccess.WithLabelValues(job).SetToCurrentTime()
	}
}

// Delivery records one webhook delivery attempt (schedule.Deliverer.Observe).
func (m *Metrics) Delivery(outcome string, attempt int) {
	m.deliveries.WithLabelValues(outcome).Inc()
	if attempt > 1 {
		m.retries.Inc()
	}
}

// SetWebhookURLs records how many webhook URLs are configured.
func (m *Metrics) SetWebhookURLs(n int) { m.webhookURLs.Set(float64(n)) }

// recompute records one recompute the API ran.
func (m *Metrics) recompute(scope string, start time.Time, err error) {
	outcome := "ok"
	if err != nil {
		outcome = "failed"
	}
	m.recomputes.WithLabelValues(scope, outcome).Inc()
	m.recomputeDuration.WithLabelValues(scope).Observe(time.Since(start).Seconds())
}

// observeIngest counts log uploads (multipart POST /v1/flights; a flight
// sent as JSON has no log): outcome, refusal reason, body bytes read and
// time. It sits before the upload cap, so uploads refused as busy count.
func (m *Metrics) observeIngest() gin.HandlerFunc {
	return func(c *gin.Context) {
		if mt, _, _ := mime.ParseMediaType(c.GetHeader("Content-Type")); mt != "multipart/form-data" {
			c.Next()
			return
		}
		start := time.Now()
		body := &countingBody{ReadCloser: c.Request.Body}
		c.Request.Body = body
		c.Next()
		status := c.Writer.Status()
		outcome := "refused"
		switch {
		case c.GetBool(ctxClientGone):
			outcome = "abandoned"
		case status == http.StatusCreated:
			outcome = "created"
		case status == http.StatusOK:
			outcome = "duplicate"
		case status == http.StatusInternalServerError:
			outcome = "failed"
		default:
			reason := c.GetString(ctxProblemCode)
			if reason == "" {
				reason = "other" // answered without a problem: not expected, but bounded
			}
			m.ingestRefusals.WithLabelValues(reason).Inc()
		}
		m.ingests.WithLabelValues(outcome).Inc()
		m.ingestBytes.Add(float64(body.n.Load()))
		m.ingestDuration.WithLabelValues(outcome).Observe(time.Since(start).Seconds())
	}
}

// countingBody counts the bytes a handler reads from a request body.
type countingBody struct {
	io.ReadCloser
	n atomic.Int64
}

func (b *countingBody) Read(p []byte) (int, error) {
	n, err := b.ReadCloser.Read(p)
	b.n.Add(int64(n))
	return n, err
}

// observe records every request after it is served.
func (m *Metrics) observe() gin.HandlerFunc {
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
		rs := m.series(method, route, status)
		rs.requests.Inc()
		rs.duration.Observe(time.Since(start).Seconds())
	}
}

// seriesKey names one request series: the labels of requests and duration.
type seriesKey struct {
	method, route string
	status        int
}

// requestSeries are the children of requests and duration for one
// seriesKey, resolved once: WithLabelValues hashes the labels and formats
// the status on every call.
type requestSeries struct {
	requests prometheus.Counter
	duration prometheus.Observer
}

// series returns the request series of one method, route and status,
// resolving it on first use; the keys are the labels' bounded values.
func (m *Metrics) series(method, route string, status int) *requestSeries {
	k := seriesKey{method, route, status}
	m.seriesMu.RLock()
	rs := m.resolved[k]
	m.seriesMu.RUnlock()
	if rs != nil {
		return rs
	}
	m.seriesMu.Lock()
	defer m.seriesMu.Unlock()
	if rs = m.resolved[k]; rs == nil {
		rs = &requestSeries{requests: m.requests.WithLabelValues(method, route, strconv.Itoa(status)),
			duration: m.duration.WithLabelValues(method, route)}
		m.resolved[k] = rs
	}
	return rs
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
