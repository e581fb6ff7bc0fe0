package schedule_test

import (
	"encoding/json"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/sim"
	"github.com/rotorwright/rotorwright/store"
)

// After an ingest the due list is computed beside the health refresh
// (RecomputeAirframeBeside): its rules take the views the refresh stored,
// as it stored them, instead of reading them back. The list equals the one
// computed after the refresh has ended from the stored views, for rules on
// every kind of view (motor bearing life, pack state of health and
// resistance, airframe trends).
func TestDueBesideRefreshMatchesAfter(t *testing.T) {
	b := newBench(t, true)
	x := b.airframe("BR-X", "X9")
	motors, _ := b.fullQuad(x, b.ago(60*day), 2000, "PR-10")
	pk := b.pack(4, "")
	b.rule(fleet.ServiceRule{AppliesTo: "motor", BearingPct: fp(50)})
	b.rule(fleet.ServiceRule{AppliesTo: "pack", SoHBelowPct: fp(85), IRRisePct: fp(40)})
	b.rule(fleet.ServiceRule{AppliesTo: "airframe", VibrationRisePct: fp(10), EfficiencyRisePct: fp(10)})
	const n = 10
	for i := 0; i < n; i++ {
		spec := sim.DefaultSpec(uint64(610 + i))
		spec.Airframe, spec.Start, spec.SampleHz, spec.DurationS = x.Code, b.ago(time.Duration(2*n-2*i)*day), 5, 240
		spec.Packs[0].Serial = pk.Serial
		spec.VibrationLevel = 0.8 * (1 + 0.2*float64(i))
		b.logged(x, pk, spec)
	}
	flights, _, err := b.db.Flights(b.ctx, store.FlightFilter{AirframeID: x.ID}, store.Page{Limit: 10})
	if err != nil || len(flights) != n {
		t.Fatalf("%d flights, %v", len(flights), err)
	}
	last, packs := flights[len(flights)-1].ID, []string{pk.ID}

	fresh := b.hs.StartRefresh(b.ctx, last)
	beside, err := b.p.DueBeside(b.ctx, x.ID, packs, fresh)
	if err != nil {
		t.Fatal(err)
	}
	if <-fresh.Done(); fresh.Err() != nil {
		t.Fatal(fresh.Err())
	}
	for _, id := range []string{motors[0].ID, pk.ID} {
		if _, ok := fresh.PartView(id); !ok {
			t.Fatalf("the refresh kept no view of %s", id)
		}
	}
	if _, ok := fresh.TrendsView(x.ID); !ok {
		t.Fatal("the refresh kept no trends of the airframe")
	}
	after, err := b.p.DueSetBased(b.ctx, x.ID, packs)
	if err != nil {
		t.Fatal(err)
	}
	got, _ := json.Marshal(beside)
	want, _ := json.Marshal(after)
	if string(got) != string(want) {
		t.Fatalf("beside the refresh:\n%s\nafter it:\n%s", got, want)
	}
	// The health limits were judged, not left out (state of health needs
	// capacity records, which these flights do not give).
	seen := map[string]bool{}
	for _, it := range after {
		for _, l := range it.Usage {
			seen[l.Limit] = true
		}
	}
	for _, name := range []string{"bearing_pct", "ir_rise_pct", "vibration_rise_pct", "efficiency_rise_pct"} {
		if !seen[name] {
			t.Errorf("no due item judged %s (judged: %v)", name, seen)
		}
	}
}
