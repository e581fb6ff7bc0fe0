package schedule_test

import (
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
)

// A pack's flight whose charge was not measured (a manual entry) counts as
// one equivalent full cycle, in the due list's sums and in the pack's
// health view alike, and the view says how many were so counted; a logged
// flight counts its charge over the rated capacity (sum mAh / rated mAh),
// checked against the simulator's own charge. Before, a manual flight added
// nothing, so a pack flown on manual entries never neared a cycle limit.
func TestUnmeasuredPackFlightCountsAFullCycle(t *testing.T) {
	b := newBench(t, false)
	a := b.airframe("SIM-PC", "PC")
	b.fullQuad(a, b.ago(20*day), 2000, "PR-10")
	pk := b.pack(4, "")
	r := b.rule(fleet.ServiceRule{AppliesTo: "pack", Cycles: fp(10)})
	const manual = 3
	for i := range manual {
		b.flight(a, b.ago(time.Duration(12-i)*day), 18*time.Minute, pk)
	}
	tr := b.logged(a, pk, b.spec(a, pk, 731, b.ago(2*day), 5, 300))
	b.recompute(a, pk)

	// The simulator's charge is the reference; the log's figure recovers it
	// within the acceptance tolerance of its tests (0.5 %, telemetry's
	// tolChargeRel), which bounds the sum here as well.
	want := manual*fleet.UnmeasuredPackCycles + tr.ChargeMah/8000
	due := b.usage(b.item(r, pk.ID), "cycles").Used
	near(t, "due list's cycles", due, want, 0.005)
	raw, err := b.db.PartHealth(b.ctx, pk.ID)
	if err != nil {
		t.Fatal(err)
	}
	pv := decode[health.View](t, raw).Pack
	if pv == nil {
		t.Fatal("no pack view")
	}
	near(t, "pack view's cycles", pv.Cycles, want, 0.005)
	if pv.CyclesAssumed != manual || pv.Flights != manual+1 {
		t.Errorf("pack view: %d flights, %d cycles assumed; want %d and %d", pv.Flights, pv.CyclesAssumed, manual+1, manual)
	}
	if d := pv.Cycles - due; d > 1e-9 || d < -1e-9 {
		t.Errorf("pack view %.9g cycles, due list %.9g: they must count alike", pv.Cycles, due)
	}
}
