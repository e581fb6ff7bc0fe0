package schedule

import (
	"context"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/store"
)

// Programme applies the service rules to the fleet: the due list, its
// forecasts and the readiness answers built on it.
type Programme struct {
	DB     *store.DB
	Health *health.Service
	// Window is the trailing utilisation window for forecasts (default 30 days).
	Window time.Duration
	Now    func() time.Time
	// Notify, when set, is called for each status change inside the
	// transaction that writes the due list (the outbox).
	Notify store.DueChange
}

// NewProgramme returns a programme over the store with default settings.
func NewProgramme(db *store.DB, hs *health.Service) *Programme {
	return &Programme{DB: db, Health: hs, Window: 30 * 24 * time.Hour, Now: time.Now}
}

// RecomputeAirframe rewrites the due items of one airframe, its fitted
// parts and the given packs (e.g. those of a flight just recorded).
func (p *Programme) RecomputeAirframe(ctx context.Context, airframeID string, packs []string) (int, error) {
	items, subjects, err := p.compute(ctx, airframeID, packs)
	if err != nil {
		return 0, err
	}
	return len(items), p.DB.ReplaceDue(ctx, airframeID, subjects, items, p.Notify)
}

// RecomputeFleet rewrites the whole due list in one transaction.
func (p *Programme) RecomputeFleet(ctx context.Context) (int, error) {
	items, _, err := p.compute(ctx, "", nil)
	if err != nil {
		return 0, err
	}
	return len(items), p.DB.ReplaceDue(ctx, "", nil, items, p.Notify)
}

func (p *Programme) compute(ctx context.Context, airframeID string, packs []string) ([]*fleet.DueItem, []string, error) {
	rules, err := p.DB.Rules(ctx)
	if err != nil {
		return nil, nil, err
	}
	now := p.Now().UTC()
	var items []*fleet.DueItem
	var subjects []string
	for _, r := range rules {
		if !r.Enabled {
			continue
		}
		its, subs, err := p.ruleItems(ctx, r, airframeID, packs, now)
		if err != nil {
			return nil, nil, err
		}
		items, subjects = append(items, its...), append(subjects, subs...)
	}
	// Open notices join the list, judged now like the rules.
	notices, err := p.noticeDueItems(ctx, store.NoticeScope{AirframeID: airframeID, Packs: packs, At: now})
	if err != nil {
		return nil, nil, err
	}
	for _, it := range notices {
		items, subjects = append(items, it), append(subjects, it.SubjectID)
	}
	return items, subjects, nil
}

// Recomputed says what RecomputeAll did and how long each part took.
type Recomputed struct {
	HealthViews, DueItems, Judged  int
	HealthTook, JudgeTook, DueTook time.Duration
}

// RecomputeAll recomputes every health view, gives a take-off verdict to
// every flight without one, then recomputes the whole due list that rests
// on them (the nightly job, `rotorwright recompute`, after a re-analysis
// and after the demo load).
func (p *Programme) RecomputeAll(ctx context.Context) (Recomputed, error) {
	var r Recomputed
	t0 := time.Now()
	n, err := p.Health.Recompute(ctx, nil)
	r.HealthViews, r.HealthTook = n, time.Since(t0)
	if err != nil {
		return r, err
	}
	t0 = time.Now()
	j, err := p.JudgeUnjudged(ctx, nil)
	r.Judged, r.JudgeTook = j.Flights, time.Since(t0)
	if err != nil {
		return r, err
	}
	t0 = time.Now()
	r.DueItems, err = p.RecomputeFleet(ctx)
	r.DueTook = time.Since(t0)
	return r, err
}
