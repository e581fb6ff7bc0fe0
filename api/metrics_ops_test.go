package api_test

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"net/http"
	"net/http/httptest"
	"sync/atomic"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"
	dto "github.com/prometheus/client_model/go"
	"github.com/prometheus/common/expfmt"
	"github.com/prometheus/common/model"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/schedule"
)

// opsEnv is an env whose server the test holds, with the database figures
// read afresh at every scrape.
func opsEnv(t *testing.T) (*env, *api.Server) {
	e := newEnv(t)
	srv := api.New(e.db, e.log, unlimited(api.DefaultLimits), nil)
	t.Cleanup(srv.Close)
	api.SetFiguresTTL(srv, 0)
	e.h = srv.Handler()
	return e, srv
}

// families is a parsed scrape.
type families map[string]*dto.MetricFamily

// scrape reads /metrics through the router (the response checked against
// the OpenAPI document) and parses the text format.
func (e *env) scrape() families {
	e.t.Helper()
	r := e.call("GET", "/metrics", "", nil)
	if r.Status != 200 {
		e.t.Fatalf("/metrics: %d %s", r.Status, r.Body)
	}
	p := expfmt.NewTextParser(model.UTF8Validation)
	fams, err := p.TextToMetricFamilies(bytes.NewReader(r.Body))
	if err != nil {
		e.t.Fatalf("parse /metrics: %v", err)
	}
	return fams
}

// get is the value of the series of family name with these label pairs (a
// histogram's sample count); ok is false when there is no such series.
func (f families) get(name string, labels ...string) (v float64, ok bool) {
	fam := f[name]
	if fam == nil {
		return 0, false
	}
next:
	for _, m := range fam.Metric {
		have := map[string]string{}
		for _, l := range m.Label {
			have[l.GetName()] = l.GetValue()
		}
		for i := 0; i+1 < len(labels); i += 2 {
			if have[labels[i]] != labels[i+1] {
				continue next
			}
		}
		switch {
		case m.Counter != nil:
			return m.Counter.GetValue(), true
		case m.Gauge != nil:
			return m.Gauge.GetValue(), true
		case m.Histogram != nil:
			return float64(m.Histogram.GetSampleCount()), true
		case m.Untyped != nil:
			return m.Untyped.GetValue(), true
		}
	}
	return 0, false
}

// want fails unless the series exists with the value.
func (f families) want(t *testing.T, v float64, name string, labels ...string) {
	t.Helper()
	got, ok := f.get(name, labels...)
	if !ok {
		t.Fatalf("%s%v: no such series", name, labels)
	}
	if got != v {
		t.Fatalf("%s%v = %g, want %g", name, labels, got, v)
	}
}

// Uploads move the ingest counters: outcome, refusal reason, body bytes,
// time; each new flight runs one after-flight recompute.
func TestMetricsIngest(t *testing.T) {
	e, _ := opsEnv(t)
	a, _, spec := e.simFleet()
	f := e.scrape()
	for _, o := range []string{"created", "duplicate", "refused", "failed"} {
		f.want(t, 0, "rotorwright_ingest_uploads_total", "outcome", o)
	}
	f.want(t, 0, "rotorwright_ingest_bytes_total")
	log, _ := genLog(t, spec)
	flight := map[string]any{"pilot": "test pilot", "site_elevation_m": spec.SiteElevationM}
	if r := e.upload(flight, log, pilot); r.Status != 201 {
		t.Fatalf("upload: %d %s", r.Status, r.Body)
	}
	if r := e.upload(flight, log, pilot); r.Status != 200 {
		t.Fatalf("upload again: %d %s", r.Status, r.Body)
	}
	// Every byte of both bodies is read (multipart boundaries have a fixed
	// length, so a body built again has the same size).
	body, _ := multipartBody(t, flight, log)
	f = e.scrape()
	f.want(t, 1, "rotorwright_ingest_uploads_total", "outcome", "created")
	f.want(t, 1, "rotorwright_ingest_uploads_total", "outcome", "duplicate")
	f.want(t, float64(2*len(body)), "rotorwright_ingest_bytes_total")
	f.want(t, 1, "rotorwright_ingest_duration_seconds", "outcome", "created")
	f.want(t, 1, "rotorwright_recompute_runs_total", "scope", "after_flight", "outcome", "ok")
	f.want(t, 1, "rotorwright_recompute_duration_seconds", "scope", "after_flight")

	bad := map[string]any{"airframe_id": a.ID, "pilot": "test pilot"}
	if r := e.upload(bad, []byte("# start: 2026-05-04T09:30:00Z\nt_s,pack_v\n0,16.8\n"), pilot); r.Status != 422 {
		t.Fatalf("log without pack_a: %d", r.Status)
	}
	if r := e.upload(bad, nil, pilot); r.Status != 400 {
		t.Fatalf("no log part: %d", r.Status)
	}
	f = e.scrape()
	f.want(t, 2, "rotorwright_ingest_uploads_total", "outcome", "refused")
	f.want(t, 1, "rotorwright_ingest_refusals_total", "reason", "unprocessable")
	f.want(t, 1, "rotorwright_ingest_refusals_total", "reason", "invalid")
	f.want(t, 1, "rotorwright_ingest_uploads_total", "outcome", "created")
	if n, _ := f.get("rotorwright_ingest_bytes_total"); n <= float64(2*len(body)) {
		t.Fatalf("refused uploads' bytes not counted: %g", n)
	}
	// A flight sent as JSON carries no log: not an upload.
	if r := e.call("POST", "/v1/flights", pilot, map[string]any{}); r.Status != 400 {
		t.Fatalf("empty JSON flight: %d", r.Status)
	}
	e.scrape().want(t, 2, "rotorwright_ingest_uploads_total", "outcome", "refused")
}

