package health_test

import (
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

// BenchmarkAfterIngest measures what follows each ingest for one airframe
// with 60 logged flights: the health refresh of what the flight touched and
// the airframe's due-list recompute; BenchmarkFloorRead is the floor to read
// it against, one single-row read of the same airframe, in the same run.
// Run: go test -bench 'AfterIngest|FloorRead' -run '^$' -benchtime 20x ./health
func BenchmarkAfterIngest(b *testing.B) {
	r, afID, flightID := benchFleet(b)
	prog := schedule.NewProgramme(r.db, r.hs)
	b.ResetTimer()
	for b.Loop() {
		if err := r.hs.Refresh(r.ctx, flightID); err != nil {
			b.Fatal(err)
		}
		if _, err := prog.RecomputeAirframe(r.ctx, afID, nil); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkFloorRead(b *testing.B) {
	r, afID, _ := benchFleet(b)
	b.ResetTimer()
	for b.Loop() {
		if _, err := r.db.Airframe(r.ctx, afID); err != nil {
			b.Fatal(err)
		}
	}
}

func benchFleet(b *testing.B) (*rig, string, string) {
	r := rigOn(b)
	pack := sim.PackState{Serial: "BENCH-P", Chemistry: sim.LiPo, CellsS: 4, CellsP: 1, RatedMah: 8000, BaselineIRmOhm: 16, StartSoC: 1}
	af, _, pk := r.quad("BN-01", 0, pack)
	start := time.Now().AddDate(0, 0, -60).UTC().Truncate(time.Hour)
	for i := 0; i < 60; i++ {
		spec := sim.DefaultSpec(uint64(900 + i))
		spec.Airframe, spec.Start, spec.SampleHz, spec.DurationS = "BN-01", start.Add(time.Duration(i)*24*time.Hour), 5, 300
		spec.Packs[0].Serial = pack.Serial
		r.fly(af, pk, spec)
	}
	flights, _, err := r.db.Flights(r.ctx, store.FlightFilter{AirframeID: af.ID}, store.Page{Limit: 500})
	if err != nil || len(flights) != 60 {
		b.Fatalf("%d flights, %v", len(flights), err)
	}
	return r, af.ID, flights[len(flights)-1].ID
}
