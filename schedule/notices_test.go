package schedule_test

import (
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

func (b *bench) notice(n fleet.Notice) *fleet.Notice {
	b.t.Helper()
	if n.Title == "" {
		n.Title = "controller firmware fault"
	}
	if n.Revision == "" {
		n.Revision = "1"
	}
	if n.RequiredWork == "" {
		n.RequiredWork = "update the flight controller"
	}
	out, err := b.db.CreateNotice(b.ctx, &n)
	if err != nil {
		b.t.Fatalf("create notice %s: %v", n.Reference, err)
	}
	return out
}

func (b *bench) compliance(n *fleet.Notice, at time.Time) map[string]*fleet.Compliance {
	b.t.Helper()
	cs, err := b.p.Compliance(b.ctx, store.NoticeScope{At: at}, n.ID)
	if err != nil {
		b.t.Fatal(err)
	}
	out := map[string]*fleet.Compliance{}
	for _, c := range cs {
		out[c.Subject] = c
	}
	return out
}

// A mandatory notice on flight controllers of part number FC-7 below 4.2.0,
// within 2 flight hours of falling under it: it applies by part number and
// software range (not to FC-9, not to a controller already on 4.2.0), goes
// overdue with the hours and grounds the airframe; a work record naming it
// complies; a not-applicable decision records its reason and who decided.
func TestMandatoryNoticeByPartNumberSoftwareAndHours(t *testing.T) {
	b := newBench(t, false)
	fc := fleet.KindFlightController
	below := "4.2.0"
	hours := 2.0
	a1, a2, a3 := b.airframe("N-1", "Surveyor 4"), b.airframe("N-2", "Surveyor 4"), b.airframe("N-3", "Surveyor 4")
	start := b.ago(40 * day)
	fcs := map[string]*fleet.Part{}
	for _, x := range []struct {
		a       *fleet.Airframe
		pn, ver string
	}{{a1, "FC-7", "4.1.3"}, {a2, "FC-7", "4.2.0"}, {a3, "FC-9", "4.1.3"}} {
		b.fullQuad(x.a, start, 0, "PR-1")
		p := b.softwarePart(fc, x.pn, x.ver)
		b.fit(x.a, p, "", start)
		fcs[x.a.Code] = p
	}
	n := b.notice(fleet.Notice{Reference: "SB-26-014", IssuedOn: b.ago(20 * day).Format(time.DateOnly), Category: fleet.NoticeMandatory,
		Applicability: fleet.NoticeApplicability{PartKind: &fc, PartNumbers: []string{"FC-7"},
			Software: []fleet.SoftwareRange{{PartKind: fc, Below: &below}}},
		Window: fleet.NoticeWindow{FlightHours: &hours, From: fleet.WindowFromApplicable}})
	cs := b.compliance(n, b.now)
	if len(cs) != 1 || cs[fcs["N-1"].Serial] == nil {
		t.Fatalf("applies to %v, want only %s", keys(cs), fcs["N-1"].Serial)
	}
	c := cs[fcs["N-1"].Serial]
	// It fell under the notice at its issue (the controller ran 4.1.3 before).
	if c.Status != fleet.ComplianceOpen || c.ApplicableSince == nil || !c.ApplicableSince.Equal(b.ago(20*day).Truncate(day)) {
		t.Fatalf("compliance %+v", c)
	}
	// 1.5 h flown since: due soon (0.75 < 0.9 is ok; 1.9 h is due soon).
	b.flight(a1, b.ago(10*day), 90*time.Minute)
	if c = b.compliance(n, b.now)[fcs["N-1"].Serial]; *c.DueStatus != fleet.DueOK {
		t.Fatalf("1.5 of 2 h: %s", *c.DueStatus)
	}
	b.flight(a1, b.ago(9*day), 24*time.Minute)
	if c = b.compliance(n, b.now)[fcs["N-1"].Serial]; *c.DueStatus != fleet.DueSoon || !hasCode(b.readiness(a1).Warnings, fleet.ReadyNoticeDueSoon) {
		t.Fatalf("1.9 of 2 h: %s", *c.DueStatus)
	}
	// A flight before the notice was issued does not count.
	b.flight(a1, b.ago(25*day), 3*time.Hour)
	if c = b.compliance(n, b.now)[fcs["N-1"].Serial]; *c.DueStatus != fleet.DueSoon {
		t.Fatalf("a flight before the issue counted: %s (%s)", *c.DueStatus, c.DueReason)
	}
	b.flight(a1, b.ago(8*day), 12*time.Minute)
	rd := b.readiness(a1)
	if rd.Ready || !hasCode(rd.Blockers, fleet.ReadyNoticeOverdue) {
		t.Fatalf("2.1 of 2 h: readiness %+v", rd)
	}
	if !b.readiness(a2).Ready || !b.readiness(a3).Ready {
		t.Fatal("a notice that does not apply blocked another airframe")
	}
	// As of before the last flight it was not yet overdue (judged at the time).
	if c = b.compliance(n, b.ago(8*day+time.Hour))[fcs["N-1"].Serial]; *c.DueStatus != fleet.DueSoon {
		t.Fatalf("as of before the last flight: %s", *c.DueStatus)
	}
	// The due list carries it, grounding, and the airframe reads grounded.
	b.recompute(a1)
	items, _ := b.db.DueItems(b.ctx, store.DueFilter{AirframeID: a1.ID})
	var due *fleet.DueItem
	for _, it := range items {
		if it.NoticeID != nil && *it.NoticeID == n.ID {
			due = it
		}
	}
	if due == nil || due.Status != fleet.DueOverdue || !due.Grounding || due.Action != "comply" || due.RuleID != nil {
		t.Fatalf("due item %+v", due)
	}
	if got, _ := b.db.Airframe(b.ctx, a1.ID); got.Status != fleet.AirframeGrounded {
		t.Fatalf("airframe status %s", got.Status)
	}
	// A work record naming the notice complies with it.
	rec := b.work(fleet.WorkRecord{At: b.ago(day), PartID: &fcs["N-1"].ID, Action: "update", SoftwareTo: sp("4.2.1"), NoticeID: &n.ID})
	c = b.compliance(n, b.now)[fcs["N-1"].Serial]
	if c == nil || c.Status != fleet.ComplianceComplied || c.WorkRecordID == nil || *c.WorkRecordID != rec.ID {
		t.Fatalf("after the compliance record: %+v", c)
	}
	if !b.readiness(a1).Ready {
		t.Fatalf("complied: %+v", b.readiness(a1))
	}
	b.recompute(a1)
	if got, _ := b.db.Airframe(b.ctx, a1.ID); got.Status == fleet.AirframeGrounded {
		t.Fatal("still grounded after compliance")
	}
	// Not applicable, with a reason and who decided.
	fc4 := b.softwarePart(fc, "FC-7", "4.0.0")
	if c = b.compliance(n, b.now)[fc4.Serial]; c == nil || c.Status != fleet.ComplianceOpen {
		t.Fatalf("a controller in stock in range: %+v", c)
	}
	d, err := b.db.DecideNotApplicable(b.ctx, &store.NoticeDecision{NoticeID: n.ID, SubjectKind: "part", SubjectID: fc4.ID,
		Reason: "board reworked by the maker (rework tag 7731)"})
	if err != nil || d.DecidedBy != "test" {
		t.Fatalf("decision: %v %+v", err, d)
	}
	c = b.compliance(n, time.Now())[fc4.Serial] // decided by the database clock, after the bench's
	if c.Status != fleet.ComplianceNotApplicable || c.Reason == nil || *c.Reason != d.Reason || *c.DecidedBy != "test" || c.DueStatus != nil {
		t.Fatalf("not applicable: %+v", c)
	}
	if _, err := b.db.DecideNotApplicable(b.ctx, &store.NoticeDecision{NoticeID: n.ID, SubjectKind: "part", SubjectID: fc4.ID}); fleet.ErrorCode(err) != fleet.EINVALID {
		t.Fatalf("a decision without a reason: %v", err)
	}
}

// An advisory notice on an airframe model due by a date warns once the date
// has passed; after a fit change brings a controller in range onto another
// airframe, a notice on the software of fitted controllers applies to it.
func TestAdvisoryNoticeByModelAndDateAndRecomputeAfterFit(t *testing.T) {
	b := newBench(t, false)
	fc := fleet.KindFlightController
	a1, a2 := b.airframe("M-1", "Surveyor 4"), b.airframe("M-2", "Lifter 8")
	b.fullQuad(a1, b.ago(40*day), 0, "PR-1")
	b.fullQuad(a2, b.ago(40*day), 0, "PR-1")
	due := b.ago(2 * day).Format(time.DateOnly)
	adv := b.notice(fleet.Notice{Reference: "SL-26-003", IssuedOn: b.ago(30 * day).Format(time.DateOnly), Category: fleet.NoticeAdvisory,
		Applicability: fleet.NoticeApplicability{AirframeModels: []string{"Surveyor 4"}}, Window: fleet.NoticeWindow{DueOn: &due}})
	cs := b.compliance(adv, b.now)
	if len(cs) != 1 || cs["M-1"] == nil || *cs["M-1"].DueStatus != fleet.DueOverdue {
		t.Fatalf("by model and date: %+v", cs)
	}
	if c := b.compliance(adv, b.ago(10*day))["M-1"]; *c.DueStatus != fleet.DueOK {
		t.Fatalf("before the date: %s", *c.DueStatus)
	}
	rd := b.readiness(a1)
	if !rd.Ready || !hasCode(rd.Warnings, fleet.ReadyAdvisoryOverdue) {
		t.Fatalf("advisory overdue must warn, not block: %+v", rd)
	}
	// Airframes carrying a controller below 4.2.0, 10 days from falling under it.
	below := "4.2.0"
	days := 10
	mand := b.notice(fleet.Notice{Reference: "AD-26-01", IssuedOn: b.ago(30 * day).Format(time.DateOnly), Category: fleet.NoticeMandatory,
		Applicability: fleet.NoticeApplicability{Software: []fleet.SoftwareRange{{PartKind: fc, Below: &below}}},
		Window:        fleet.NoticeWindow{Days: &days, From: fleet.WindowFromApplicable}})
	if cs := b.compliance(mand, b.now); len(cs) != 0 {
		t.Fatalf("no controllers fitted, yet it applies to %v", keys(cs))
	}
	old := b.softwarePart(fc, "FC-7", "4.1.0")
	b.fit(a2, old, "", b.ago(12*day))
	cs = b.compliance(mand, b.now)
	if c := cs["M-2"]; c == nil || !c.ApplicableSince.Equal(b.ago(12*day)) || *c.DueStatus != fleet.DueOverdue {
		t.Fatalf("after the fit: %+v", cs)
	}
	if hasCode(b.readiness(a1).Blockers, fleet.ReadyNoticeOverdue) || !hasCode(b.readiness(a2).Blockers, fleet.ReadyNoticeOverdue) {
		t.Fatal("the fit change did not move the notice to M-2 alone")
	}
	// Moving the controller to M-1: M-1 falls under it now (window opens
	// now), M-2 no longer carries one.
	if _, err := b.db.Remove(b.ctx, a2.ID, store.RemovalRequest{PartID: old.ID, At: b.ago(time.Hour)}); err != nil {
		t.Fatal(err)
	}
	b.fit(a1, old, "", b.ago(30*time.Minute))
	cs = b.compliance(mand, b.now)
	if cs["M-2"] != nil || cs["M-1"] == nil || *cs["M-1"].DueStatus != fleet.DueOK {
		t.Fatalf("after moving the controller: %+v", cs)
	}
	// A revision that widens the range to 4.3.0 keeps it; one that narrows it
	// below 4.1.0 drops it.
	cur, _ := b.db.Notice(b.ctx, mand.ID)
	narrow := "4.1.0"
	if _, err := b.db.UpdateNotice(b.ctx, mand.ID, cur.Version, func(n *fleet.Notice) error {
		n.Revision, n.Applicability.Software[0].Below = "2", &narrow
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	if cs := b.compliance(mand, b.now); len(cs) != 0 {
		t.Fatalf("after revision 2 narrowed the range: %v", keys(cs))
	}
}

func keys(m map[string]*fleet.Compliance) []string {
	var out []string
	for k := range m {
		out = append(out, k)
	}
	return out
}
