package health

import (
	"context"
	"math"
	"slices"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
	"github.com/rotorwright/rotorwright/wear"
)

// PackView is a pack's health.
type PackView struct {
	Chemistry fleet.Chemistry `json:"chemistry"`
	CellsS    int             `json:"cells_s"`
	RatedMah  float64         `json:"rated_mah"`
	Flights   int             `json:"flights"`
	Cycles    float64         `json:"cycles"` // equivalent full cycles
	// CyclesAssumed counts the flights in Cycles whose charge was not
	// measured (a manual entry, a log that gave no figures): each is
	// counted as one full cycle (fleet.UnmeasuredPackCycles).
	CyclesAssumed int             `json:"cycles_assumed"`
	CapacityMah   *float64        `json:"capacity_mah"`
	SoH           *float64        `json:"soh"`
	Capacity      []CapacityPoint `json:"capacity_series"`
	// Forecast is the capacity-fade forecast (mAh against cycles) and its
	// end-of-life crossing; nil before any capacity estimate.
	Forecast     *ForecastView       `json:"forecast"`
	Resistance   *ResistanceView     `json:"resistance"`
	ImbalanceMV  *float64            `json:"imbalance_mv"`
	DaysHeldFull float64             `json:"days_held_full"`
	Reasons      []wear.Reason       `json:"reasons"`
	Thresholds   wear.PackThresholds `json:"thresholds"`
}

// CapacityPoint is one capacity estimate.
type CapacityPoint struct {
	At          time.Time `json:"at"`
	Cycle       float64   `json:"cycle"`
	CapacityMah float64   `json:"capacity_mah"`
	Source      string    `json:"source"` // flight_rest_voltages, charge_record, capacity_test
}

// ForecastView is a trend forecast (wear.Forecast: the model chosen by
// rolling-origin evaluation, its backtest error, every candidate, and the
// crossing of the threshold with its interval) with the date of the
// sustained crossing and of the interval's ends at the recent usage rate,
// and the crossing of each service rule's limit on this pack.
type ForecastView struct {
	*wear.TrendForecast
	// Curve samples the chosen model and its interval for charts.
	Curve        []CurvePoint `json:"curve"`
	CyclesPerDay float64      `json:"cycles_per_day"`
	Date         *time.Time   `json:"date"`
	// ForecastReason says why Date is null (fleet.ForecastBeyondHorizon or
	// fleet.ForecastNoUse); an interval end past the horizon is null too.
	ForecastReason *string       `json:"forecast_reason"`
	IntervalDate   [2]*time.Time `json:"interval_dates"`
	Limits         []LimitView   `json:"limits"`
}

// LimitView is the crossing of one rule limit (soh_below_pct or
// ir_rise_pct, in the rule's percent) with its date.
type LimitView struct {
	Limit float64 `json:"limit_pct"`
	wear.Crossing
	Date           *time.Time `json:"date"`
	ForecastReason *string    `json:"forecast_reason"` // why Date is null, as in ForecastView
}

// ResistanceView is the resistance trend; Forecast is the rise (% over
// baseline) against cycles, forecast to the retire threshold.
type ResistanceView struct {
	BaselineMOhm     float64       `json:"baseline_mohm"`
	CurrentMOhm      float64       `json:"current_mohm"`
	RisePct          float64       `json:"rise_pct"`
	SlopePctPerCycle float64       `json:"slope_pct_per_cycle"`
	Series           []CyclePoint  `json:"series"`
	Forecast         *ForecastView `json:"forecast"`
}

// CyclePoint is a value at a cycle count.
type CyclePoint struct {
	At    time.Time `json:"at"`
	Cycle float64   `json:"cycle"`
	Value float64   `json:"value"`
}

// minRestSpan is the least state-of-charge span a capacity estimate may rest
// on: small spans magnify voltage-reading errors (wear's default).
const minRestSpan = 0.3

