package records_test

import (
	"context"
	"io"
	"runtime"
	"runtime/metrics"
	"sync"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/records"
	"github.com/rotorwright/rotorwright/store"
)

// seedFlights gives the airframe n more flights, each with a stored figures
// document of about 2 KB (the size a logged flight's metrics take), an
// audit row and an event every tenth flight: written by SQL in bulk so that
// seeding stays fast.
func seedFlights(t testing.TB, db *store.DB, a *fleet.Airframe, n int) {
	ctx := context.Background()
	_, err := db.Pool().Exec(ctx, `
		WITH f AS (
			INSERT INTO flights (id, airframe_id, pilot, takeoff_at, landing_at, source, software)
			SELECT gen_random_uuid(), $1, 'B. Okafor', t, t + interval '20 minutes', 'manual', '4.2.0'
			FROM generate_series(now() - interval '4000 days', now() - interval '4000 days' + ($2 - 1) * interval '30 minutes',
				interval '30 minutes') AS t
			RETURNING id, takeoff_at),
		m AS (
			INSERT INTO flight_metrics (flight_id, charge_mah, energy_wh, mean_power_w, peak_a, min_pack_v, air_density, metrics)
			SELECT id, 5200, 115, 340, 61, 21.9, 1.2,
				jsonb_build_object('charge_mah', 5200, 'energy_wh', 115, 'motors', (SELECT jsonb_agg(jsonb_build_object(
					'position', 'm' || g, 'revolutions', 412345.6 + g, 'bins', repeat('x', 300))) FROM generate_series(1, 4) g))
			FROM f RETURNING flight_id),
		e AS (
			INSERT INTO events (id, at, kind, severity, airframe_id, flight_id, detail)
			SELECT gen_random_uuid(), takeoff_at, 'note', 'info', $1, id, 'routine note' FROM f
			WHERE extract(minute FROM takeoff_at)::int % 10 = 0 RETURNING id)
		INSERT INTO audit_log (actor_name, method, route, entity, entity_id, after)
		SELECT 'seed', 'SEED', 'seed', 'flight', id::text, jsonb_build_object('id', id) FROM f`, a.ID, n)
	if err != nil {
		t.Fatal(err)
	}
}

// peakHeap writes a bundle to io.Discard and returns the largest heap
// (objects, live and not yet swept) seen while it ran, sampled every
// millisecond after a collection at the start.
func peakHeap(tb testing.TB, db *store.DB, a *fleet.Airframe) uint64 {
	runtime.GC()
	sample := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
	var peak uint64
	var mu sync.Mutex
	done := make(chan struct{})
	go func() {
		tick := time.NewTicker(time.Millisecond)
		defer tick.Stop()
		for {
			metrics.Read(sample)
			mu.Lock()
			peak = max(peak, sample[0].Value.Uint64())
			mu.Unlock()
			select {
			case <-done:
				return
			case <-tick.C:
			}
		}
	}()
	if err := records.Write(context.Background(), db, a.ID, records.Options{}, io.Discard); err != nil {
		tb.Fatal(err)
	}
	close(done)
	mu.Lock()
	defer mu.Unlock()
	return peak
}

// BenchmarkBundlePeakMemory writes the bundle of an airframe with 500 and
// with 5,000 flights; peak-heap-MB should stay the same (streaming), while
// the time grows with the flights. The 500-flight run is the floor:
//
//	go test -bench BundlePeakMemory -run '^$' -benchtime 3x ./records
func BenchmarkBundlePeakMemory(b *testing.B) {
	for _, n := range []int{500, 5000} {
		b.Run(fmtFlights(n), func(b *testing.B) {
			db := store.New(pgtest.NewPool(b))
			a := smallFleet(b, db)
			seedFlights(b, db, a, n)
			var peak uint64
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				peak = max(peak, peakHeap(b, db, a))
			}
			b.ReportMetric(float64(peak)/(1<<20), "peak-heap-MB")
		})
	}
}

func fmtFlights(n int) string {
	if n >= 1000 {
		return string(rune('0'+n/1000)) + ",000-flights"
	}
	return "500-flights"
}

// Memory stays flat: the bundle of 5,000 flights peaks at no more heap than
// that of 500 flights plus a margin. Streaming keeps both near the same
// figure; holding the flights would need some 10 MB more for 4,500 more
// flights of about 2 KB each as JSON, which the margin (4 MiB) is well
// under. Each peak is the smallest of three runs, to damp the collector's
// timing.
func TestBundleMemoryFlat(t *testing.T) {
	if testing.Short() {
		t.Skip("seeds 5,500 flights")
	}
	db := store.New(pgtest.NewPool(t))
	small := smallFleet(t, db)
	seedFlights(t, db, small, 500)
	ctx := store.WithActor(context.Background(), store.Actor{Name: "test"})
	big, err := db.CreateAirframe(ctx, &fleet.Airframe{Code: "RB-BIG", Layout: "quad-x", CellsS: 6, PacksPerFlight: 1})
	if err != nil {
		t.Fatal(err)
	}
	seedFlights(t, db, big, 5000)
	least := func(a *fleet.Airframe) uint64 {
		m := peakHeap(t, db, a)
		for i := 0; i < 2; i++ {
			m = min(m, peakHeap(t, db, a))
		}
		return m
	}
	p500, p5000 := least(small), least(big)
	t.Logf("peak heap: 500 flights %.1f MiB, 5,000 flights %.1f MiB", float64(p500)/(1<<20), float64(p5000)/(1<<20))
	if p5000 > p500+4<<20 {
		t.Fatalf("peak heap grew from %.1f MiB (500 flights) to %.1f MiB (5,000 flights)", float64(p500)/(1<<20), float64(p5000)/(1<<20))
	}
}
