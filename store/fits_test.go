package store_test

import (
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

func TestFitConstraints(t *testing.T) {
	f := newFixture(t)
	a := f.airframe("RW-01", "quad-x")
	b := f.airframe("RW-02", "quad-x")
	m := f.motor(fleet.CCW, "")
	f.fit(a, m, "m1", base)

	// A part is in one place at a time: the exclusion constraint refuses.
	_, err := f.db.Fit(f.ctx, b.ID, store.FitRequest{PartID: m.ID, Position: "m1", At: base.Add(time.Hour)})
	wantCode(t, err, fleet.ECONFLICT, "part_id")

	// A position holds one part of a kind at a time.
	m2 := f.motor(fleet.CCW, "")
	_, err = f.db.Fit(f.ctx, a.ID, store.FitRequest{PartID: m2.ID, Position: "m1", At: base.Add(time.Hour)})
	wantCode(t, err, fleet.ECONFLICT, "position")

	// Fitting before an existing stay overlaps it too ([t, inf) covers it).
	_, err = f.db.Fit(f.ctx, b.ID, store.FitRequest{PartID: m.ID, Position: "m1", At: base.Add(-time.Hour)})
	wantCode(t, err, fleet.ECONFLICT, "part_id")

	// A motor and a propeller may share a position: they are different kinds.
	f.fit(a, f.prop(fleet.CCW), "m1", base)

	// Rotation must match the position: quad-x m2 turns cw.
	_, err = f.db.Fit(f.ctx, a.ID, store.FitRequest{PartID: m2.ID, Position: "m2", At: base})
	wantCode(t, err, fleet.EUNPROCESSABLE, "position")
	_, err = f.db.Fit(f.ctx, a.ID, store.FitRequest{PartID: f.prop(fleet.CCW).ID, Position: "m2", At: base})
	wantCode(t, err, fleet.EUNPROCESSABLE, "position")

	// Unknown position, packs and future times are refused.
	_, err = f.db.Fit(f.ctx, a.ID, store.FitRequest{PartID: m2.ID, Position: "m9", At: base})
	wantCode(t, err, fleet.EINVALID, "position")
	_, err = f.db.Fit(f.ctx, a.ID, store.FitRequest{PartID: f.pack().ID, Position: "bay", At: base})
	wantCode(t, err, fleet.EUNPROCESSABLE, "part_id")
	_, err = f.db.Fit(f.ctx, a.ID, store.FitRequest{PartID: m2.ID, Position: "m3", At: time.Now().Add(time.Hour)})
	wantCode(t, err, fleet.EINVALID, "at")

	// After removal the motor can go to the other airframe, and statuses follow.
	if _, err := f.db.Remove(f.ctx, a.ID, store.RemovalRequest{PartID: m.ID, At: base.Add(2 * time.Hour), Reason: "swap"}); err != nil {
		t.Fatal(err)
	}
	if p, _ := f.db.Part(f.ctx, m.ID); p.Status != fleet.PartStock {
		t.Fatalf("after removal status = %s, want stock", p.Status)
	}
	f.fit(b, m, "m1", base.Add(3*time.Hour))
	if p, _ := f.db.Part(f.ctx, m.ID); p.Status != fleet.PartFitted {
		t.Fatalf("after fit status = %s, want fitted", p.Status)
	}
	// The closed stay on RW-01 cannot be overlapped retroactively.
	_, err = f.db.Fit(f.ctx, a.ID, store.FitRequest{PartID: m2.ID, Position: "m1", At: base.Add(90 * time.Minute)})
	wantCode(t, err, fleet.ECONFLICT, "position")
	// Removal before the fit is refused; removing a part not fitted is refused.
	_, err = f.db.Remove(f.ctx, b.ID, store.RemovalRequest{PartID: m.ID, At: base.Add(time.Hour)})
	wantCode(t, err, fleet.EUNPROCESSABLE, "at")
	_, err = f.db.Remove(f.ctx, a.ID, store.RemovalRequest{PartID: m.ID, At: base.Add(5 * time.Hour)})
	wantCode(t, err, fleet.EUNPROCESSABLE, "part_id")
}

func TestFitmentAtPastTimeAfterMotorSwap(t *testing.T) {
	f := newFixture(t)
	a := f.airframe("RW-10", "quad-x")
	motors := f.quadMotors(a, "LOT-A", base)
	spare := f.motor(fleet.CW, "LOT-B")
	swap := base.Add(48 * time.Hour)
	if _, err := f.db.Remove(f.ctx, a.ID, store.RemovalRequest{PartID: motors[1].ID, At: swap, Reason: "rough bearing"}); err != nil {
		t.Fatal(err)
	}
	f.fit(a, spare, "m2", swap)

	at := func(tm time.Time) map[string]string {
		fm, err := f.db.Fitment(f.ctx, a.ID, tm)
		if err != nil {
			t.Fatal(err)
		}
		got := map[string]string{}
		for _, p := range fm.Parts {
			got[p.Position] = p.Serial
		}
		return got
	}
	before, after := at(swap.Add(-time.Minute)), at(swap.Add(time.Minute))
	if before["m2"] != motors[1].Serial || after["m2"] != spare.Serial {
		t.Fatalf("m2 before swap %s (want %s), after %s (want %s)", before["m2"], motors[1].Serial, after["m2"], spare.Serial)
	}
	if before["m1"] != motors[0].Serial || after["m1"] != motors[0].Serial {
		t.Fatalf("m1 changed across the swap: %v -> %v", before, after)
	}
	// The fit interval is [fitted, removed): at the swap instant the spare is on.
	if got := at(swap)["m2"]; got != spare.Serial {
		t.Fatalf("at the swap instant m2 = %s, want %s", got, spare.Serial)
	}
	// Before anything was fitted every rotor place is empty.
	fm, err := f.db.Fitment(f.ctx, a.ID, base.Add(-time.Hour))
	if err != nil {
		t.Fatal(err)
	}
	if len(fm.Parts) != 0 || len(fm.Empty) != 8 {
		t.Fatalf("before fitting: %d parts, %d empty places; want 0 and 8", len(fm.Parts), len(fm.Empty))
	}
}

func TestRetireAirframeRemovesParts(t *testing.T) {
	f := newFixture(t)
	a := f.airframe("RW-20", "quad-x")
	motors := f.quadMotors(a, "", base)
	got, err := f.db.RetireAirframe(f.ctx, a.ID, a.Version+4) // four fits do not bump the airframe
	wantCode(t, err, fleet.EPRECONDITION, "")
	got, err = f.db.RetireAirframe(f.ctx, a.ID, a.Version)
	if err != nil {
		t.Fatal(err)
	}
	if got.Status != fleet.AirframeRetired {
		t.Fatalf("status %s, want retired", got.Status)
	}
	for _, m := range motors {
		if p, _ := f.db.Part(f.ctx, m.ID); p.Status != fleet.PartStock {
			t.Fatalf("motor %s status %s after retirement, want stock", p.Serial, p.Status)
		}
	}
	_, err = f.db.Fit(f.ctx, a.ID, store.FitRequest{PartID: motors[0].ID, Position: "m1"})
	wantCode(t, err, fleet.ECONFLICT, "")
}
