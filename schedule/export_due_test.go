package schedule

import (
	"context"
	"fmt"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
)

// DueSetBased is the due list of a scope as RecomputeFleet and
// RecomputeAirframe compute it (usage summed by the database), unstored.
func (p *Programme) DueSetBased(ctx context.Context, airframeID string, packs []string) ([]*fleet.DueItem, error) {
	items, _, err := p.compute(ctx, airframeID, packs, nil)
	return items, err
}

// DueOneByOne is the same list computed the way it was before the usage
// was summed in SQL: each rule on each subject from its flights read one
// row each and summed in Go (load, history.sum), with its own reads of
// work records, events and health views. The reference the set-based
// path is checked against; notices are left out (the two share them).
func (p *Programme) DueOneByOne(ctx context.Context, airframeID string, packs []string) ([]*fleet.DueItem, error) {
	rules, err := p.DB.Rules(ctx)
	if err != nil {
		return nil, err
	}
	now := p.Now().UTC()
	var items []*fleet.DueItem
	for _, r := range rules {
		if !r.Enabled {
			continue
		}
		subs, err := p.DB.RuleSubjects(ctx, r, airframeID, packs)
		if err != nil {
			return nil, err
		}
		for _, s := range subs {
			h, err := p.load(ctx, r, s, now, nil)
			if err != nil {
				return nil, err
			}
			it, err := p.evaluate(ctx, r, s, h, now, false)
			if err != nil {
				return nil, fmt.Errorf("rule %q on %s: %w", r.Name, s.Name, err)
			}
			items = append(items, it)
		}
	}
	return items, nil
}

// DueBeside is DueSetBased computed beside a health refresh under way, as
// RecomputeAirframeBeside computes it, unstored.
func (p *Programme) DueBeside(ctx context.Context, airframeID string, packs []string, fresh *health.Refreshing) ([]*fleet.DueItem, error) {
	items, _, err := p.compute(ctx, airframeID, packs, fresh)
	return items, err
}