// Scheduled-job runs are counted by job and status and timed; the last
// success is stamped.
func TestMetricsScheduledJobs(t *testing.T) {
	e, srv := opsEnv(t)
	m := srv.Metrics()
	r, err := schedule.NewRunner(e.db.Pool(), schedule.Config{Logger: e.log, Observe: m.JobRun})
	if err != nil {
		t.Fatal(err)
	}
	ok := func(context.Context, pgx.Tx) (map[string]int, error) { return map[string]int{"n": 1}, nil }
	broken := func(context.Context, pgx.Tx) (map[string]int, error) { return nil, errors.New("no good") }
	if err := r.Register("recompute", "", ok); err != nil {
		t.Fatal(err)
	}
	if err := r.Register("nightly", "", broken); err != nil {
		t.Fatal(err)
	}
	m.InitJob("recompute")
	m.InitJob("nightly")
	f := e.scrape()
	f.want(t, 0, "rotorwright_job_runs_total", "job", "nightly", "status", "failed")
	if _, ok := f.get("rotorwright_job_last_success_timestamp_seconds", "job", "recompute"); ok {
		t.Fatal("a last success before any run")
	}
	ctx := context.Background()
	before := time.Now()
	if _, err := r.RunNow(ctx, "recompute"); err != nil {
		t.Fatal(err)
	}
	if _, err := r.RunNow(ctx, "nightly"); err == nil {
		t.Fatal("the broken job did not fail")
	}
	// Another replica holding the job's lock: the run is skipped.
	conn, err := e.db.Pool().Acquire(ctx)
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Release()
	if _, err := conn.Exec(ctx, `SELECT pg_advisory_lock($1)`, schedule.LockKey("recompute")); err != nil {
		t.Fatal(err)
	}
	if res, err := r.RunNow(ctx, "recompute"); err != nil || res.Status != schedule.StatusSkipped {
		t.Fatalf("run under another's lock: %+v %v", res, err)
	}
	f = e.scrape()
	f.want(t, 1, "rotorwright_job_runs_total", "job", "recompute", "status", "ok")
	f.want(t, 1, "rotorwright_job_runs_total", "job", "recompute", "status", "skipped")
	f.want(t, 1, "rotorwright_job_runs_total", "job", "nightly", "status", "failed")
	f.want(t, 0, "rotorwright_job_runs_total", "job", "nightly", "status", "ok")
	f.want(t, 1, "rotorwright_job_duration_seconds", "job", "recompute") // the skipped run is not timed
	f.want(t, 1, "rotorwright_job_duration_seconds", "job", "nightly")
	at, _ := f.get("rotorwright_job_last_success_timestamp_seconds", "job", "recompute")
	if at < float64(before.Unix()) || at > float64(time.Now().Unix()+1) {
		t.Fatalf("last success at %g, ran between %d and now", at, before.Unix())
	}
	if _, ok := f.get("rotorwright_job_last_success_timestamp_seconds", "job", "nightly"); ok {
		t.Fatal("a last success of a job that only failed")
	}
}

