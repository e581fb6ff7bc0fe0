package schedule_test

import (
	"bytes"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/ingest"
	"github.com/rotorwright/rotorwright/internal/sim"
)

// Two uploads of the same airframe at once: the work after flight A began
// (its mark read, its views refreshed) before flight B was recorded, and
// B's own work finished first, so A's writes would stand without B. After
// A's work the stored views and due list must count both flights, as a
// recompute from scratch does. Before, they counted A alone until the
// scheduled recompute.
func TestAfterFlightCatchesUpWithAFlightRecordedMeanwhile(t *testing.T) {
	b := newBench(t, false)
	a := b.airframe("SIM-CU", "CU")
	motors, _ := b.fullQuad(a, b.ago(20*day), 2000, "PR-10")
	pk := b.pack(4, "")
	r := b.rule(fleet.ServiceRule{AppliesTo: "motor", BearingPct: fp(80)})
	// Recorded with no work after it (no refresh, no due list).
	record := func(seed uint64, at time.Time) string {
		spec := b.spec(a, pk, seed, at, 5, 240)
		var buf bytes.Buffer
		if _, err := sim.Generate(spec, &buf); err != nil {
			t.Fatal(err)
		}
		mass := spec.MassKg * 1000
		res, err := (&ingest.Ingester{DB: b.db}).Ingest(b.ctx, ingest.Request{Flight: fleet.Flight{AirframeID: a.ID,
			Pilot: "test", TakeoffMassG: &mass, Packs: []fleet.FlightPack{{PartID: pk.ID, Slot: 1}}}, Log: buf.Bytes()})
		if err != nil {
			t.Fatal(err)
		}
		return res.FlightID
	}
	idA := record(811, b.ago(3*day))
	fresh := b.hs.StartRefresh(b.ctx, idA)
	<-fresh.Done()
	if err := fresh.Err(); err != nil {
		t.Fatal(err)
	}
	record(812, b.ago(2*day)) // B, recorded after A's refresh read the flights
	fA, err := b.db.Flight(b.ctx, idA)
	if err != nil {
		t.Fatal(err)
	}
	if err := b.p.AfterFlight(b.ctx, fA, fresh); err != nil {
		t.Fatal(err)
	}

	raw, err := b.db.PartHealth(b.ctx, motors[0].ID)
	if err != nil {
		t.Fatal(err)
	}
	if mv := decode[health.View](t, raw).Motor; mv == nil || mv.Flights != 2 {
		t.Fatalf("stored motor view after A's work: %+v, want 2 flights", mv)
	}
	raw, err = b.db.AirframeTrends(b.ctx, a.ID)
	if err != nil {
		t.Fatal(err)
	}
	if tv := decode[health.TrendsView](t, raw); len(tv.Series) != 2 {
		t.Errorf("stored trends after A's work have %d flights, want 2", len(tv.Series))
	}
	after := b.usage(b.item(r, motors[0].ID), "bearing_pct").Used
	if _, err := b.hs.Recompute(b.ctx, nil); err != nil {
		t.Fatal(err)
	}
	b.recompute(a, pk)
	if want := b.usage(b.item(r, motors[0].ID), "bearing_pct").Used; after != want || want == 0 {
		t.Errorf("bearing after A's work %.9g %%, after a recompute from scratch %.9g %%", after, want)
	}
}
