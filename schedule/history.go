package schedule

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/store"
)

// history is what judging one rule on one subject reads: the work records
// against it, the subject's flights from the first moment that matters, and
// the events the rule reacts to. One read serves every moment judged from
// first on, so re-judging a run of flights costs a few queries, not a few
// per flight.
type history struct {
	done   []time.Time
	uses   []store.Use
	events []*fleet.Event
	// summed, when set, is the use the database summed for judging now
	// (store.RuleUsage); uses is then empty.
	summed *usage
	// view is the subject's stored health view (part_health, or an
	// airframe's trends) read with the rest of its rule's subjects when
	// viewRead; nil when none is stored.
	view     json.RawMessage
	viewRead bool
}

// load reads the history that judging r on s needs at moments from first
// on. until bounds the flights read (as of a past moment); nil reads them
// all (judging now).
func (p *Programme) load(ctx context.Context, r *fleet.ServiceRule, s store.Subject, first time.Time, until *time.Time) (*history, error) {
	done, err := p.DB.WorkDone(ctx, r.ID, s)
	if err != nil {
		return nil, err
	}
	_, since := lastDone(done, s.Start, first, until != nil)
	from := since
	if w := first.Add(-p.Window); w.Before(from) {
		from = w
	}
	uses, err := p.DB.Uses(ctx, s, from, until)
	if err != nil {
		return nil, err
	}
	events, err := p.DB.SubjectEvents(ctx, r.OnEvents, s, since)
	if err != nil {
		return nil, err
	}
	return &history{done: done, uses: uses, events: events}, nil
}

// lastDone is the latest work record (as of at when past) and the moment
// counting starts from: that record, else the subject's start.
func lastDone(done []time.Time, start, at time.Time, past bool) (*time.Time, time.Time) {
	var last *time.Time
	for i := range done {
		if past && done[i].After(at) {
			break
		}
		last = &done[i]
	}
	if last == nil {
		return nil, start
	}
	return last, *last
}

// usage is what a subject went through since a moment, and over the
// trailing window for rates.
type usage struct {
	hours, flights, revolutions, cycles                         float64
	recentHours, recentFlights, recentRevolutions, recentCycles float64
}

// sum adds up the flights from since on, and those from recentFrom on (the
// subject's utilisation whatever the rule's reset); as of a past moment
// only flights before it.
func (h *history) sum(since, recentFrom, at time.Time, past bool) usage {
	if h.summed != nil {
		return *h.summed
	}
	var u usage
	for _, x := range h.uses {
		if past && !x.At.Before(at) {
			break
		}
		if !x.At.Before(since) {
			u.hours, u.flights, u.revolutions, u.cycles = u.hours+x.Hours, u.flights+1, u.revolutions+x.Revolutions, u.cycles+x.Cycles
		}
		if !x.At.Before(recentFrom) {
			u.recentHours, u.recentFlights = u.recentHours+x.Hours, u.recentFlights+1
			u.recentRevolutions, u.recentCycles = u.recentRevolutions+x.Revolutions, u.recentCycles+x.Cycles
		}
	}
	return u
}

// openEvent is the earliest event from since on that is open: unresolved
// (now), or open at the moment at (past).
func (h *history) openEvent(since, at time.Time, past bool) *fleet.Event {
	for _, e := range h.events {
		if e.At.Before(since) {
			continue
		}
		if past && store.OpenAt(e, at) || !past && e.ResolvedAt == nil {
			return e
		}
	}
	return nil
}

