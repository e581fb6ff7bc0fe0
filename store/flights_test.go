package store_test

import (
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

func TestFlightRules(t *testing.T) {
	f := newFixture(t)
	a, b := f.airframe("RW-61", "quad-x"), f.airframe("RW-62", "quad-x")
	p := f.pack()
	f.flight(a, nil, base, 20, p)

	try := func(af *fleet.Airframe, at time.Time, minutes int, packs ...*fleet.Part) error {
		fl := &fleet.Flight{AirframeID: af.ID, Pilot: "T. Lind", TakeoffAt: at, LandingAt: at.Add(time.Duration(minutes) * time.Minute)}
		for _, pk := range packs {
			fl.Packs = append(fl.Packs, fleet.FlightPack{PartID: pk.ID})
		}
		_, err := f.db.CreateFlight(f.ctx, fl)
		return err
	}
	// Overlapping flights of one airframe: refused by the exclusion constraint.
	wantCode(t, try(a, base.Add(10*time.Minute), 20), fleet.ECONFLICT, "takeoff_at")
	// Back to back is fine: [takeoff, landing) intervals touch, not overlap.
	if err := try(a, base.Add(20*time.Minute), 5); err != nil {
		t.Fatalf("back-to-back flight refused: %v", err)
	}
	// One pack cannot fly two overlapping flights, even on different airframes.
	wantCode(t, try(b, base.Add(5*time.Minute), 10, p), fleet.ECONFLICT, "packs")
	// Landing before (or at) take-off is refused.
	wantCode(t, try(b, base.Add(time.Hour), 0), fleet.EUNPROCESSABLE, "landing_at")
	wantCode(t, try(b, base.Add(time.Hour), -5), fleet.EUNPROCESSABLE, "landing_at")
	// A part that is not a pack is refused as a pack.
	wantCode(t, try(b, base.Add(2*time.Hour), 10, f.motor(fleet.CW, "")), fleet.EUNPROCESSABLE, "packs[0]")
	// Nothing was half-written by the refusals: a has 2 flights, b none.
	for _, c := range []struct {
		af   *fleet.Airframe
		want int
	}{{a, 2}, {b, 0}} {
		list, _, err := f.db.Flights(f.ctx, storeFlightFilter(c.af.ID), storePage(50))
		if err != nil {
			t.Fatal(err)
		}
		if len(list) != c.want {
			t.Fatalf("%s has %d flights, want %d", c.af.Code, len(list), c.want)
		}
	}
}
