package web_test

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"math/rand/v2"
	"net/http"
	"net/http/httptest"
	"net/url"
	"sort"
	"strings"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgtype"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/schedule"
	"github.com/rotorwright/rotorwright/store"
)

// pageTimer times board pages through the real router in process (server
// time only: no network, no browser), signed in.
type pageTimer struct {
	h      http.Handler
	cookie string
	token  string
}

func newPageTimer(b *testing.B, db *store.DB) *pageTimer {
	b.Helper()
	_, token, err := db.CreateKey(store.WithActor(context.Background(), store.Actor{Name: "bench"}), "bench", fleet.RoleViewer)
	if err != nil {
		b.Fatal(err)
	}
	limits := api.DefaultLimits // a benchmark loop outruns the per-key rate
	limits.RatePerKey, limits.RatePerAddr = -1, -1
	h := api.New(db, slog.New(slog.NewTextHandler(io.Discard, nil)), limits, nil).Handler()
	req := httptest.NewRequest("POST", "/sign-in", strings.NewReader(url.Values{"token": {token}}.Encode()))
	req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	rec := httptest.NewRecorder()
	h.ServeHTTP(rec, req)
	for _, c := range rec.Result().Cookies() {
		if c.Name == "rw_session" {
			return &pageTimer{h: h, cookie: c.Name + "=" + c.Value, token: token}
		}
	}
	b.Fatalf("sign-in: %d", rec.Code)
	return nil
}

// median serves path n times and returns the median server time.
func (p *pageTimer) median(b *testing.B, path string, bearer bool, n int) time.Duration {
	b.Helper()
	d := make([]time.Duration, n)
	for i := range d {
		req := httptest.NewRequest("GET", path, nil)
		if bearer {
			req.Header.Set("Authorization", "Bearer "+p.token)
		} else {
			req.Header.Set("Cookie", p.cookie)
		}
		rec := httptest.NewRecorder()
		t0 := time.Now()
		p.h.ServeHTTP(rec, req)
		d[i] = time.Since(t0)
		if rec.Code != 200 {
			b.Fatalf("GET %s: %d %s", path, rec.Code, rec.Body.String())
		}
	}
	sort.Slice(d, func(i, j int) bool { return d[i] < d[j] })
	return d[n/2]
}

// BenchmarkBoardPages times every board page on the demo fleet against the
// floor of a one-row API read through the same router, in one run:
// go test -bench BoardPages -run '^$' -benchtime 1x ./web
func BenchmarkBoardPages(b *testing.B) {
	s := newService(b, 2)
	p := newPageTimer(b, s.db)
	var af struct {
		Items []struct{ ID, Code string } `json:"items"`
	}
	s.get(b, "/v1/airframes?limit=500", &af)
	pages := boardPages(b, s)
	for b.Loop() {
		const n = 15
		floor := p.median(b, "/v1/airframes/"+af.Items[0].ID, true, n)
		b.ReportMetric(float64(floor.Microseconds())/1000, "floor-ms")
		for _, pg := range pages {
			d := p.median(b, pg.path, false, n)
			b.ReportMetric(float64(d.Microseconds())/1000, pg.name+"-ms")
			b.Logf("%-18s %7.1f ms  (%.1f x the one-row read, %s)", pg.name, float64(d.Microseconds())/1000,
				float64(d)/float64(floor), pg.path)
		}
		b.Logf("floor: one-row API read %.2f ms", float64(floor.Microseconds())/1000)
	}
}

// The fleet page for the large fleet of issue 12: 300 quads, fully fitted,
// 100 flights each, some held or with an open hard landing.
const (
	benchAirframes = 300
	benchFlights   = 100
)

