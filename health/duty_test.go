package health_test

import (
	"slices"
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
	if rpm, n, ok, found, err := r.db.StoredModelDuty(r.ctx, pn, now); err != nil || !found || !ok || rpm != liveRPM || n != liveN {
		t.Fatalf("stored after the recompute: %v %v ok %v found %v, %v", rpm, n, ok, found, err)
	}

	// A stored duty that differs from the runs' (as if stored before the
	// last flights) serves a refresh while recent.
	if err := r.db.SaveModelDuty(r.ctx, pn, liveRPM*1.1, liveN*1.2, true, now.Add(-30*time.Minute)); err != nil {
		t.Fatal(err)
	}
	if err := r.hs.Refresh(r.ctx, last); err != nil {
		t.Fatal(err)
	}
	want("refresh, stored duty 30 min old", liveRPM*1.1, liveN*1.2)

	// Older than DutyMaxAge (1 h): read from the runs again, and stored.
	if err := r.db.SaveModelDuty(r.ctx, pn, liveRPM*1.1, liveN*1.2, true, now.Add(-2*time.Hour)); err != nil {
		t.Fatal(err)
	}
	if err := r.hs.Refresh(r.ctx, last); err != nil {
		t.Fatal(err)
	}
	want("refresh, stored duty 2 h old", liveRPM, liveN)
	if rpm, _, _, found, err := r.db.StoredModelDuty(r.ctx, pn, now); err != nil || !found || rpm != liveRPM {
		t.Fatalf("stored after the live read: %v found %v, %v", rpm, found, err)
	}

	// A recent record that the model has no duty (as stored for a model
	// whose runs give none) serves too: the motor is weighed against its
	// own median duty, as when the model has none, without the live join.
	if err := r.db.SaveModelDuty(r.ctx, pn, 0, 0, false, now.Add(-time.Minute)); err != nil {
		t.Fatal(err)
	}
	if err := r.hs.Refresh(r.ctx, last); err != nil {
		t.Fatal(err)
	}
	runs, err := r.db.RotorRuns(r.ctx, motors[0].ID, time.Time{})
	if err != nil {
		t.Fatal(err)
	}
	var rpms, ns []float64
	for _, run := range runs {
		if run.MeanRPM != nil && run.ThrustMeanN != nil {
			rpms, ns = append(rpms, *run.MeanRPM), append(ns, *run.ThrustMeanN)
		}
	}
	want("refresh, stored: no duty", middle(rpms), middle(ns))

	// DutyMaxAge 0: live every time, whatever is stored.
	if err := r.db.SaveModelDuty(r.ctx, pn, liveRPM*1.1, liveN*1.2, true, now); err != nil {
		t.Fatal(err)
	}
	r.hs.Settings.DutyMaxAge = 0
	if err := r.hs.Refresh(r.ctx, last); err != nil {
		t.Fatal(err)
	}
	want("refresh, DutyMaxAge 0", liveRPM, liveN)
}

// A model whose runs give no duty (no take-off mass: no thrust) is stored
// as having none by the fleet recompute, so refreshes do not look again.
func TestModelDutyNoneStored(t *testing.T) {
	r := newRig(t)
	now := time.Now().UTC().Truncate(time.Second)
	r.hs.Now = func() time.Time { return now }
	pack := sim.PackState{Serial: "NODUTY-P", Chemistry: sim.LiPo, CellsS: 4, CellsP: 1, RatedMah: 8000, BaselineIRmOhm: 16, StartSoC: 1}
	r.quad("ND-01", 0, pack) // fitted, never flown: no run of the model
	if _, err := r.hs.Recompute(r.ctx, nil); err != nil {
		t.Fatal(err)
	}
	if _, _, ok, found, err := r.db.StoredModelDuty(r.ctx, "MT-2814", now); err != nil || !found || ok {
		t.Fatalf("stored after the recompute: ok %v found %v, %v; want found, without a duty", ok, found, err)
	}
}

// middle is the median as the motor view takes it (the mean of the two
// middle values of an even count).
func middle(x []float64) float64 {
	s := slices.Sorted(slices.Values(x))
	if n := len(s); n%2 == 1 {
		return s[n/2]
	} else {
		return (s[n/2-1] + s[n/2]) / 2
	}
}
