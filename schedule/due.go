package schedule

import (
	"context"
	"runtime"
	"time"

	"golang.org/x/sync/errgroup"

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
	// HistoriesAtOnce is how many rule histories a verdict as of a moment
	// reads ahead at once (0: 4; 1: none ahead, each as its rule is judged).
	HistoriesAtOnce int
}

// NewProgramme returns a programme over the store with default settings.
func NewProgramme(db *store.DB, hs *health.Service) *Programme {
	return &Programme{DB: db, Health: hs, Window: 30 * 24 * time.Hour, Now: time.Now}
}

// RecomputeAirframe rewrites the due items of one airframe, its fitted
// parts and the given packs (e.g. those of a flight just recorded).
func (p *Programme) RecomputeAirframe(ctx context.Context, airframeID string, packs []string) (int, error) {
	return p.RecomputeAirframeBeside(ctx, airframeID, packs, nil)
}

// RecomputeAirframeBeside is RecomputeAirframe started beside a health
// refresh of the same airframe (nil: none under way): the rules' sums and
// events are read at once, and a rule takes the health views only once the
// refresh has ended, those it stored from it and the rest from the store,
// so the list is the one computed after the refresh, and most of its
// statements overlap it.
func (p *Programme) RecomputeAirframeBeside(ctx context.Context, airframeID string, packs []string, fresh *health.Refreshing) (int, error) {
	items, subjects, err := p.compute(ctx, airframeID, packs, fresh)
	if err != nil {
		return 0, err
	}
	return len(items), p.DB.ReplaceDue(ctx, airframeID, subjects, items, p.Notify)
}

// RecomputeFleet rewrites the whole due list in one transaction.
func (p *Programme) RecomputeFleet(ctx context.Context) (int, error) {
	items, _, err := p.compute(ctx, "", nil, nil)
	if err != nil {
		return 0, err
	}
	return len(items), p.DB.ReplaceDue(ctx, "", nil, items, p.Notify)
}

func (p *Programme) compute(ctx context.Context, airframeID string, packs []string, fresh *health.Refreshing) ([]*fleet.DueItem, []string, error) {
	rules, err := p.DB.Rules(ctx)
	if err != nil {
		return nil, nil, err
	}
	now := p.Now().UTC()
	// Each rule is a few set-based statements; the rules and the notices
	// run side by side on a bounded pool (one per CPU), so one statement's
	// wait overlaps another's work. One airframe's statements are short and
	// mostly wait on the database, so there four run at once even on two
	// CPUs (DEVELOPERS.md, after an ingest). Order is kept: rules in name
	// order, then notices.
	type result struct {
		items    []*fleet.DueItem
		subjects []string
	}
	out := make([]result, len(rules)+1)
	g, gctx := errgroup.WithContext(ctx)
	limit := runtime.GOMAXPROCS(0)
	if airframeID != "" {
		limit = max(limit, 4)
	}
	g.SetLimit(limit)
	for i, r := range rules {
		if !r.Enabled {
			continue
		}
		g.Go(func() (err error) {
			out[i].items, out[i].subjects, err = p.ruleItems(gctx, r, airframeID, packs, now, fresh)
			return err
		})
	}
	g.Go(func() error {
		// Open notices join the list, judged now like the rules.
		notices, err := p.noticeDueItems(gctx, store.NoticeScope{AirframeID: airframeID, Packs: packs, At: now})
		for _, it := range notices {
			out[len(rules)].items, out[len(rules)].subjects = append(out[len(rules)].items, it), append(out[len(rules)].subjects, it.SubjectID)
		}
		return err
	})
	if err := g.Wait(); err != nil {
		return nil, nil, err
	}
	var items []*fleet.DueItem
	var subjects []string
	for _, r := range out {
		items, subjects = append(items, r.items...), append(subjects, r.subjects...)
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