// The outbox's depth and oldest age come from the database; deliveries,
// retries and give-ups from the deliverer.
func TestMetricsOutbox(t *testing.T) {
	e, srv := opsEnv(t)
	ctx := context.Background()
	enqueue := func(subject string, age time.Duration) {
		tx, err := e.db.Pool().Begin(ctx)
		if err != nil {
			t.Fatal(err)
		}
		defer tx.Rollback(ctx)
		if err := schedule.Enqueue(ctx, tx, "due_overdue", subject, map[string]any{}); err != nil {
			t.Fatal(err)
		}
		if _, err := tx.Exec(ctx, `UPDATE outbox SET created_at = now() - $2::interval WHERE subject = $1`,
			subject, fmt.Sprintf("%d seconds", int(age.Seconds()))); err != nil {
			t.Fatal(err)
		}
		if err := tx.Commit(ctx); err != nil {
			t.Fatal(err)
		}
	}
	f := e.scrape()
	f.want(t, 0, "rotorwright_outbox_pending")
	f.want(t, 0, "rotorwright_outbox_oldest_pending_age_seconds")
	enqueue("MX-01", time.Hour)
	f = e.scrape()
	f.want(t, 1, "rotorwright_outbox_pending")
	if age, _ := f.get("rotorwright_outbox_oldest_pending_age_seconds"); age < 3600 || age > 3600+60 {
		t.Fatalf("oldest pending age %g s, the row was made an hour old", age)
	}
	var calls atomic.Int32
	rc := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, _ *http.Request) {
		if calls.Add(1) == 1 {
			w.WriteHeader(http.StatusServiceUnavailable)
		}
	}))
	defer rc.Close()
	d := &schedule.Deliverer{Pool: e.db.Pool(), URLs: []string{rc.URL}, Logger: e.log, Observe: srv.Metrics().Delivery,
		Client: schedule.NewClient(schedule.Policy{AllowLoopback: true}, 2*time.Second), Backoff: func(int) time.Duration { return 0 }}
	for i := range 2 {
		if _, _, err := d.DeliverOnce(ctx); err != nil {
			t.Fatalf("pass %d: %v", i, err)
		}
	}
	f = e.scrape()
	f.want(t, 1, "rotorwright_outbox_deliveries_total", "outcome", "failed")
	f.want(t, 1, "rotorwright_outbox_deliveries_total", "outcome", "delivered")
	f.want(t, 1, "rotorwright_outbox_retries_total")
	f.want(t, 0, "rotorwright_outbox_pending")
	f.want(t, 0, "rotorwright_outbox_oldest_pending_age_seconds")

	// A receiver that always fails, one attempt allowed: given up.
	down := httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, _ *http.Request) { w.WriteHeader(500) }))
	defer down.Close()
	enqueue("MX-02", 0)
	d.URLs, d.MaxAttempts = []string{down.URL}, 1
	if _, _, err := d.DeliverOnce(ctx); err != nil {
		t.Fatal(err)
	}
	f = e.scrape()
	f.want(t, 1, "rotorwright_outbox_deliveries_total", "outcome", "given_up")
	f.want(t, 1, "rotorwright_outbox_given_up")
	f.want(t, 0, "rotorwright_outbox_pending")
}