// pack computes a pack's view at now; with until, from the flights, checks
// and events before it only.
func (s *Service) pack(ctx context.Context, p *fleet.Part, now time.Time, until *time.Time, v *View) error {
	specs, err := fleet.PackSpecsOf(p)
	if err != nil {
		return err
	}
	// Its flights, checks, the rules and its swelling reports in one round
	// trip (open ones only when judging now).
	swell := store.EventFilter{Kind: "pack_swelling"}
	if until == nil {
		open := true
		swell.Open = &open
	}
	rec, err := s.DB.PackRecordsOf(ctx, p.ID, swell, store.Page{Limit: store.MaxPageSize})
	if err != nil {
		return err
	}
	flights, checks := rec.Flights, rec.Checks
	if until != nil {
		flights = before(flights, *until, func(f store.PackFlight) time.Time { return f.TakeoffAt })
		checks = before(checks, *until, func(c store.PackCheck) time.Time { return c.At })
	}
	cells := float64(specs.CellsS)
	pv := &PackView{Chemistry: specs.Chemistry, CellsS: specs.CellsS, RatedMah: specs.RatedMah, Flights: len(flights),
		Capacity: []CapacityPoint{}, Reasons: []wear.Reason{}}
	th := wear.DefaultPackThresholds()
	th.RetireSoH = s.Settings.EOLFraction
	pv.Thresholds = th

	// Walk flights and checks in time order, counting equivalent full cycles.
	var cycles float64
	var ir []wear.ResistancePoint
	var irSeries []CyclePoint
	recent := now.Add(-s.Settings.UtilisationWindow)
	var recentCycles float64
	ci := 0
	addCheck := func(c store.PackCheck) {
		var capMah float64
		var err error
		src := ""
		switch {
		case c.Kind == "capacity_test" && c.MahOut != nil && c.RestVAfter != nil:
			capMah, err = wear.CapacityFromTest(specs.Chemistry, *c.MahOut, *c.RestVAfter/cells, minRestSpan)
			src = "capacity_test"
		case c.Kind == "capacity_test" && c.MahOut != nil:
			// No rest voltage after: a full discharge to the maker's cut-off,
			// so the charge out is the capacity.
			capMah, src = *c.MahOut, "capacity_test"
		case c.Kind == "charge" && c.MahIn != nil && c.RestVBefore != nil:
			capMah, err = wear.CapacityFromCharge(specs.Chemistry, *c.RestVBefore/cells, *c.MahIn, minRestSpan)
			src = "charge_record"
		}
		if src != "" && err == nil {
			pv.Capacity = append(pv.Capacity, CapacityPoint{At: c.At, Cycle: cycles, CapacityMah: capMah, Source: src})
		}
		if c.PackIRmOhm != nil {
			ir = append(ir, wear.ResistancePoint{Cycle: cycles, MOhm: *c.PackIRmOhm})
			irSeries = append(irSeries, CyclePoint{At: c.At, Cycle: cycles, Value: *c.PackIRmOhm})
		}
	}
	for _, f := range flights {
		for ci < len(checks) && checks[ci].At.Before(f.TakeoffAt) {
			addCheck(checks[ci])
			ci++
		}
		// A flight without figures (a manual entry, a log that gave none)
		// still flew the pack: it counts as the store's sums count it.
		used := fleet.UnmeasuredPackCycles
		if f.ChargeMah != nil {
			used = *f.ChargeMah / specs.RatedMah
		} else {
			pv.CyclesAssumed++
		}
		cycles += used
		if f.TakeoffAt.After(recent) {
			recentCycles += used
		}
		if f.ChargeMah == nil {
			continue // nothing else to read from it
		}
		if f.RestVStart != nil && f.RestVEnd != nil {
			capMah, err := wear.CapacityFromRest(specs.Chemistry, *f.RestVStart/cells, *f.RestVEnd/cells, *f.ChargeMah, minRestSpan)
			if err == nil {
				pv.Capacity = append(pv.Capacity, CapacityPoint{At: f.TakeoffAt, Cycle: cycles, CapacityMah: capMah, Source: "flight_rest_voltages"})
			}
		}
		if f.IRmOhm != nil {
			ir = append(ir, wear.ResistancePoint{Cycle: cycles, MOhm: *f.IRmOhm})
			irSeries = append(irSeries, CyclePoint{At: f.TakeoffAt, Cycle: cycles, Value: *f.IRmOhm})
		}
	}
	for ; ci < len(checks); ci++ {
		addCheck(checks[ci])
	}
	pv.Cycles = cycles
	readings := wear.PackReadings{Cycles: cycles}

	perDay := recentCycles / (s.Settings.UtilisationWindow.Hours() / 24)
	limits := packLimits(rec.Rules, p)
	// Capacity: the forecast's model when it has one, else the median of the
	// latest three estimates.
	if n := len(pv.Capacity); n > 0 {
		pts := make([]wear.TrendPoint, n)
		for i, c := range pv.Capacity {
			pts[i] = wear.TrendPoint{Cycle: c.Cycle, Value: c.CapacityMah}
		}
		fc, err := wear.CapacityForecast(pts, specs.RatedMah, s.Settings.EOLFraction)
		if err != nil {
			return err
		}
		pv.Forecast = newForecastView(fc, now, cycles, perDay)
		for _, l := range limits.soh {
			pv.Forecast.limit(l, fc.CrossingAt(l/100*specs.RatedMah), now, cycles, perDay)
		}
		if fc.Model != "" {
			pv.CapacityMah = ptr(fc.Predict(cycles))
		} else {
			last := make([]float64, 0, 3)
			for i := max(0, n-3); i < n; i++ {
				last = append(last, pv.Capacity[i].CapacityMah)
			}
			pv.CapacityMah = ptr(median(last))
		}
		if fc.FittedSustained != nil {
			readings.CyclesToEOL = ptr(*fc.FittedSustained - cycles)
		} else {
			v.Notes = append(v.Notes, "capacity forecast: "+fc.Reason)
		}
	} else {
		v.Notes = append(v.Notes, "no capacity estimate yet: needs flights with rest voltages before and after, a charge record or a capacity test")
	}
	if pv.CapacityMah != nil {
		soh, err := wear.StateOfHealth(*pv.CapacityMah, specs.RatedMah)
		if err == nil {
			pv.SoH, readings.SoH = &soh, &soh
		}
	}
	baseline := 0.0
	if specs.BaselineIRmOhm != nil {
		baseline = *specs.BaselineIRmOhm
	}
	if len(ir) >= 3 {
		rt, err := wear.ResistanceRise(baseline, ir)
		if err == nil {
			pv.Resistance = &ResistanceView{BaselineMOhm: rt.BaselineMOhm, CurrentMOhm: rt.CurrentMOhm, RisePct: rt.RisePct,
				SlopePctPerCycle: rt.SlopePctPerCycle, Series: irSeries}
			readings.IRRisePct = ptr(rt.RisePct)
			// The same forecast machinery on the rise over baseline (%),
			// crossing upward to the retire threshold and each rule's limit.
			rise := make([]wear.TrendPoint, len(ir))
			for i, r := range ir {
				rise[i] = wear.TrendPoint{Cycle: r.Cycle, Value: 100 * (r.MOhm - rt.BaselineMOhm) / rt.BaselineMOhm}
			}
			fc, err := wear.Forecast(rise, wear.ForecastSettings{Threshold: th.RetireIRRisePct, Rising: true})
			if err != nil {
				return err
			}
			pv.Resistance.Forecast = newForecastView(fc, now, cycles, perDay)
			for _, l := range limits.ir {
				pv.Resistance.Forecast.limit(l, fc.CrossingAt(l), now, cycles, perDay)
			}
		}
	}
	// Imbalance and storage from the latest check with cell voltages, if it
	// is later than the last flight.
	var lastFlight time.Time
	if len(flights) > 0 {
		lastFlight = flights[len(flights)-1].LandingAt
	}
	for i := len(checks) - 1; i >= 0; i-- {
		c := checks[i]
		cellV := 0.0
		if len(c.CellV) > 0 {
			if mv, err := wear.CellImbalanceMV(c.CellV); err == nil && pv.ImbalanceMV == nil {
				pv.ImbalanceMV, readings.ImbalanceMV = ptr(mv), ptr(mv)
			}
			for _, x := range c.CellV {
				cellV += x / float64(len(c.CellV))
			}
		} else if c.RestVAfter != nil {
			cellV = *c.RestVAfter / cells
		}
		if cellV > 0 && c.At.After(lastFlight) {
			days, err := wear.DaysHeldFull(specs.Chemistry, wear.ChargeState{At: c.At, CellV: cellV}, now, 0)
			if err == nil {
				pv.DaysHeldFull, readings.DaysHeldFull = days, days
			}
		}
		if cellV > 0 {
			break
		}
	}
	readings.Swollen = swollen(rec.Events, until)
	h := wear.PackStatus(readings, th)
	v.Status, pv.Reasons = h.Status, h.Reasons
	if pv.Reasons == nil {
		pv.Reasons = []wear.Reason{}
	}
	if math.IsNaN(pv.Cycles) {
		pv.Cycles = 0
	}
	v.Pack = pv
	return nil
}

