package schedule

import (
	"context"
	"encoding/json"
	"fmt"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

// ruleItems applies one rule now to every subject in scope (the whole fleet
// when airframeID is empty) with set-based reads: the database sums each
// subject's use (store.RuleUsage: one statement, no flight rows shipped to
// Go), then the rule's events and stored health views come in one read each,
// so the cost is a few statements per rule, not a few per subject. Judging
// as of a past moment (takeoff.go) still reads the flights (load), since it
// sums up to many moments.
func (p *Programme) ruleItems(ctx context.Context, r *fleet.ServiceRule, airframeID string, packs []string,
	now time.Time) ([]*fleet.DueItem, []string, error) {
	subs, err := p.DB.RuleUsage(ctx, r, airframeID, packs, now.Add(-p.Window))
	if err != nil || len(subs) == 0 {
		return nil, nil, err
	}
	ids := make([]string, len(subs))
	for i, s := range subs {
		ids[i] = s.ID
	}
	events := map[string][]*fleet.Event{}
	if len(r.OnEvents) > 0 {
		evs, err := p.DB.ScopeEvents(ctx, r.OnEvents, airframeID, ids)
		if err != nil {
			return nil, nil, err
		}
		// As SubjectEvents: an airframe's events are those on it, a part's
		// those naming it (openEvent applies the counting start).
		for _, e := range evs {
			if r.AppliesTo == "airframe" && e.AirframeID != nil {
				events[*e.AirframeID] = append(events[*e.AirframeID], e)
			} else if r.AppliesTo != "airframe" && e.PartID != nil {
				events[*e.PartID] = append(events[*e.PartID], e)
			}
		}
	}
	var views map[string]json.RawMessage
	switch {
	case !healthRule(r):
	case r.AppliesTo == "airframe":
		views, err = p.DB.AirframeTrendsOf(ctx, ids)
	default:
		views, err = p.DB.PartHealths(ctx, ids)
	}
	if err != nil {
		return nil, nil, err
	}
	items := make([]*fleet.DueItem, len(subs))
	for i, s := range subs {
		h := &history{events: events[s.ID], view: views[s.ID], viewRead: views != nil,
			summed: &usage{hours: s.Used.Hours, flights: s.Used.Flights, revolutions: s.Used.Revolutions, cycles: s.Used.Cycles,
				recentHours: s.Recent.Hours, recentFlights: s.Recent.Flights, recentRevolutions: s.Recent.Revolutions,
				recentCycles: s.Recent.Cycles}}
		if s.LastDone != nil {
			h.done = []time.Time{*s.LastDone} // judging now, only the latest counts (lastDone)
		}
		if items[i], err = p.evaluate(ctx, r, s.Subject, h, now, false); err != nil {
			return nil, nil, fmt.Errorf("rule %q on %s: %w", r.Name, s.Name, err)
		}
	}
	return items, ids, nil
}

// healthRule reports whether a rule reads health views (healthLimits).
func healthRule(r *fleet.ServiceRule) bool {
	return r.BearingPct != nil || r.SoHBelowPct != nil || r.IRRisePct != nil || r.EfficiencyRisePct != nil ||
		r.VibrationRisePct != nil
}
