package health_test

import (
	"fmt"
	"slices"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/internal/sim"
	"github.com/rotorwright/rotorwright/schedule"
	"github.com/rotorwright/rotorwright/store"
)

func storeFilter(airframeID string) store.FlightFilter {
	return store.FlightFilter{AirframeID: airframeID}
}
func storePage() store.Page { return store.Page{Limit: 500} }

// benchWarmPasses are the passes run before BenchmarkAfterIngest measures.
const benchWarmPasses = 5

// BenchmarkAfterIngest measures what follows each ingest for one airframe
// with 60 and with 500 logged flights: the health refresh of what the flight
// touched and the airframe's due-list recompute. Each iteration also runs
// the floor, one single-row read of the same airframe, so the two are
// measured in the same run; p50 and p99 of each and the p50 ratio are
// reported, after benchWarmPasses passes not counted, and the first of
// those as cold-ms. BenchmarkFloorRead is that floor alone.
// Run: go test -bench 'AfterIngest|FloorRead' -run '^$' -benchtime 200x ./health
func BenchmarkAfterIngest(b *testing.B) {
	for _, n := range []int{60, 500} {
		b.Run(fmt.Sprintf("flights=%d", n), func(b *testing.B) {
			r, afID, flightID := benchFleet(b, n)
			prog := schedule.NewProgramme(r.db, r.hs)
			// One pass: the floor read, then what an ingest runs after the
			// flight is recorded: the due list beside the refresh, its rules
			// reading the views once the refresh is done, and the check for
			// a flight recorded meanwhile.
			pass := func() (floor, work time.Duration) {
				t0 := time.Now()
				if _, err := r.db.Airframe(r.ctx, afID); err != nil {
					b.Fatal(err)
				}
				t1 := time.Now()
				fresh := r.hs.StartRefresh(r.ctx, flightID)
				if _, err := prog.RecomputeAirframeBeside(r.ctx, afID, nil, fresh); err != nil {
					b.Fatal(err)
				}
				if <-fresh.Done(); fresh.Err() != nil {
					b.Fatal(fresh.Err())
				}
				// AfterFlight's catch-up check reads the mark again (no
				// flight is recorded meanwhile here, so that is all it does).
				if _, err := r.db.FlightMark(r.ctx, flightID); err != nil {
					b.Fatal(err)
				}
				return t1.Sub(t0), time.Since(t1)
			}
			// Warm, as a running service is: the first passes open
			// connections and plan statements (the first is reported as
			// cold-ms, the rest are not counted).
			_, cold := pass()
			for range benchWarmPasses - 1 {
				pass()
			}
			var work, floor []time.Duration
			for b.Loop() {
				f, w := pass()
				floor, work = append(floor, f), append(work, w)
			}
			w50, w99 := quantiles(work)
			f50, f99 := quantiles(floor)
			ms := func(d time.Duration) float64 { return float64(d.Microseconds()) / 1000 }
			b.ReportMetric(ms(w50), "p50-ms")
			b.ReportMetric(ms(w99), "p99-ms")
			b.ReportMetric(ms(f50), "floor-p50-ms")
			b.ReportMetric(ms(f99), "floor-p99-ms")
			b.ReportMetric(float64(w50)/float64(f50), "p50/floor")
			b.ReportMetric(ms(cold), "cold-ms")
		})
	}
}

// quantiles returns the p50 and p99 of the durations.
func quantiles(d []time.Duration) (p50, p99 time.Duration) {
	d = slices.Clone(d)
	slices.Sort(d)
	return d[len(d)/2], d[len(d)*99/100]
}

func BenchmarkFloorRead(b *testing.B) {
	r, afID, _ := benchFleet(b, 60)
	b.ResetTimer()
	for b.Loop() {
		if _, err := r.db.Airframe(r.ctx, afID); err != nil {
			b.Fatal(err)
		}
	}
}

// benchFleet registers one quad and ingests n simulated flights on it, 8
// hours apart (all after its motors were fitted).
func benchFleet(b *testing.B, n int) (*rig, string, string) {
	r := rigOn(b)
	pack := sim.PackState{Serial: "BENCH-P", Chemistry: sim.LiPo, CellsS: 4, CellsP: 1, RatedMah: 8000, BaselineIRmOhm: 16, StartSoC: 1}
	af, _, pk := r.quad("BN-01", 0, pack)
	start := time.Now().Add(-time.Duration(n+1) * 8 * time.Hour).UTC().Truncate(time.Hour)
	for i := 0; i < n; i++ {
		spec := sim.DefaultSpec(uint64(900 + i))
		spec.Airframe, spec.Start, spec.SampleHz, spec.DurationS = "BN-01", start.Add(time.Duration(i)*8*time.Hour), 5, 300
		spec.Packs[0].Serial = pack.Serial
		r.fly(af, pk, spec)
	}
	flights, _, err := r.db.Flights(r.ctx, store.FlightFilter{AirframeID: af.ID}, store.Page{Limit: store.MaxPageSize})
	if err != nil || len(flights) != min(n, store.MaxPageSize) {
		b.Fatalf("%d flights, %v", len(flights), err)
	}
	return r, af.ID, flights[len(flights)-1].ID
}
