package schedule_test

import (
	"strings"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// hasCode reports whether a readiness list carries an item with the code.
func hasCode(items []fleet.ReadinessItem, code string) bool {
	for _, it := range items {
		if it.Code == code {
			return true
		}
	}
	return false
}

// softwarePart registers a part of a software kind running version.
func (b *bench) softwarePart(kind fleet.PartKind, pn, version string) *fleet.Part {
	b.t.Helper()
	p, err := b.db.CreatePart(b.ctx, &fleet.Part{Kind: kind, Serial: string(kind) + "-" + pn + "-" + version,
		PartNumber: pn, SoftwareVersion: &version})
	if err != nil {
		b.t.Fatalf("create %s: %v", kind, err)
	}
	return p
}

// A software change is a work record with action update; the history keeps
// every version with its span, the part carries the new one, and a PATCH
// cannot rewrite it. A flight whose log reports other software than the
// register held at take-off opens a software_mismatch event; one that
// matches, or flew before the update with the old version, does not.
func TestSoftwareHistoryAndLogMismatch(t *testing.T) {
	b := newBench(t, false)
	a := b.airframe("SW-1", "Surveyor 4")
	b.fullQuad(a, b.ago(30*day), 0, "PR-1")
	fc := b.softwarePart(fleet.KindFlightController, "FC-7", "4.1.0")
	b.fit(a, fc, "", b.ago(30*day))

	// The update record: software_from is checked against the register.
	from := "4.0.9"
	_, err := b.db.CreateWorkRecord(b.ctx, &fleet.WorkRecord{At: b.ago(10 * day), PartID: &fc.ID, Action: "update",
		Work: "flashed", PerformedBy: "K. L.", SoftwareFrom: &from, SoftwareTo: sp("4.2.0")})
	if fleet.ErrorCode(err) != fleet.ECONFLICT {
		t.Fatalf("update from the wrong version: %v, want conflict", err)
	}
	upd := b.work(fleet.WorkRecord{At: b.ago(10 * day), PartID: &fc.ID, Action: "update", SoftwareTo: sp("4.2.0")})
	if upd.SoftwareFrom == nil || *upd.SoftwareFrom != "4.1.0" || upd.AirframeID == nil || *upd.AirframeID != a.ID {
		t.Fatalf("update record: from %v, airframe %v", upd.SoftwareFrom, upd.AirframeID)
	}
	p, _ := b.db.Part(b.ctx, fc.ID)
	if p.SoftwareVersion == nil || *p.SoftwareVersion != "4.2.0" {
		t.Fatalf("part runs %v after the update", p.SoftwareVersion)
	}
	hist, err := b.db.SoftwareHistory(b.ctx, fc.ID)
	if err != nil {
		t.Fatal(err)
	}
	if len(hist) != 2 || hist[0].Version != "4.2.0" || hist[0].To != nil || hist[0].WorkRecordID == nil ||
		*hist[0].WorkRecordID != upd.ID || hist[1].Version != "4.1.0" || hist[1].From != nil ||
		hist[1].To == nil || !hist[1].To.Equal(b.ago(10*day)) {
		t.Fatalf("history %+v", hist)
	}
	// An update dated before the running version's start is refused.
	_, err = b.db.CreateWorkRecord(b.ctx, &fleet.WorkRecord{At: b.ago(11 * day), PartID: &fc.ID, Action: "update",
		Work: "flashed", PerformedBy: "K. L.", SoftwareTo: sp("4.3.0")})
	if fe, ok := err.(*fleet.Error); !ok || fe.Field != "at" {
		t.Fatalf("update before the current version: %v", err)
	}
	// Only an update record changes the version.
	_, err = b.db.UpdatePart(b.ctx, fc.ID, p.Version, func(p *fleet.Part) error {
		p.SoftwareVersion = sp("9.9.9")
		return nil
	})
	if fe, ok := err.(*fleet.Error); !ok || fe.Field != "software_version" {
		t.Fatalf("PATCH of the software version: %v", err)
	}

	flight := func(at time.Time, software string) *fleet.Flight {
		t.Helper()
		out, err := b.db.CreateFlight(b.ctx, &fleet.Flight{AirframeID: a.ID, Pilot: "P", TakeoffAt: at,
			LandingAt: at.Add(20 * time.Minute), Software: &software})
		if err != nil {
			t.Fatal(err)
		}
		return out
	}
	mismatches := func(f *fleet.Flight) []*fleet.Event {
		evs, _, err := b.db.Events(b.ctx, store.EventFilter{FlightID: f.ID, Kind: "software_mismatch"}, store.Page{Limit: 10})
		if err != nil {
			t.Fatal(err)
		}
		return evs
	}
	if n := len(mismatches(flight(b.ago(12*day), "4.1.0"))); n != 0 {
		t.Fatalf("old version before the update: %d mismatch events", n)
	}
	if n := len(mismatches(flight(b.ago(5*day), "4.2"))); n != 0 { // 4.2 is 4.2.0
		t.Fatalf("matching version: %d mismatch events", n)
	}
	evs := mismatches(flight(b.ago(4*day), "4.1.0"))
	if len(evs) != 1 || evs[0].PartID == nil || *evs[0].PartID != fc.ID || !strings.Contains(evs[0].Detail, "4.2.0") {
		t.Fatalf("stale version after the update: %+v", evs)
	}
	// A kind named in the report with none fitted is a mismatch too.
	evs = mismatches(flight(b.ago(3*day), "flight_controller=4.2.0, gnss=1.0"))
	if len(evs) != 1 || !strings.Contains(evs[0].Detail, "no gnss fitted") {
		t.Fatalf("gnss not in the register: %+v", evs)
	}
}

// A discrepancy found by an inspection stays open on the airframe; marked
// grounding it blocks readiness (judged at the moment asked), a
// non-grounding one warns, a return to service is refused while a grounding
// one is open, and a later record clears it.
func TestDiscrepancyOpensBlocksAndClears(t *testing.T) {
	b := newBench(t, false)
	a := b.airframe("DS-1", "Surveyor 4")
	motors, _ := b.fullQuad(a, b.ago(30*day), 0, "PR-1")
	rd, err := b.p.Readiness(b.ctx, a.ID, nil)
	if err != nil || !rd.Ready {
		t.Fatalf("clean airframe: %v %+v", err, rd)
	}
	insp := b.work(fleet.WorkRecord{At: b.ago(2 * day), AirframeID: &a.ID, Action: "inspect", Work: "50 h inspection",
		ApprovedBy: sp("R. Osei"), CertificateNumber: sp("RP-4471902"), CertificateKind: sp("remote pilot"),
		Discrepancies: []*fleet.Discrepancy{
			{Description: "arm 2 cracked at the root", Grounding: true},
			{Description: "m3 bearing noisy", PartID: &motors[2].ID},
		}})
	if len(insp.Discrepancies) != 2 || insp.Discrepancies[0].AirframeID == nil || insp.Discrepancies[0].PartID != nil ||
		insp.Discrepancies[1].PartID == nil || *insp.Discrepancies[1].PartID != motors[2].ID {
		t.Fatalf("discrepancies recorded: %+v", insp.Discrepancies)
	}
	rd, _ = b.p.Readiness(b.ctx, a.ID, nil)
	if rd.Ready || !hasCode(rd.Blockers, fleet.ReadyGroundingDiscrepancy) || !hasCode(rd.Warnings, fleet.ReadyOpenDiscrepancy) {
		t.Fatalf("open discrepancies: %+v", rd)
	}
	// A return to service with the grounding item open is refused.
	_, err = b.db.CreateWorkRecord(b.ctx, &fleet.WorkRecord{At: b.ago(day), AirframeID: &a.ID, Action: "repair",
		Work: "nothing", PerformedBy: "K", ApprovedBy: sp("R. Osei"), CertificateNumber: sp("RP-4471902"),
		CertificateKind: sp("remote pilot"), ReturnToService: sp("airworthy")})
	if fe, ok := err.(*fleet.Error); !ok || fe.Field != "return_to_service" {
		t.Fatalf("return to service over an open grounding discrepancy: %v", err)
	}
	// A return to service needs the approver's certificate.
	_, err = b.db.CreateWorkRecord(b.ctx, &fleet.WorkRecord{At: b.ago(day), AirframeID: &a.ID, Action: "repair",
		Work: "arm replaced", PerformedBy: "K", ApprovedBy: sp("R. Osei"), ReturnToService: sp("airworthy")})
	if fe, ok := err.(*fleet.Error); !ok || fe.Field != "certificate_number" {
		t.Fatalf("return to service without a certificate: %v", err)
	}
	fix := b.work(fleet.WorkRecord{At: b.ago(day), AirframeID: &a.ID, Action: "repair", Work: "arm 2 replaced",
		ApprovedBy: sp("R. Osei"), CertificateNumber: sp("RP-4471902"), CertificateKind: sp("remote pilot"),
		ReturnToService: sp("I certify the airframe airworthy for return to service"),
		Clears:          []string{insp.Discrepancies[0].ID}})
	rd, _ = b.p.Readiness(b.ctx, a.ID, nil)
	if !rd.Ready || !hasCode(rd.Warnings, fleet.ReadyOpenDiscrepancy) {
		t.Fatalf("after the clearing record: %+v", rd)
	}
	open := true
	list, _, _ := b.db.Discrepancies(b.ctx, store.DiscrepancyFilter{AirframeID: a.ID, Open: &open}, store.Page{Limit: 10})
	if len(list) != 1 || list[0].Description != "m3 bearing noisy" {
		t.Fatalf("open after clearing: %+v", list)
	}
	closed := false
	list, _, _ = b.db.Discrepancies(b.ctx, store.DiscrepancyFilter{AirframeID: a.ID, Open: &closed}, store.Page{Limit: 10})
	if len(list) != 1 || list[0].ClearedBy == nil || *list[0].ClearedBy != fix.ID {
		t.Fatalf("cleared: %+v", list)
	}
	// Clearing it twice is refused.
	_, err = b.db.CreateWorkRecord(b.ctx, &fleet.WorkRecord{At: b.ago(day / 2), AirframeID: &a.ID, Action: "inspect",
		Work: "again", PerformedBy: "K", Clears: []string{insp.Discrepancies[0].ID}})
	if fe, ok := err.(*fleet.Error); !ok || fe.Field != "clears[0]" {
		t.Fatalf("clearing a cleared discrepancy: %v", err)
	}
	// The noisy motor's item leaves the airframe with the motor.
	if _, err := b.db.Remove(b.ctx, a.ID, store.RemovalRequest{PartID: motors[2].ID, At: b.ago(day / 4)}); err != nil {
		t.Fatal(err)
	}
	rd, _ = b.p.Readiness(b.ctx, a.ID, nil)
	if hasCode(rd.Warnings, fleet.ReadyOpenDiscrepancy) {
		t.Fatalf("a removed part's discrepancy still warns: %+v", rd.Warnings)
	}
}
