package schedule

import (
	"context"
	"encoding/json"
	"fmt"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
)

// ruleItems applies one rule now to every subject in scope (the whole fleet
// when airframeID is empty) with set-based reads: the database sums each
// subject's use (store.RuleUsage: one statement, no flight rows shipped to
// Go), then the rule's events and stored health views come in one read each,
// so the cost is a few statements per rule, not a few per subject. Judging
// as of a past moment (takeoff.go) still reads the flights (load), since it
// sums up to many moments. With a refresh under way (fresh), a health rule
// takes the views once it has ended (storedViews).
func (p *Programme) ruleItems(ctx context.Context, r *fleet.ServiceRule, airframeID string, packs []string,
	now time.Time, fresh *health.Refreshing) ([]*fleet.DueItem, []string, error) {
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
	var stored map[string]json.RawMessage
	switch {
	case !healthRule(r):
	case r.AppliesTo == "airframe":
		stored, err = storedViews(ctx, ids, fresh, (*health.Refreshing).TrendsView, p.DB.AirframeTrendsOf)
	default:
		stored, err = storedViews(ctx, ids, fresh, (*health.Refreshing).PartView, p.DB.PartHealths)
	}
	if err != nil {
		return nil, nil, err
	}
	items := make([]*fleet.DueItem, len(subs))
	for i, s := range subs {
		h := &history{events: events[s.ID], view: stored[s.ID], viewRead: stored != nil,
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

// storedViews are the stored views of the subjects by id: with a refresh
// under way (fresh), once it has ended, those it stored as it stored them
// and the rest read; else all read. A failed refresh may have stored some
// views and not others, so then all are read.
func storedViews(ctx context.Context, ids []string, fresh *health.Refreshing,
	kept func(*health.Refreshing, string) (json.RawMessage, bool),
	read func(context.Context, []string) (map[string]json.RawMessage, error)) (map[string]json.RawMessage, error) {
	if fresh == nil {
		return read(ctx, ids)
	}
	select {
	case <-fresh.Done():
	case <-ctx.Done():
		return nil, ctx.Err()
	}
	if fresh.Err() != nil {
		return read(ctx, ids)
	}
	out := make(map[string]json.RawMessage, len(ids))
	var missing []string
	for _, id := range ids {
		if v, ok := kept(fresh, id); ok {
			out[id] = v
		} else {
			missing = append(missing, id)
		}
	}
	if len(missing) == 0 {
		return out, nil
	}
	rest, err := read(ctx, missing)
	for id, v := range rest {
		out[id] = v
	}
	return out, err
}

// healthRule reports whether a rule reads health views (healthLimits).
func healthRule(r *fleet.ServiceRule) bool {
	return r.BearingPct != nil || r.SoHBelowPct != nil || r.IRRisePct != nil || r.EfficiencyRisePct != nil ||
		r.VibrationRisePct != nil
}