// Due items by status match the due list the API serves; airframes by
// status match what the API says of each (grounded by a hold, and by an
// overdue grounding rule).
func TestMetricsDueAndAirframes(t *testing.T) {
	e, _ := opsEnv(t)
	f := e.scrape()
	for _, st := range []string{"active", "grounded", "retired"} {
		f.want(t, 0, "rotorwright_airframes", "status", st)
	}
	a, b, c, d := e.quad("MX-01"), e.quad("MX-02"), e.quad("MX-03"), e.quad("MX-04")
	e.fitQuad(a, "A", "", time.Now().Add(-24*time.Hour))
	// Motors overdue after 2 flights (grounding); propellers due soon at
	// half of 3 flights: two flights give all three statuses.
	for _, rule := range []map[string]any{
		{"name": "motor check every 2 flights", "applies_to": "motor", "flights": 2, "grounding": true, "action": "replace"},
		{"name": "propeller check every 3 flights", "applies_to": "propeller", "flights": 3, "warn_at": 0.5, "action": "inspect"},
	} {
		if r := e.call("POST", "/v1/service-rules", admin, rule); r.Status != 201 {
			t.Fatalf("rule: %d %s", r.Status, r.Body)
		}
	}
	pack := e.create("/v1/parts", map[string]any{"kind": "pack", "serial": "MX-PK", "part_number": "PK-4S",
		"specs": map[string]any{"chemistry": "lipo", "cells_s": 4, "cells_p": 1, "rated_mah": 5000}})
	for _, h := range []int{10, 8} {
		at := time.Now().Add(-time.Duration(h) * time.Hour).UTC().Truncate(time.Second)
		if r := e.call("POST", "/v1/flights", pilot, map[string]any{"airframe_id": a.ID, "pilot": "test pilot",
			"takeoff_at": at, "landing_at": at.Add(20 * time.Minute), "packs": []string{pack.ID}}); r.Status != 201 {
			t.Fatalf("flight: %d %s", r.Status, r.Body)
		}
	}
	tag := e.call("GET", "/v1/airframes/"+b.ID, fleet.RoleViewer, nil).Header.Get("ETag")
	var got idBody
	e.call("PATCH", "/v1/airframes/"+b.ID, tech, map[string]any{"hold_reason": "arm crack"}, "If-Match", tag).decode(t, &got)
	if got.Status != "grounded" {
		t.Fatalf("held airframe is %q", got.Status)
	}
	tag = e.call("GET", "/v1/airframes/"+c.ID, fleet.RoleViewer, nil).Header.Get("ETag")
	if r := e.call("DELETE", "/v1/airframes/"+c.ID, admin, nil, "If-Match", tag); r.Status != 200 {
		t.Fatalf("retire: %d %s", r.Status, r.Body)
	}
	byAirframe := map[string]float64{}
	for _, id := range []string{a.ID, b.ID, c.ID, d.ID} {
		var af idBody
		e.call("GET", "/v1/airframes/"+id, fleet.RoleViewer, nil).decode(t, &af)
		byAirframe[af.Status]++
	}
	if byAirframe["grounded"] != 2 || byAirframe["active"] != 1 || byAirframe["retired"] != 1 {
		t.Fatalf("the API's airframe statuses %v, want 2 grounded (hold, overdue rule), 1 active, 1 retired", byAirframe)
	}
	f = e.scrape()
	for st, n := range byAirframe {
		f.want(t, n, "rotorwright_airframes", "status", st)
	}

	var due struct {
		Items []struct {
			Status string `json:"status"`
		} `json:"items"`
	}
	e.call("GET", "/v1/due", fleet.RoleViewer, nil).decode(t, &due)
	byStatus := map[string]float64{}
	for _, it := range due.Items {
		byStatus[it.Status]++
	}
	if byStatus[fleet.DueOK] == 0 || byStatus[fleet.DueSoon] == 0 || byStatus[fleet.DueOverdue] == 0 ||
		byStatus[fleet.DueSoon] == byStatus[fleet.DueOverdue] {
		t.Fatalf("the due list %v should hold every status, due_soon and overdue in different numbers", byStatus)
	}
	for _, st := range []string{fleet.DueOK, fleet.DueSoon, fleet.DueOverdue} {
		f.want(t, byStatus[st], "rotorwright_due_items", "status", st)
	}
}

// The pool's figures come from pgxpool's own counters.
func TestMetricsPool(t *testing.T) {
	e, _ := opsEnv(t)
	f := e.scrape()
	f.want(t, float64(e.db.Pool().Config().MaxConns), "rotorwright_db_pool_max_connections")
	n0, _ := f.get("rotorwright_db_pool_acquires_total")
	e.quad("MX-01")
	f = e.scrape()
	if n1, _ := f.get("rotorwright_db_pool_acquires_total"); n1 <= n0 {
		t.Fatalf("acquires %g then %g after a write", n0, n1)
	}
	for _, name := range []string{"rotorwright_db_pool_acquired_connections", "rotorwright_db_pool_idle_connections",
		"rotorwright_db_pool_total_connections", "rotorwright_db_pool_acquire_duration_seconds_total",
		"rotorwright_db_pool_empty_acquires_total", "rotorwright_db_pool_canceled_acquires_total",
		"rotorwright_db_pool_new_connections_total", "rotorwright_db_pool_constructing_connections"} {
		if _, ok := f.get(name); !ok {
			t.Errorf("no %s", name)
		}
	}
}
