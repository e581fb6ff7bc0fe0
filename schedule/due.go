package schedule

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"sync"
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
	type task struct {
		r *fleet.ServiceRule
		s store.Subject
	}
	var tasks []task
	for _, r := range rules {
		if !r.Enabled {
			continue
		}
		subs, err := p.DB.RuleSubjects(ctx, r, airframeID, packs)
		if err != nil {
			return nil, nil, err
		}
		for _, s := range subs {
			tasks = append(tasks, task{r, s})
		}
	}
	// Each item is a few independent reads: for a fleet, a few workers
	// overlap their round trips (the pool has connections to spare); for one
	// airframe's dozen items the hand-over costs more than it saves. Order
	// is kept either way.
	workers := 1
	if len(tasks) > 50 {
		workers = 4
	}
	items := make([]*fleet.DueItem, len(tasks))
	errs := make([]error, len(tasks))
	next := make(chan int)
	var wg sync.WaitGroup
	for w := 0; w < workers; w++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range next {
				t := tasks[i]
				if items[i], errs[i] = p.item(ctx, t.r, t.s, now); errs[i] != nil {
					errs[i] = fmt.Errorf("rule %q on %s: %w", t.r.Name, t.s.Name, errs[i])
				}
			}
		}()
	}
	for i := range tasks {
		next <- i
	}
	close(next)
	wg.Wait()
	subjects := make([]string, len(tasks))
	for i, t := range tasks {
		if errs[i] != nil {
			return nil, nil, errs[i]
		}
		subjects[i] = t.s.ID
	}
	return items, subjects, nil
}

// item applies one rule to one subject.
func (p *Programme) item(ctx context.Context, r *fleet.ServiceRule, s store.Subject, now time.Time) (*fleet.DueItem, error) {
	last, err := p.DB.LastDone(ctx, r.ID, s)
	if err != nil {
		return nil, err
	}
	since := s.Start
	if last != nil {
		since = *last
	}
	days := p.Window.Hours() / 24
	u, err := p.DB.UsageSince(ctx, s, since, now.Add(-p.Window))
	if err != nil {
		return nil, err
	}
	it := &fleet.DueItem{RuleID: r.ID, RuleName: r.Name, Action: r.Action, SubjectKind: s.Kind, SubjectID: s.ID,
		Subject: s.Name, AirframeID: s.AirframeID, PartNumber: s.PartNumber, LastDoneAt: last, Since: &since,
		Usage: []fleet.LimitUsage{}, Grounding: r.Grounding, ComputedAt: now}
	// add records one limit; perDay is the trailing use rate (0: no forecast).
	add := func(name string, used, max, perDay float64) {
		lu := fleet.LimitUsage{Limit: name, Used: used, Max: max, Remaining: math.Max(0, max-used), Fraction: used / max}
		if lu.Fraction >= 1 {
			lu.Forecast = &now
		} else if perDay > 0 {
			t := now.Add(time.Duration(lu.Remaining / perDay * 24 * float64(time.Hour)))
			lu.Forecast = &t
		}
		it.Usage = append(it.Usage, lu)
	}
	if r.FlightHours != nil {
		add("flight_hours", u.Hours, *r.FlightHours, u.RecentHours/days)
	}
	if r.Flights != nil {
		add("flights", u.Flights, float64(*r.Flights), u.RecentFlights/days)
	}
	if r.Days != nil {
		add("days", now.Sub(since).Hours()/24, float64(*r.Days), 1)
	}
	if r.Revolutions != nil {
		add("revolutions", u.Revolutions, *r.Revolutions, u.RecentRevolutions/days)
	}
	if r.Cycles != nil {
		add("cycles", u.Cycles, *r.Cycles, u.RecentCycles/days)
	}
	if err := p.healthLimits(ctx, r, s, since, now, add); err != nil {
		return nil, err
	}
	for _, lu := range it.Usage {
		if lu.Fraction > it.Fraction {
			it.Fraction, it.Reason = lu.Fraction, fmt.Sprintf("%s %.4g of %.4g", lu.Limit, lu.Used, lu.Max)
		}
		if lu.Forecast != nil && (it.ForecastDate == nil || lu.Forecast.Before(*it.ForecastDate)) {
			it.ForecastDate = lu.Forecast
		}
	}
	ev, err := p.DB.OpenEvent(ctx, r.OnEvents, s, since)
	if err != nil {
		return nil, err
	}
	if ev != nil {
		it.Fraction, it.ForecastDate = math.Max(it.Fraction, 1), &ev.At
		it.Reason = fmt.Sprintf("open %s event of %s", ev.Kind, ev.At.UTC().Format(time.RFC3339))
	}
	switch {
	case it.Fraction >= 1:
		it.Status = fleet.DueOverdue
	case it.Fraction >= r.WarnAt:
		it.Status = fleet.DueSoon
	default:
		it.Status = fleet.DueOK
	}
	return it, nil
}

