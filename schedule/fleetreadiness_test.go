package schedule_test

import (
	"reflect"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// wantFleetAgrees fails unless the fleet-wide readiness gives every airframe
// the same answer (verdict, blockers and warnings) as the one-airframe
// readiness route's without packs.
func (b *bench) wantFleetAgrees() {
	b.t.Helper()
	all, err := b.p.FleetReadiness(b.ctx)
	if err != nil {
		b.t.Fatal(err)
	}
	if len(all) == 0 {
		b.t.Fatal("fleet readiness lists no airframes")
	}
	for _, ar := range all {
		one, err := b.p.Readiness(b.ctx, ar.Facts.Airframe.ID, nil)
		if err != nil {
			b.t.Fatal(err)
		}
		if !reflect.DeepEqual(one, ar.Readiness) {
			b.t.Errorf("%s: fleet readiness %+v\nwant the airframe's own %+v", ar.Facts.Airframe.Code, ar.Readiness, one)
		}
	}
}

// The fleet-wide readiness over a fleet in every airframe state the
// readiness codes cover.
func TestFleetReadinessAgreesWithReadiness(t *testing.T) {
	b := newBench(t, true)
	a, props, _ := b.readyQuad("FR-OK")
	held, _, _ := b.readyQuad("FR-HELD")
	if _, err := b.db.UpdateAirframe(b.ctx, held.ID, held.Version, func(a *fleet.Airframe) error {
		a.HoldReason = sp("arm crack")
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	landed, _, _ := b.readyQuad("FR-HARD")
	b.event("hard_landing", landed, nil, b.ago(time.Hour))
	empty, eprops, _ := b.readyQuad("FR-EMPTY")
	if _, err := b.db.Remove(b.ctx, empty.ID, store.RemovalRequest{PartID: eprops[0].ID, At: b.ago(time.Hour)}); err != nil {
		t.Fatal(err)
	}
	b.event("prop_strike", a, props[1], b.ago(time.Hour))
	retired, _, _ := b.readyQuad("FR-RET")
	if _, err := b.db.RetireAirframe(b.ctx, retired.ID, retired.Version); err != nil {
		t.Fatal(err)
	}
	if _, err := b.p.RecomputeFleet(b.ctx); err != nil {
		t.Fatal(err)
	}
	b.wantFleetAgrees()
}