// evaluate applies rule r to subject s at the moment at. past judges as of
// a past moment: only flights before it, work records up to it, events open
// then and health as it stood then count; otherwise everything recorded
// counts (the due list now).
func (p *Programme) evaluate(ctx context.Context, r *fleet.ServiceRule, s store.Subject, h *history, at time.Time, past bool) (*fleet.DueItem, error) {
	last, since := lastDone(h.done, s.Start, at, past)
	days := p.Window.Hours() / 24
	u := h.sum(since, at.Add(-p.Window), at, past)
	it := &fleet.DueItem{RuleID: &r.ID, RuleName: r.Name, Action: r.Action, SubjectKind: s.Kind, SubjectID: s.ID,
		Subject: s.Name, AirframeID: s.AirframeID, PartNumber: s.PartNumber, LastDoneAt: last, Since: &since,
		Usage: []fleet.LimitUsage{}, Grounding: r.Grounding, ComputedAt: at}
	add := func(l limit) { it.Usage = append(it.Usage, l.usage(at)) }
	rated := func(name string, used, max, perDay float64) {
		add(limit{name: name, used: used, max: max, perDay: &perDay})
	}
	if r.FlightHours != nil {
		rated("flight_hours", u.hours, *r.FlightHours, u.recentHours/days)
	}
	if r.Flights != nil {
		rated("flights", u.flights, float64(*r.Flights), u.recentFlights/days)
	}
	if r.Days != nil {
		rated("days", math.Max(0, at.Sub(since).Hours()/24), float64(*r.Days), 1)
	}
	if r.Revolutions != nil {
		rated("revolutions", u.revolutions, *r.Revolutions, u.recentRevolutions/days)
	}
	if r.Cycles != nil {
		rated("cycles", u.cycles, *r.Cycles, u.recentCycles/days)
	}
	if err := p.healthLimits(ctx, r, s, h, since, at, past, add); err != nil {
		return nil, err
	}
	reasons := map[string]bool{}
	for _, lu := range it.Usage {
		if lu.Fraction > it.Fraction {
			it.Fraction, it.Reason = lu.Fraction, fmt.Sprintf("%s %.4g of %.4g", lu.Limit, lu.Used, lu.Max)
		}
		if lu.Forecast != nil && (it.ForecastDate == nil || lu.Forecast.Before(*it.ForecastDate)) {
			it.ForecastDate = lu.Forecast
		}
		if lu.ForecastReason != nil {
			reasons[*lu.ForecastReason] = true
		}
	}
	if it.ForecastDate == nil {
		// No date: beyond the horizon if any limit is, else no use if any has none.
		for _, why := range []string{fleet.ForecastBeyondHorizon, fleet.ForecastNoUse} {
			if reasons[why] {
				it.ForecastReason = &why
				break
			}
		}
	}
	if ev := h.openEvent(since, at, past); ev != nil {
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

// limit is one limit of a rule on a subject and how its forecast comes:
// from a trailing use rate (perDay), from a date forecast elsewhere (a
// pack's fade, with its reason when it has none), or not at all.
type limit struct {
	name      string
	used, max float64
	perDay    *float64
	date      *time.Time
	reason    string
}

// usage is the limit's use at the moment at, with its forecast: at once
// when used up, else saturating at the horizon (fleet.ForecastAt).
func (l limit) usage(at time.Time) fleet.LimitUsage {
	lu := fleet.LimitUsage{Limit: l.name, Used: l.used, Max: l.max, Remaining: math.Max(0, l.max-l.used),
		Fraction: l.used / l.max, RatePerDay: l.perDay}
	why := l.reason
	switch {
	case lu.Fraction >= 1:
		lu.Forecast, why = &at, ""
	case l.perDay != nil:
		lu.Forecast, why = fleet.ForecastAt(at, lu.Remaining, *l.perDay)
	case l.date != nil:
		lu.Forecast = l.date
		if d := l.date.Sub(at).Hours() / 24; d > 0 {
			rate := lu.Remaining / d // the rate that reaches the limit on that date
			lu.RatePerDay = &rate
		}
	}
	if why != "" {
		lu.ForecastReason = &why
	}
	return lu
}

// healthLimits adds the limits read from the health views: bearing life
// used since last done, state of health, resistance rise, airframe trends.
// As of a past moment the pack and trend views are computed from the
// records before it, and bearing life is read off the motor's cumulative
// series up to it.
func (p *Programme) healthLimits(ctx context.Context, r *fleet.ServiceRule, s store.Subject, h *history, since, at time.Time,
	past bool, add func(limit)) error {
	if r.BearingPct == nil && r.SoHBelowPct == nil && r.IRRisePct == nil && r.EfficiencyRisePct == nil && r.VibrationRisePct == nil {
		return nil
	}
	if s.Kind == "airframe" {
		tv, err := p.trendsView(ctx, s.ID, h, at, past)
		if err != nil || tv == nil {
			return err
		}
		if r.EfficiencyRisePct != nil && tv.EfficiencyIndex != nil {
			add(limit{name: "efficiency_rise_pct", used: math.Max(0, tv.EfficiencyIndex.RisePct), max: *r.EfficiencyRisePct})
		}
		if r.VibrationRisePct != nil && tv.Vibration != nil {
			add(limit{name: "vibration_rise_pct", used: math.Max(0, tv.Vibration.RisePct), max: *r.VibrationRisePct})
		}
		return nil
	}
	v, err := p.partView(ctx, s, h, at, past)
	if err != nil {
		return err
	}
	if k := v.Pack; k != nil && !past && p.Health != nil && missingLimit(r, k) {
		// A rule newer than the stored view: forecast its limit now.
		if v, err = p.Health.Part(ctx, s.ID); err != nil {
			return err
		}
	}
	if m := v.Motor; r.BearingPct != nil && m != nil && len(m.Series) > 0 {
		// Bearing life used since the rule was last done: the cumulative
		// consumption at the moment less what it was then.
		var before, recentFrom, total float64
		from := at.Add(-p.Window)
		for _, pt := range m.Series {
			if past && !pt.At.Before(at) {
				break
			}
			if pt.At.Before(since) {
				before = pt.Value
			}
			if pt.At.Before(from) {
				recentFrom = pt.Value
			}
			total = pt.Value
		}
		perDay := (total - math.Max(before, recentFrom)) * 100 / (p.Window.Hours() / 24)
		add(limit{name: "bearing_pct", used: (total - before) * 100, max: *r.BearingPct, perDay: &perDay})
	}
	if k := v.Pack; k != nil {
		// The forecast's crossing of the rule's own limit, when the health
		// view has it, dates the limit (or says why it has no date).
		dated := func(name string, used, max float64, l *health.LimitView) limit {
			out := limit{name: name, used: used, max: max}
			if l != nil {
				out.date = l.Date
				if l.ForecastReason != nil {
					out.reason = *l.ForecastReason
				}
			}
			return out
		}
		if r.SoHBelowPct != nil && k.SoH != nil {
			add(dated("soh_below_pct", 100-*k.SoH*100, 100-*r.SoHBelowPct, k.Forecast.Limit(*r.SoHBelowPct)))
		}
		if r.IRRisePct != nil && k.Resistance != nil {
			add(dated("ir_rise_pct", math.Max(0, k.Resistance.RisePct), *r.IRRisePct, k.Resistance.Forecast.Limit(*r.IRRisePct)))
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

// partView is a part's health view: the stored one (computed when missing),
// or for a pack (a part subject of no airframe) as of a past moment,
// computed from the records before it. A motor's stored series is read up
// to the moment by the caller.
func (p *Programme) partView(ctx context.Context, s store.Subject, h *history, at time.Time, past bool) (*health.View, error) {
	if past && p.Health != nil && s.AirframeID == nil {
		return p.Health.PackAt(ctx, s.ID, at)
	}
	raw, err := h.view, error(nil)
	if !h.viewRead {
		raw, err = p.DB.PartHealth(ctx, s.ID)
	} else if raw == nil {
		err = fleet.Errorf(fleet.ENOTFOUND, "health not found")
	}
	if fleet.ErrorCode(err) == fleet.ENOTFOUND && p.Health != nil {
		return p.Health.Part(ctx, s.ID)
	} else if err != nil {
		return nil, err
	}
	return health.DecodeView(raw)
}

// trendsView is an airframe's trends view (nil before any logged flight),
// as of a past moment computed from the flights before it.
func (p *Programme) trendsView(ctx context.Context, airframeID string, h *history, at time.Time, past bool) (*health.TrendsView, error) {
	if past && p.Health != nil {
		return p.Health.AirframeAt(ctx, airframeID, at)
	}
	raw, err := h.view, error(nil)
	if !h.viewRead {
		raw, err = p.DB.AirframeTrends(ctx, airframeID)
	}
	if fleet.ErrorCode(err) == fleet.ENOTFOUND || h.viewRead && raw == nil {
		return nil, nil
	} else if err != nil {
		return nil, err
	}
	var tv health.TrendsView
	return &tv, json.Unmarshal(raw, &tv)
}