func seedFleet(b *testing.B) *store.DB {
	b.Helper()
	ctx := context.Background()
	db := store.New(pgtest.NewPool(b))
	pool := db.Pool()
	rng := rand.New(rand.NewPCG(7, 8))
	start := time.Now().AddDate(0, -6, 0).UTC().Truncate(time.Hour)
	since := pgtype.Range[pgtype.Timestamptz]{Lower: pgtype.Timestamptz{Time: start, Valid: true},
		LowerType: pgtype.Inclusive, UpperType: pgtype.Unbounded, Valid: true}
	var afs, parts, fits, flights, events [][]any
	n := 0
	for i := 0; i < benchAirframes; i++ {
		id := uuid.Must(uuid.NewV7()).String()
		var hold *string
		if i%25 == 0 {
			h := "awaiting parts"
			hold = &h
		}
		afs = append(afs, []any{id, fmt.Sprintf("BF-%03d", i), fmt.Sprintf("Model %d", i%3), "quad-x", 6, hold})
		for k, rot := range []string{"ccw", "cw", "ccw", "cw"} {
			for _, kind := range []string{"motor", "propeller"} {
				n++
				pid := uuid.Must(uuid.NewV7()).String()
				parts = append(parts, []any{pid, kind, fmt.Sprintf("S-%06d", n), "PN-" + kind, `{"rotation":"` + rot + `"}`, "fitted"})
				fits = append(fits, []any{uuid.Must(uuid.NewV7()).String(), pid, id, kind, fmt.Sprintf("m%d", k+1), since})
			}
		}
		t := start
		for j := 0; j < benchFlights; j++ {
			t = t.Add(time.Duration(60+rng.IntN(1800)) * time.Minute)
			flights = append(flights, []any{uuid.Must(uuid.NewV7()).String(), id, "pilot", t, t.Add(20 * time.Minute)})
		}
		if i%30 == 7 {
			events = append(events, []any{uuid.Must(uuid.NewV7()).String(), t, "hard_landing", "critical", id, "bench"})
		}
	}
	for _, c := range []struct {
		table string
		cols  []string
		rows  [][]any
	}{
		{"airframes", []string{"id", "code", "model", "layout", "cells_s", "hold_reason"}, afs},
		{"parts", []string{"id", "kind", "serial", "part_number", "specs", "status"}, parts},
		{"fits", []string{"id", "part_id", "airframe_id", "kind", "position", "during"}, fits},
		{"flights", []string{"id", "airframe_id", "pilot", "takeoff_at", "landing_at"}, flights},
		{"events", []string{"id", "at", "kind", "severity", "airframe_id", "detail"}, events},
	} {
		if _, err := pool.CopyFrom(ctx, pgx.Identifier{c.table}, c.cols, pgx.CopyFromRows(c.rows)); err != nil {
			b.Fatalf("copy %s: %v", c.table, err)
		}
	}
	if _, err := schedule.NewProgramme(db, health.New(db)).RecomputeFleet(ctx); err != nil {
		b.Fatal(err)
	}
	if _, err := pool.Exec(ctx, `ANALYZE`); err != nil {
		b.Fatal(err)
	}
	return db
}

// BenchmarkFleetPage300 times the fleet page for 300 airframes against
// floors measured in the same run, interleaved with it request by request
// so both see the same load: the page's own SQL sent directly (the batch
// store.FleetNow sends, rows read and dropped: no router, judging or
// rendering), a one-row API read through the same router, and the
// readiness route asked for every airframe (what a browser would do
// without the page):
// go test -bench FleetPage300 -run '^$' -benchtime 3x ./web
func BenchmarkFleetPage300(b *testing.B) {
	db := seedFleet(b)
	p := newPageTimer(b, db)
	ctx := context.Background()
	list, _, err := db.Airframes(ctx, store.AirframeFilter{}, store.Page{Limit: store.MaxPageSize})
	if err != nil {
		b.Fatal(err)
	}
	sqlAlone := func() time.Duration {
		t0 := time.Now()
		batch := store.FleetBatch(time.Now())
		br := db.Pool().SendBatch(ctx, batch)
		for range batch.Len() {
			rows, err := br.Query()
			if err != nil {
				b.Fatal(err)
			}
			for rows.Next() {
				_ = rows.RawValues()
			}
			if rows.Close(); rows.Err() != nil {
				b.Fatal(rows.Err())
			}
		}
		if err := br.Close(); err != nil {
			b.Fatal(err)
		}
		return time.Since(t0)
	}
	median := func(d []time.Duration) time.Duration {
		sort.Slice(d, func(i, j int) bool { return d[i] < d[j] })
		return d[len(d)/2]
	}
	ms := func(d time.Duration) float64 { return float64(d.Microseconds()) / 1000 }
	for b.Loop() {
		const n = 15
		var pages, sqls, reads []time.Duration
		for range n {
			pages = append(pages, p.median(b, "/", false, 1))
			sqls = append(sqls, sqlAlone())
			reads = append(reads, p.median(b, "/v1/airframes/"+list[0].ID, true, 1))
		}
		page, sql, read := median(pages), median(sqls), median(reads)
		var each time.Duration // the readiness route for every airframe, one after another
		for _, a := range list {
			each += p.median(b, "/v1/airframes/"+a.ID+"/readiness", true, 1)
		}
		b.ReportMetric(ms(page), "fleet-ms")
		b.ReportMetric(ms(sql), "sql-ms")
		b.ReportMetric(ms(read), "floor-ms")
		b.ReportMetric(ms(each), "readiness-all-ms")
		b.Logf("%d airframes, %d flights: fleet page %.1f ms; its SQL alone %.1f ms (page %.2f x); one-row API read %.2f ms (%.0f x); "+
			"readiness route for all %d airframes %.0f ms (page %.2f x)", benchAirframes, benchAirframes*benchFlights,
			ms(page), ms(sql), float64(page)/float64(sql), ms(read), float64(page)/float64(read),
			len(list), ms(each), float64(page)/float64(each))
	}
}
