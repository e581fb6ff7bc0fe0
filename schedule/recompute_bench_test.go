package schedule_test

import (
	"cmp"
	"context"
	"os"
	"runtime/pprof"
	"slices"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/schedule"
)

// BenchmarkScaleRecompute measures the whole-fleet recompute on the large
// fleet (seedScale: 500 airframes, 20,000 parts, 250,000 flights): the due
// list (RecomputeFleet) and every health view (health Recompute), next to
// its floor in the same run, the set-based usage statement alone (RuleUsage
// for every enabled rule over the whole fleet). Each iteration runs the
// three in turn; medians are reported. Then the work after one ingest on a
// random airframe of it (500 flights each: the health refresh of the last
// flight's parts and, beside it as an ingest runs it, the airframe's due
// list) is timed 300 times, then its
// floor, a one-row read of a random airframe, 300 times. With ROTORWRIGHT_RECOMPUTE_PROFILE=FILE
// the recompute (not the seeding) is CPU-profiled into FILE.
//
//	go test -bench ScaleRecompute -run '^$' -benchtime 3x -timeout 30m ./schedule
func BenchmarkScaleRecompute(b *testing.B) {
	db, ids := seedScale(b)
	ctx := context.Background()
	prog := schedule.NewProgramme(db, health.New(db))
	rules, err := db.Rules(ctx)
	if err != nil {
		b.Fatal(err)
	}
	// Warm both paths once (plans, caches, the first health views).
	if _, err := prog.RecomputeFleet(ctx); err != nil {
		b.Fatal(err)
	}
	if _, err := prog.Health.Recompute(ctx, nil); err != nil {
		b.Fatal(err)
	}
	if f := os.Getenv("ROTORWRIGHT_RECOMPUTE_PROFILE"); f != "" {
		out, err := os.Create(f)
		if err != nil {
			b.Fatal(err)
		}
		defer out.Close()
		if err := pprof.StartCPUProfile(out); err != nil {
			b.Fatal(err)
		}
		defer pprof.StopCPUProfile()
	}
	var floor, due, hs []time.Duration
	items, views := 0, 0
	for b.Loop() {
		t0 := time.Now()
		rows := 0
		for _, r := range rules {
			if !r.Enabled {
				continue
			}
			u, err := db.RuleUsage(ctx, r, "", nil, time.Now().Add(-prog.Window))
			if err != nil {
				b.Fatal(err)
			}
			rows += len(u)
		}
		floor = append(floor, time.Since(t0))
		if rows == 0 {
			b.Fatal("the floor summed no subjects")
		}
		t0 = time.Now()
		if items, err = prog.RecomputeFleet(ctx); err != nil {
			b.Fatal(err)
		}
		due = append(due, time.Since(t0))
		t0 = time.Now()
		if views, err = prog.Health.Recompute(ctx, nil); err != nil {
			b.Fatal(err)
		}
		hs = append(hs, time.Since(t0))
	}
	// After an ingest: each airframe's last flight stands for the new one.
	last := map[string]string{}
	rows, err := db.Pool().Query(ctx, `SELECT DISTINCT ON (airframe_id) airframe_id::text, id::text FROM flights
		ORDER BY airframe_id, takeoff_at DESC`)
	if err != nil {
		b.Fatal(err)
	}
	for rows.Next() {
		var af, fl string
		if err := rows.Scan(&af, &fl); err != nil {
			b.Fatal(err)
		}
		last[af] = fl
	}
	rows.Close()
	ingest50, ingest99 := latencies(b, ids, 300, func(id string) error {
		// As an ingest runs them: the due list beside the refresh.
		fresh := prog.Health.StartRefresh(ctx, last[id])
		_, err := prog.RecomputeAirframeBeside(ctx, id, nil, fresh)
		<-fresh.Done()
		return cmp.Or(fresh.Err(), err)
	})
	read50, read99 := latencies(b, ids, 300, func(id string) error { _, err := db.Airframe(ctx, id); return err })
	ms := func(d time.Duration) float64 { return float64(d.Microseconds()) / 1000 }
	b.ReportMetric(ms(ingest50), "after-ingest-p50-ms")
	b.ReportMetric(ms(ingest99), "after-ingest-p99-ms")
	b.ReportMetric(ms(read50), "read-floor-p50-ms")
	b.Logf("after an ingest (health refresh + airframe due list, 500 flights per airframe): p50 %s p99 %s; one-row read floor p50 %s p99 %s; p50 ratio %.0fx",
		ingest50, ingest99, read50, read99, float64(ingest50)/float64(read50))
	med := func(d []time.Duration) time.Duration { d = slices.Clone(d); slices.Sort(d); return d[len(d)/2] }
	f, d, h := med(floor), med(due), med(hs)
	b.ReportMetric(d.Seconds(), "due-s")
	b.ReportMetric(h.Seconds(), "health-s")
	b.ReportMetric((d + h).Seconds(), "recompute-s")
	b.ReportMetric(f.Seconds(), "floor-s")
	b.ReportMetric(float64(d)/float64(f), "due/floor")
	b.Logf("%d airframes, %d parts, %d flights: median of %d runs: floor (set-based usage SQL) %s; due list %s (%d items, %.2fx floor); health %s (%d views); recompute total %s",
		scaleAirframes, scaleParts, scaleFlights, len(due), f.Round(time.Millisecond), d.Round(time.Millisecond), items,
		float64(d)/float64(f), h.Round(time.Millisecond), views, (d + h).Round(time.Millisecond))
}
