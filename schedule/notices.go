package schedule

import (
	"context"
	"fmt"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// Compliance computes where each subject in scope stands with the notices
// (all active ones when ids is empty) at the moment sc.At: applicability
// from the register's history (fits, software versions, models), compliance
// from the work records naming the notice, not-applicable decisions, and
// the window. A subject the notice does not apply to at that moment is left
// out unless a record or decision names it.
func (p *Programme) Compliance(ctx context.Context, sc store.NoticeScope, ids ...string) ([]*fleet.Compliance, error) {
	all, err := p.DB.ActiveNotices(ctx)
	if err != nil {
		return nil, err
	}
	return p.complianceOf(ctx, all, sc, ids...)
}

// complianceOf is Compliance with the active notices already read.
func (p *Programme) complianceOf(ctx context.Context, all []*fleet.Notice, sc store.NoticeScope, ids ...string) ([]*fleet.Compliance, error) {
	var notices []*fleet.Notice
	for _, n := range all {
		if len(ids) == 0 || contains(ids, n.ID) {
			notices = append(notices, n)
		}
	}
	if len(notices) == 0 {
		return nil, nil
	}
	facts, err := p.DB.LoadNoticeFacts(ctx, notices, sc)
	if err != nil {
		return nil, err
	}
	last := map[string]store.NoticeRecord{} // notice/subject -> latest record (records come in time order)
	for _, r := range facts.Records {
		last[r.NoticeID+"/"+r.SubjectID] = r
	}
	var out []*fleet.Compliance
	for _, n := range notices {
		issued := n.IssuedAt()
		if sc.At.Before(issued) {
			continue
		}
		for _, s := range facts.Subjects {
			key := n.ID + "/" + s.ID
			rec, done := last[key]
			dec := facts.Decisions[key]
			spans := n.Applicable(s.Kind, s.ID, facts.Register)
			since := spans.FirstFrom(issued, sc.At)
			if !spans.Contains(sc.At) && !done && dec == nil {
				continue
			}
			c := &fleet.Compliance{NoticeID: n.ID, Reference: n.Reference, Category: n.Category, SubjectKind: s.Kind,
				SubjectID: s.ID, Subject: s.Name, AirframeID: s.AirframeID, ApplicableSince: since, Usage: []fleet.LimitUsage{}}
			if done {
				c.CompliedAt, c.WorkRecordID = &rec.At, &rec.WorkRecordID
			}
			switch {
			case dec != nil:
				c.Status, c.Reason, c.DecidedBy, c.DecidedAt = fleet.ComplianceNotApplicable, &dec.Reason, &dec.DecidedBy, &dec.DecidedAt
			case done && !n.Window.Recurring:
				c.Status = fleet.ComplianceComplied
			case since == nil && !done:
				continue // applies now but only from before the issue: cannot happen; kept safe
			default:
				from := issued
				if since != nil {
					from = *since
				}
				var lastDone *time.Time
				if done {
					lastDone = &rec.At
				}
				start := n.WindowStart(from, lastDone)
				var use fleet.NoticeUse
				if n.Window.FlightHours != nil || n.Window.Flights != nil {
					if use, err = p.DB.SubjectUse(ctx, s, start, sc.At, p.Window); err != nil {
						return nil, fmt.Errorf("notice %s on %s: %w", n.Reference, s.Name, err)
					}
				}
				st := n.Window.Evaluate(start, sc.At, use)
				c.WindowStart, c.Usage, c.Fraction, c.DueReason, c.DueAt = &st.Start, st.Usage, st.Fraction, st.Reason, st.DueAt
				c.DueStatus = &st.Status
				c.Status = fleet.ComplianceOpen
				if done && st.Status != fleet.DueOverdue {
					c.Status = fleet.ComplianceComplied // recurring: complied, next due within the window
				}
			}
			out = append(out, c)
		}
	}
	return out, nil
}

// noticeItems adds the active notices' readiness items for the airframe at
// the moment at: a mandatory notice open past its window blocks, an
// advisory one warns, and either warns when due soon.
func (p *Programme) noticeItems(ctx context.Context, notices []*fleet.Notice, a *fleet.Airframe, at time.Time, block, warn note) error {
	cs, err := p.complianceOf(ctx, notices, store.NoticeScope{AirframeID: a.ID, At: at})
	if err != nil {
		return err
	}
	noticeItemsOf(cs, block, warn)
	return nil
}

// noticeItemsOf judges the compliance of an airframe's subjects.
func noticeItemsOf(cs []*fleet.Compliance, block, warn note) {
	for _, c := range cs {
		if c.DueStatus == nil || c.Status == fleet.ComplianceNotApplicable {
			continue
		}
		switch {
		case *c.DueStatus == fleet.DueOverdue && c.Category == fleet.NoticeMandatory:
			block(fleet.ReadyNoticeOverdue, c.Subject, "mandatory notice %s is past its compliance window on %s (%s)", c.Reference, c.Subject, c.DueReason)
		case *c.DueStatus == fleet.DueOverdue:
			warn(fleet.ReadyAdvisoryOverdue, c.Subject, "advisory notice %s is past its compliance window on %s (%s)", c.Reference, c.Subject, c.DueReason)
		case *c.DueStatus == fleet.DueSoon:
			warn(fleet.ReadyNoticeDueSoon, c.Subject, "%s notice %s is due soon on %s (%s)", c.Category, c.Reference, c.Subject, c.DueReason)
		}
	}
}

// noticeDueItems turns the open compliance of a scope into due-list items.
func (p *Programme) noticeDueItems(ctx context.Context, sc store.NoticeScope) ([]*fleet.DueItem, error) {
	cs, err := p.Compliance(ctx, sc)
	if err != nil {
		return nil, err
	}
	var items []*fleet.DueItem
	for _, c := range cs {
		if c.DueStatus == nil {
			continue
		}
		it := &fleet.DueItem{NoticeID: &c.NoticeID, Action: "comply", SubjectKind: c.SubjectKind, SubjectID: c.SubjectID,
			Subject: c.Subject, AirframeID: c.AirframeID, LastDoneAt: c.CompliedAt, Since: c.WindowStart, Usage: c.Usage,
			Fraction: c.Fraction, Status: *c.DueStatus, Grounding: c.Category == fleet.NoticeMandatory,
			Reason: c.DueReason, ForecastDate: c.DueAt, ComputedAt: sc.At}
		items = append(items, it)
	}
	return items, nil
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}
