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
	skipped := 0
	for _, ar := range all {
		one, err := b.p.Readiness(b.ctx, ar.Facts.Airframe.ID, nil)
		if err != nil {
			b.t.Fatal(err)
		}
		if !reflect.DeepEqual(one, ar.Readiness) {
			b.t.Errorf("%s: fleet readiness %+v\nwant the airframe's own %+v", ar.Facts.Airframe.Code, ar.Readiness, one)
		}
		// The fleet reads only the items not ok and the most urgent one:
		// that one is the due list's first, and none not ok is left out.
		due, err := b.db.DueItems(b.ctx, store.DueFilter{AirframeID: ar.Facts.Airframe.ID})
		if err != nil {
			b.t.Fatal(err)
		}
		var want []*fleet.DueItem
		for i, d := range due {
			if i == 0 || d.Status != fleet.DueOK {
				want = append(want, d)
			}
		}
		skipped += len(due) - len(want)
		if !reflect.DeepEqual(ar.Facts.Due, want) {
			b.t.Errorf("%s: fleet due items %v, want %v", ar.Facts.Airframe.Code, ar.Facts.Due, want)
		}
	}
	if skipped == 0 {
		b.t.Error("no ok item after an airframe's first: the reduced read is not exercised")
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
	// The maintenance records: a mandatory notice past its window blocks
	// one airframe, an advisory one warns on another, and open
	// discrepancies (a grounding one on the airframe, one on a motor).
	due := b.ago(2 * day).Format(time.DateOnly)
	b.notice(fleet.Notice{Reference: "AD-FR-1", IssuedOn: b.ago(30 * day).Format(time.DateOnly), Category: fleet.NoticeMandatory,
		Applicability: fleet.NoticeApplicability{AirframeModels: []string{"model-FR-AD"}}, Window: fleet.NoticeWindow{DueOn: &due}})
	b.readyQuad("FR-AD")
	b.notice(fleet.Notice{Reference: "SL-FR-2", IssuedOn: b.ago(30 * day).Format(time.DateOnly), Category: fleet.NoticeAdvisory,
		Applicability: fleet.NoticeApplicability{AirframeModels: []string{"model-FR-OK"}}, Window: fleet.NoticeWindow{DueOn: &due}})
	disc := b.airframe("FR-DISC", "model-FR-DISC")
	motors, _ := b.fullQuad(disc, b.ago(30*day), 0, "PR-RD")
	b.work(fleet.WorkRecord{At: b.ago(day), AirframeID: &disc.ID, Action: "inspect", Work: "50 h inspection",
		ApprovedBy: sp("R. Osei"), CertificateNumber: sp("RP-4471902"), CertificateKind: sp("remote pilot"),
		Discrepancies: []*fleet.Discrepancy{
			{Description: "arm 2 cracked at the root", Grounding: true},
			{Description: "m3 bearing noisy", PartID: &motors[2].ID},
		}})
	if _, err := b.p.RecomputeFleet(b.ctx); err != nil {
		t.Fatal(err)
	}
	b.wantFleetAgrees()
	all, err := b.p.FleetReadiness(b.ctx)
	if err != nil {
		t.Fatal(err)
	}
	got := map[string]*fleet.Readiness{}
	for _, ar := range all {
		got[ar.Facts.Airframe.Code] = ar.Readiness
	}
	// Not only the same as the route: what the records say, so the
	// comparison above covers them.
	if rd := got["FR-AD"]; rd.Ready || !hasCode(rd.Blockers, fleet.ReadyNoticeOverdue) {
		t.Errorf("FR-AD, mandatory notice overdue: %+v", rd)
	}
	if rd := got["FR-OK"]; !hasCode(rd.Warnings, fleet.ReadyAdvisoryOverdue) {
		t.Errorf("FR-OK, advisory notice overdue: %+v", rd)
	}
	if rd := got["FR-DISC"]; rd.Ready || !hasCode(rd.Blockers, fleet.ReadyGroundingDiscrepancy) ||
		!hasCode(rd.Warnings, fleet.ReadyOpenDiscrepancy) {
		t.Errorf("FR-DISC, open discrepancies: %+v", rd)
	}
}