// newForecastView dates a forecast's sustained crossing and interval at the
// recent usage rate.
func newForecastView(fc *wear.TrendForecast, now time.Time, cycles, perDay float64) *ForecastView {
	v := &ForecastView{TrendForecast: fc, Curve: forecastCurve(fc), CyclesPerDay: perDay, Limits: []LimitView{}}
	v.Date, v.ForecastReason = cycleDate(now, cycles, fc.FittedSustained, perDay)
	from, _ := cycleDate(now, cycles, fc.IntervalFrom, perDay)
	to, _ := cycleDate(now, cycles, fc.IntervalTo, perDay)
	v.IntervalDate = [2]*time.Time{from, to}
	return v
}

// limit adds the crossing of one rule limit.
func (v *ForecastView) limit(pct float64, c wear.Crossing, now time.Time, cycles, perDay float64) {
	l := LimitView{Limit: pct, Crossing: c}
	l.Date, l.ForecastReason = cycleDate(now, cycles, c.FittedSustained, perDay)
	v.Limits = append(v.Limits, l)
}

// Limit returns the crossing of the rule limit pct, if the view has it.
func (v *ForecastView) Limit(pct float64) *LimitView {
	if v == nil {
		return nil
	}
	for i := range v.Limits {
		if v.Limits[i].Limit == pct {
			return &v.Limits[i]
		}
	}
	return nil
}

