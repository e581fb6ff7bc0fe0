package api

import (
	"context"
	"sync"
	"time"

	"github.com/jackc/pgx/v5/pgxpool"
	"github.com/prometheus/client_golang/prometheus"

	"github.com/rotorwright/rotorwright/store"
)

// How the figures that need the database are read for a scrape: at most one
// query per figuresTTL (scrapes in between, from one Prometheus or several,
// get the cached figures), and a query that takes longer than
// figuresTimeout is given up, so a scrape waits at most about that long
// even with the database unreachable. Without an answer the figures are
// left out of the scrape (never stale values shown as current) and
// rotorwright_database_figures_errors_total counts the failure.
const (
	figuresTTL     = 15 * time.Second
	figuresTimeout = 2 * time.Second
)

// dbFigures is a collector of the outbox, due-list and register figures.
type dbFigures struct {
	read    func(context.Context) (store.OpsFigures, error)
	state   *dbState // told of each answer or failure
	ttl     time.Duration
	timeout time.Duration
	errors  prometheus.Counter

	mu   sync.Mutex // held by the scrape that refreshes; others wait for its answer
	at   time.Time  // of the last attempt
	last store.OpsFigures
	ok   bool // the last attempt answered

	pending, givenUp, oldest, due, airframes *prometheus.Desc
}

func newDBFigures(read func(context.Context) (store.OpsFigures, error), state *dbState) *dbFigures {
	return &dbFigures{read: read, state: state, ttl: figuresTTL, timeout: figuresTimeout,
		errors: prometheus.NewCounter(prometheus.CounterOpts{Name: "rotorwright_database_figures_errors_total",
			Help: "Failed reads of the figures /metrics takes from the database (they are left out of that scrape)."}),
		pending: prometheus.NewDesc("rotorwright_outbox_pending",
			"Outbox notifications not yet delivered and still to be tried.", nil, nil),
		givenUp: prometheus.NewDesc("rotorwright_outbox_given_up",
			"Outbox notifications given up after the most attempts (set next_attempt_at to retry).", nil, nil),
		oldest: prometheus.NewDesc("rotorwright_outbox_oldest_pending_age_seconds",
			"Age of the oldest outbox notification still to be tried; 0 when none is.", nil, nil),
		due: prometheus.NewDesc("rotorwright_due_items",
			"Items of the computed due list by status (ok, due_soon, overdue).", []string{"status"}, nil),
		airframes: prometheus.NewDesc("rotorwright_airframes",
			"Airframes of the register by status (active, grounded: held or overdue on a grounding rule, retired).", []string{"status"}, nil),
	}
}

func (f *dbFigures) Describe(ch chan<- *prometheus.Desc) {
	f.errors.Describe(ch)
	for _, d := range []*prometheus.Desc{f.pending, f.givenUp, f.oldest, f.due, f.airframes} {
		ch <- d
	}
}

func (f *dbFigures) Collect(ch chan<- prometheus.Metric) {
	figs, ok := f.figures()
	f.errors.Collect(ch)
	if !ok {
		return
	}
	g := func(d *prometheus.Desc, v int64, labels ...string) {
		ch <- prometheus.MustNewConstMetric(d, prometheus.GaugeValue, float64(v), labels...)
	}
	g(f.pending, figs.OutboxPending)
	g(f.givenUp, figs.OutboxGivenUp)
	ch <- prometheus.MustNewConstMetric(f.oldest, prometheus.GaugeValue, figs.OutboxOldestPending.Seconds())
	g(f.due, figs.DueOK, "ok")
	g(f.due, figs.DueSoon, "due_soon")
	g(f.due, figs.DueOverdue, "overdue")
	g(f.airframes, figs.AirframesActive, "active")
	g(f.airframes, figs.AirframesGrounded, "grounded")
	g(f.airframes, figs.AirframesRetired, "retired")
}

// figures returns the cached figures, reading them again once the cache
// has aged past ttl.
func (f *dbFigures) figures() (store.OpsFigures, bool) {
	f.mu.Lock()
	defer f.mu.Unlock()
	if !f.at.IsZero() && time.Since(f.at) < f.ttl {
		return f.last, f.ok
	}
	ctx, cancel := context.WithTimeout(context.Background(), f.timeout)
	defer cancel()
	figs, err := f.read(ctx)
	f.at, f.ok = time.Now(), err == nil
	if err != nil {
		f.errors.Inc()
	} else {
		f.last = figs
	}
	f.state.report(err)
	return f.last, f.ok
}

// poolStats is a collector of the connection pool's own counters, read at
// each scrape (pgxpool.Stat takes the pool's lock briefly; no query).
type poolStats struct {
	pool  *pgxpool.Pool
	descs map[string]*prometheus.Desc
}

func newPoolStats(pool *pgxpool.Pool) *poolStats {
	p := &poolStats{pool: pool, descs: map[string]*prometheus.Desc{}}
	for name, help := range map[string]string{
		"acquired_connections":           "Connections in use now.",
		"idle_connections":               "Idle connections now.",
		"constructing_connections":       "Connections being opened now.",
		"total_connections":              "Connections open or opening now.",
		"max_connections":                "Most connections the pool may hold.",
		"acquires_total":                 "Successful connection acquires.",
		"acquire_duration_seconds_total": "Time spent in successful acquires, waits included.",
		"empty_acquires_total":           "Successful acquires that had to wait for a connection (none idle).",
		"canceled_acquires_total":        "Acquires given up because their context ended.",
		"new_connections_total":          "Connections opened.",
	} {
		p.descs[name] = prometheus.NewDesc("rotorwright_db_pool_"+name, help, nil, nil)
	}
	return p
}

func (p *poolStats) Describe(ch chan<- *prometheus.Desc) {
	for _, d := range p.descs {
		ch <- d
	}
}

func (p *poolStats) Collect(ch chan<- prometheus.Metric) {
	st := p.pool.Stat()
	gauge := func(name string, v float64) {
		ch <- prometheus.MustNewConstMetric(p.descs[name], prometheus.GaugeValue, v)
	}
	counter := func(name string, v float64) {
		ch <- prometheus.MustNewConstMetric(p.descs[name], prometheus.CounterValue, v)
	}
	gauge("acquired_connections", float64(st.AcquiredConns()))
	gauge("idle_connections", float64(st.IdleConns()))
	gauge("constructing_connections", float64(st.ConstructingConns()))
	gauge("total_connections", float64(st.TotalConns()))
	gauge("max_connections", float64(st.MaxConns()))
	counter("acquires_total", float64(st.AcquireCount()))
	counter("acquire_duration_seconds_total", st.AcquireDuration().Seconds())
	counter("empty_acquires_total", float64(st.EmptyAcquireCount()))
	counter("canceled_acquires_total", float64(st.CanceledAcquireCount()))
	counter("new_connections_total", float64(st.NewConnsCount()))
}
