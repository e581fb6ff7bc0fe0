package store_test

import (
	"math"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// A job flown by two airframes, one of which has a motor swapped between its
// flights: the manifest lists, for each flight, the parts on board at take-off.
func TestManifestTwoAirframesMidJobSwap(t *testing.T) {
	f := newFixture(t)
	a, b := f.airframe("RW-31", "quad-x"), f.airframe("RW-32", "quad-x")
	am := f.quadMotors(a, "LOT-7", base)
	f.quadMotors(b, "LOT-8", base)
	job := f.job("J-SURVEY-1")
	other := f.job("J-OTHER")
	p1, p2 := f.pack(), f.pack()

	f1 := f.flight(a, job, base.Add(24*time.Hour), 20, p1)
	f2 := f.flight(b, job, base.Add(24*time.Hour+5*time.Minute), 25, p2)
	swap := base.Add(25 * time.Hour)
	if _, err := f.db.Remove(f.ctx, a.ID, store.RemovalRequest{PartID: am[2].ID, At: swap, Reason: "noise"}); err != nil {
		t.Fatal(err)
	}
	spare := f.motor(fleet.CCW, "LOT-9")
	f.fit(a, spare, "m3", swap)
	f3 := f.flight(a, job, base.Add(26*time.Hour), 18, p2)
	f.flight(a, other, base.Add(30*time.Hour), 10, p1) // another job: not in this manifest

	m, err := f.db.Manifest(f.ctx, job.ID)
	if err != nil {
		t.Fatal(err)
	}
	if len(m.Flights) != 3 {
		t.Fatalf("manifest has %d flights, want 3", len(m.Flights))
	}
	wantOrder := []string{f1.ID, f2.ID, f3.ID}
	for i, fl := range m.Flights {
		if fl.FlightID != wantOrder[i] {
			t.Fatalf("flight %d is %s, want %s (take-off order)", i, fl.FlightID, wantOrder[i])
		}
		if len(fl.Parts) != 4 || len(fl.Packs) != 1 {
			t.Fatalf("flight %d: %d parts, %d packs; want 4 and 1", i, len(fl.Parts), len(fl.Packs))
		}
	}
	m3 := func(fl store.ManifestFlight) string {
		for _, p := range fl.Parts {
			if p.Position == "m3" {
				return p.Serial
			}
		}
		return ""
	}
	if m3(m.Flights[0]) != am[2].Serial || m3(m.Flights[2]) != spare.Serial {
		t.Fatalf("m3 on RW-31: first flight %s (want %s), after swap %s (want %s)",
			m3(m.Flights[0]), am[2].Serial, m3(m.Flights[2]), spare.Serial)
	}
	if m.Flights[1].AirframeCode != "RW-32" || m.Flights[1].Parts[0].Lot != "LOT-8" {
		t.Fatalf("second flight: %+v", m.Flights[1])
	}
	if math.Abs(m.Flights[1].Hours-25.0/60) > 1e-9 {
		t.Fatalf("hours %v, want %v", m.Flights[1].Hours, 25.0/60)
	}
}

func TestTraceLotAcrossJobs(t *testing.T) {
	f := newFixture(t)
	a, b, c := f.airframe("RW-41", "quad-x"), f.airframe("RW-42", "quad-x"), f.airframe("RW-43", "quad-x")
	// LOT-X: two motors on RW-41 (m1, m2) and one on RW-42 (m1); RW-43 has none.
	lx := []*fleet.Part{f.motor(fleet.CCW, "LOT-X"), f.motor(fleet.CW, "LOT-X"), f.motor(fleet.CCW, "LOT-X")}
	f.fit(a, lx[0], "m1", base)
	f.fit(a, lx[1], "m2", base)
	f.fit(b, lx[2], "m1", base)
	f.fit(c, f.motor(fleet.CCW, "LOT-Y"), "m1", base)
	j1, j2, j3 := f.job("J1"), f.job("J2"), f.job("J3")
	f.flight(a, j1, base.Add(time.Hour), 20)
	f.flight(b, j2, base.Add(2*time.Hour), 20)
	f.flight(b, j2, base.Add(3*time.Hour), 20)
	f.flight(c, j3, base.Add(4*time.Hour), 20) // no LOT-X on board
	// RW-42's LOT-X motor removed before its third flight: that flight is clean.
	if _, err := f.db.Remove(f.ctx, b.ID, store.RemovalRequest{PartID: lx[2].ID, At: base.Add(5 * time.Hour)}); err != nil {
		t.Fatal(err)
	}
	f.flight(b, j3, base.Add(6*time.Hour), 20)
	f.flight(a, nil, base.Add(7*time.Hour), 20) // a test flight with no job

	tr, err := f.db.Trace(f.ctx, "LOT-X", "")
	if err != nil {
		t.Fatal(err)
	}
	if len(tr.Parts) != 3 {
		t.Fatalf("%d parts, want 3", len(tr.Parts))
	}
	if len(tr.Flights) != 4 {
		t.Fatalf("%d flights, want 4 (RW-41 x2, RW-42 x2)", len(tr.Flights))
	}
	if len(tr.Flights[0].Serials) != 2 {
		t.Fatalf("RW-41's first flight carried %v, want both LOT-X motors", tr.Flights[0].Serials)
	}
	jobs := map[string]int{}
	for _, j := range tr.Jobs {
		jobs[j.Code] = j.Flights
	}
	if len(jobs) != 2 || jobs["J1"] != 1 || jobs["J2"] != 2 {
		t.Fatalf("jobs %v, want J1:1 J2:2", jobs)
	}
	byPN, err := f.db.Trace(f.ctx, "", "PN-motor")
	if err != nil {
		t.Fatal(err)
	}
	if len(byPN.Parts) != 4 || len(byPN.Jobs) != 3 {
		t.Fatalf("part-number trace: %d parts, %d jobs; want 4 and 3", len(byPN.Parts), len(byPN.Jobs))
	}
}

// A motor flies on one airframe, moves to another and flies there: its hours
// in service and cycles carry across.
func TestPartHoursCarriedAcrossAirframes(t *testing.T) {
	f := newFixture(t)
	a, b := f.airframe("RW-51", "quad-x"), f.airframe("RW-52", "quad-x")
	m := f.motor(fleet.CCW, "")
	f.fit(a, m, "m1", base)
	f.flight(a, nil, base.Add(time.Hour), 30)
	f.flight(a, nil, base.Add(2*time.Hour), 15)
	if _, err := f.db.Remove(f.ctx, a.ID, store.RemovalRequest{PartID: m.ID, At: base.Add(3 * time.Hour)}); err != nil {
		t.Fatal(err)
	}
	f.flight(a, nil, base.Add(4*time.Hour), 40) // after removal: not the motor's
	f.fit(b, m, "m3", base.Add(5*time.Hour))
	f.flight(b, nil, base.Add(6*time.Hour), 45)
	pk := f.pack()
	f.flight(b, nil, base.Add(7*time.Hour), 12, pk)

	h, err := f.db.PartHistory(f.ctx, m.ID)
	if err != nil {
		t.Fatal(err)
	}
	// 30 + 15 + 45 + 12 minutes = 1.7 h over 4 cycles.
	if h.Totals.Flights != 4 || h.Totals.Cycles != 4 || math.Abs(h.Totals.Hours-1.7) > 1e-9 {
		t.Fatalf("totals %+v, want 4 flights, 4 cycles, 1.7 h", h.Totals)
	}
	if ra, rb := h.ByAirframe["RW-51"], h.ByAirframe["RW-52"]; ra.Flights != 2 || rb.Flights != 2 ||
		math.Abs(ra.Hours-0.75) > 1e-9 || math.Abs(rb.Hours-0.95) > 1e-9 {
		t.Fatalf("by airframe %+v", h.ByAirframe)
	}
	if len(h.Fits) != 2 || h.Fits[0].RemovedAt == nil || h.Fits[1].RemovedAt != nil {
		t.Fatalf("fits %+v", h.Fits)
	}
	// A pack's history counts the flights it was listed on.
	ph, err := f.db.PartHistory(f.ctx, pk.ID)
	if err != nil {
		t.Fatal(err)
	}
	if ph.Totals.Flights != 1 || math.Abs(ph.Totals.Hours-0.2) > 1e-9 {
		t.Fatalf("pack totals %+v", ph.Totals)
	}
}