// cycleDate dates a forecast cycle (nil: none forecast, no date and no
// reason), with the reason when it has no date.
func cycleDate(now time.Time, cycles float64, at *float64, perDay float64) (*time.Time, *string) {
	if at == nil {
		return nil, nil
	}
	d, why := wear.CycleDate(now, cycles, *at, perDay)
	if why == "" {
		return d, nil
	}
	return d, &why
}

// packRuleLimits are the distinct limits of the enabled pack rules that
// apply to one pack.
type packRuleLimits struct{ soh, ir []float64 }

// packLimits picks the programme's pack rules for p (all pack rules, or
// those of its part number) from every rule.
func packLimits(rules []*fleet.ServiceRule, p *fleet.Part) packRuleLimits {
	var out packRuleLimits
	add := func(list []float64, v *float64) []float64 {
		if v == nil || slices.Contains(list, *v) {
			return list
		}
		return append(list, *v)
	}
	for _, r := range rules {
		if !r.Enabled || r.AppliesTo != string(fleet.KindPack) || (r.PartNumber != nil && *r.PartNumber != p.PartNumber) {
			continue
		}
		out.soh = add(out.soh, r.SoHBelowPct)
		out.ir = add(out.ir, r.IRRisePct)
	}
	return out
}

// swollen reports an open swelling report among the pack's (open at until,
// when given; evs are the open ones when not).
func swollen(evs []*fleet.Event, until *time.Time) bool {
	for _, e := range evs {
		if until == nil || store.OpenAt(e, *until) {
			return true
		}
	}
	return false
}

// before keeps the leading items of a time-ordered list that are earlier
// than at.
func before[T any](list []T, at time.Time, when func(T) time.Time) []T {
	for i, x := range list {
		if !when(x).Before(at) {
			return list[:i]
		}
	}
	return list
}
