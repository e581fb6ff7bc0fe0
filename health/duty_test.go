package health_test

import (
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/internal/sim"
	"github.com/rotorwright/rotorwright/store"
)

// A relative-mode motor is weighed against its model's reference duty, a
// median over every run of the part number in the fleet. The fleet
// recompute reads it from the runs and stores it; a refresh after an
// ingest uses the stored one while it is younger than DutyMaxAge (so its
// cost does not grow with the fleet), and reads it from the runs again, and
// stores it, once it is older. DutyMaxAge 0 reads it live every time.
func TestModelDutyStoredBetweenRecomputes(t *testing.T) {
	r := newRig(t)
	now := time.Now().UTC().Truncate(time.Second)
	r.hs.Now = func() time.Time { return now }
	pack := sim.PackState{Serial: "DUTY-P", Chemistry: sim.LiPo, CellsS: 4, CellsP: 1, RatedMah: 8000, BaselineIRmOhm: 16, StartSoC: 1}
	af, motors, pk := r.quad("DU-01", 0, pack) // no bearing rating: relative mode
	for i := 0; i < 3; i++ {
		spec := sim.DefaultSpec(uint64(70 + i))
		spec.Airframe, spec.Start, spec.SampleHz, spec.DurationS = af.Code, now.Add(-time.Duration(3-i)*24*time.Hour), 5, 240
		spec.Packs[0].Serial = pk.Serial
		r.fly(af, pk, spec)
	}
	flights, _, err := r.db.Flights(r.ctx, store.FlightFilter{AirframeID: af.ID}, store.Page{Limit: 10})
	if err != nil || len(flights) != 3 {
		t.Fatalf("%d flights, %v", len(flights), err)
	}
	last := flights[len(flights)-1].ID
	const pn = "MT-2814" // the rig's motors
	liveRPM, liveN, ok, err := r.db.ModelDuty(r.ctx, pn)
	if err != nil || !ok {
		t.Fatalf("model duty: ok %v, %v", ok, err)
	}
	reference := func(step string) (rpm, n float64) {
		t.Helper()
		raw, err := r.db.PartHealth(r.ctx, motors[0].ID)
		if err != nil {
			t.Fatal(err)
		}
		v, err := health.DecodeView(raw)
		if err != nil {
			t.Fatal(err)
		}
		m := v.Motor
		if m == nil || m.Mode != "relative" || m.Model.ReferenceRPM == nil || m.Model.ReferenceN == nil {
			t.Fatalf("%s: motor view %+v, notes %v", step, m, v.Notes)
		}
		return *m.Model.ReferenceRPM, *m.Model.ReferenceN
	}
	want := func(step string, rpm, n float64) {
		t.Helper()
		if gotRPM, gotN := reference(step); gotRPM != rpm || gotN != n {
			t.Fatalf("%s: reference duty %v rpm %v N, want %v rpm %v N", step, gotRPM, gotN, rpm, n)
		}
	}

	if _, err := r.hs.Recompute(r.ctx, nil); err != nil {
		t.Fatal(err)
	}
	want("fleet recompute", liveRPM, liveN)
	if rpm, n, found, err := r.db.StoredModelDuty(r.ctx, pn, now); err != nil || !found || rpm != liveRPM || n != liveN {
		t.Fatalf("stored after the recompute: %v %v found %v, %v", rpm, n, found, err)
	}

	// A stored duty that differs from the runs' (as if stored before the
	// last flights) serves a refresh while recent.
	if err := r.db.SaveModelDuty(r.ctx, pn, liveRPM*1.1, liveN*1.2, now.Add(-30*time.Minute)); err != nil {
		t.Fatal(err)
	}
	if err := r.hs.Refresh(r.ctx, last); err != nil {
		t.Fatal(err)
	}
	want("refresh, stored duty 30 min old", liveRPM*1.1, liveN*1.2)

	// Older than DutyMaxAge (1 h): read from the runs again, and stored.
	if err := r.db.SaveModelDuty(r.ctx, pn, liveRPM*1.1, liveN*1.2, now.Add(-2*time.Hour)); err != nil {
		t.Fatal(err)
	}
	if err := r.hs.Refresh(r.ctx, last); err != nil {
		t.Fatal(err)
	}
	want("refresh, stored duty 2 h old", liveRPM, liveN)
	if rpm, _, found, err := r.db.StoredModelDuty(r.ctx, pn, now); err != nil || !found || rpm != liveRPM {
		t.Fatalf("stored after the live read: %v found %v, %v", rpm, found, err)
	}

	// DutyMaxAge 0: live every time, whatever is stored.
	if err := r.db.SaveModelDuty(r.ctx, pn, liveRPM*1.1, liveN*1.2, now); err != nil {
		t.Fatal(err)
	}
	r.hs.Settings.DutyMaxAge = 0
	if err := r.hs.Refresh(r.ctx, last); err != nil {
		t.Fatal(err)
	}
	want("refresh, DutyMaxAge 0", liveRPM, liveN)
}
