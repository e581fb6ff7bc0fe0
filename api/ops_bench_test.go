package api_test

import (
	"context"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/internal/scale"
	"github.com/rotorwright/rotorwright/schedule"
	"github.com/rotorwright/rotorwright/store"
)

// BenchmarkOpsFigures times the one statement behind the outbox, due-list
// and airframe gauges (store.OpsFigures, read at most every 15 s) on the
// 500-airframe fleet with its due list computed, against a floor in the
// same run: one airframe read by primary key. Floor and figures alternate
// so drift on the shared machine hits both. On the service's settings:
//
//	ROTORWRIGHT_TEST_CLUSTER=service go test -bench OpsFigures -run '^$' -benchtime 1x ./api
func BenchmarkOpsFigures(b *testing.B) {
	if !pgtest.ServiceSettings() {
		b.Skip("set " + pgtest.EnvCluster + "=service: the figures must come from the service's cluster settings")
	}
	ctx := context.Background()
	pool := pgtest.NewPool(b)
	ids := scale.Seed(b, pool)
	db := store.New(pool)
	prog := schedule.NewProgramme(db, health.New(db))
	if _, err := prog.RecomputeFleet(ctx); err != nil {
		b.Fatal(err)
	}
	figs, err := db.OpsFigures(ctx) // warm
	if err != nil {
		b.Fatal(err)
	}
	b.Logf("due items: %d ok, %d due soon, %d overdue; airframes %d active, %d grounded",
		figs.DueOK, figs.DueSoon, figs.DueOverdue, figs.AirframesActive, figs.AirframesGrounded)
	const rounds = 50
	var floor, read time.Duration
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		for r := range rounds {
			t0 := time.Now()
			var code string
			if err := pool.QueryRow(ctx, `SELECT code FROM airframes WHERE id = $1`, ids[r%len(ids)]).Scan(&code); err != nil {
				b.Fatal(err)
			}
			t1 := time.Now()
			if _, err := db.OpsFigures(ctx); err != nil {
				b.Fatal(err)
			}
			floor, read = floor+t1.Sub(t0), read+time.Since(t1)
		}
	}
	n := float64(b.N * rounds)
	b.ReportMetric(float64(floor.Microseconds())/n, "floor_us")
	b.ReportMetric(float64(read.Microseconds())/n, "figures_us")
	b.ReportMetric(float64(read)/float64(floor), "x_floor")
}

// BenchmarkAccessLog times GET /healthz through the router with the access
// line written (text and JSON, to io.Discard) against the same with the
// line filtered out by level (the floor), alternating in rounds: the cost
// of one access line on the cheapest route.
//
//	go test -bench AccessLog -run '^$' -benchtime 20x ./api
func BenchmarkAccessLog(b *testing.B) {
	db := store.New(pgtest.NewPool(b))
	server := func(h slog.Handler) http.Handler {
		s := api.New(db, slog.New(h), unlimited(api.DefaultLimits), nil)
		b.Cleanup(s.Close)
		return s.Handler()
	}
	floor := server(slog.NewTextHandler(io.Discard, &slog.HandlerOptions{Level: slog.LevelWarn}))
	text := server(slog.NewTextHandler(io.Discard, nil))
	jsonl := server(slog.NewJSONHandler(io.Discard, nil))
	const perRound = 2000
	run := func(h http.Handler) time.Duration {
		t0 := time.Now()
		for range perRound {
			rec := httptest.NewRecorder()
			h.ServeHTTP(rec, httptest.NewRequest("GET", "/healthz", nil))
			if rec.Code != 200 {
				b.Fatalf("healthz: %d", rec.Code)
			}
		}
		return time.Since(t0)
	}
	var f, t, j time.Duration
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		f += run(floor)
		t += run(text)
		j += run(jsonl)
	}
	n := float64(b.N * perRound)
	b.ReportMetric(float64(f.Nanoseconds())/n, "floor_ns")
	b.ReportMetric(float64(t.Nanoseconds())/n, "text_ns")
	b.ReportMetric(float64(j.Nanoseconds())/n, "json_ns")
	b.ReportMetric(float64(t)/float64(f), "text_x_floor")
	b.ReportMetric(float64(j)/float64(f), "json_x_floor")
}