// healthLimits adds the limits read from the health views: bearing life
// used since last done, state of health, resistance rise, airframe trends.
func (p *Programme) healthLimits(ctx context.Context, r *fleet.ServiceRule, s store.Subject, since, now time.Time,
	add func(string, float64, float64, float64)) error {
	if r.BearingPct == nil && r.SoHBelowPct == nil && r.IRRisePct == nil && r.EfficiencyRisePct == nil && r.VibrationRisePct == nil {
		return nil
	}
	if s.Kind == "airframe" {
		raw, err := p.DB.AirframeTrends(ctx, s.ID)
		if fleet.ErrorCode(err) == fleet.ENOTFOUND {
			return nil // no logged flights yet
		} else if err != nil {
			return err
		}
		var tv health.TrendsView
		if err := json.Unmarshal(raw, &tv); err != nil {
			return err
		}
		if r.EfficiencyRisePct != nil && tv.EfficiencyIndex != nil {
			add("efficiency_rise_pct", math.Max(0, tv.EfficiencyIndex.RisePct), *r.EfficiencyRisePct, 0)
		}
		if r.VibrationRisePct != nil && tv.Vibration != nil {
			add("vibration_rise_pct", math.Max(0, tv.Vibration.RisePct), *r.VibrationRisePct, 0)
		}
		return nil
	}
	raw, err := p.DB.PartHealth(ctx, s.ID)
	if fleet.ErrorCode(err) == fleet.ENOTFOUND && p.Health != nil {
		v, err := p.Health.Part(ctx, s.ID)
		if err != nil {
			return err
		}
		raw, _ = json.Marshal(v)
	} else if err != nil {
		return err
	}
	var v health.View
	if err := json.Unmarshal(raw, &v); err != nil {
		return err
	}
	if k := v.Pack; k != nil && p.Health != nil && missingLimit(r, k) {
		// A rule newer than the stored view: forecast its limit now.
		fresh, err := p.Health.Part(ctx, s.ID)
		if err != nil {
			return err
		}
		v = *fresh
	}
	if m := v.Motor; r.BearingPct != nil && m != nil && len(m.Series) > 0 {
		// Bearing life used since the rule was last done: the cumulative
		// consumption now less what it was then.
		var before, recentFrom float64
		from := now.Add(-p.Window)
		for _, pt := range m.Series {
			if pt.At.Before(since) {
				before = pt.Value
			}
			if pt.At.Before(from) {
				recentFrom = pt.Value
			}
		}
		total := m.Series[len(m.Series)-1].Value
		recent := (total - math.Max(before, recentFrom)) * 100
		add("bearing_pct", (total-before)*100, *r.BearingPct, recent/(p.Window.Hours()/24))
	}
	if k := v.Pack; k != nil {
		// The forecast's crossing of the rule's own limit, when the health
		// view has it, gives the rate that reaches the limit on its date.
		rate := func(left float64, l *health.LimitView) float64 {
			if l == nil || l.Date == nil || !(left > 0) {
				return 0
			}
			if d := l.Date.Sub(now).Hours() / 24; d > 0 {
				return left / d
			}
			return 0
		}
		if r.SoHBelowPct != nil && k.SoH != nil {
			add("soh_below_pct", 100-*k.SoH*100, 100-*r.SoHBelowPct, rate(*k.SoH*100-*r.SoHBelowPct, k.Forecast.Limit(*r.SoHBelowPct)))
		}
		if r.IRRisePct != nil && k.Resistance != nil {
			used := math.Max(0, k.Resistance.RisePct)
			add("ir_rise_pct", used, *r.IRRisePct, rate(*r.IRRisePct-used, k.Resistance.Forecast.Limit(*r.IRRisePct)))
		}
	}
	return nil
}

// missingLimit reports whether a pack's health view has a forecast but not
// the crossing of one of the rule's limits.
func missingLimit(r *fleet.ServiceRule, k *health.PackView) bool {
	return (r.SoHBelowPct != nil && k.Forecast != nil && k.Forecast.Limit(*r.SoHBelowPct) == nil) ||
		(r.IRRisePct != nil && k.Resistance != nil && k.Resistance.Forecast != nil && k.Resistance.Forecast.Limit(*r.IRRisePct) == nil)
}

// Recomputed says what RecomputeAll did and how long each part took.
type Recomputed struct {
	HealthViews, DueItems int
	HealthTook, DueTook   time.Duration
}

// RecomputeAll recomputes every health view, then the whole due list that
// rests on them (the nightly job, `rotorwright recompute`, after a
// re-analysis and after the demo load).
func (p *Programme) RecomputeAll(ctx context.Context) (Recomputed, error) {
	var r Recomputed
	t0 := time.Now()
	n, err := p.Health.Recompute(ctx, nil)
	r.HealthViews, r.HealthTook = n, time.Since(t0)
	if err != nil {
		return r, err
	}
	t0 = time.Now()
	r.DueItems, err = p.RecomputeFleet(ctx)
	r.DueTook = time.Since(t0)
	return r, err
}
