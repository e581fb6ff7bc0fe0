package schedule_test

import (
	"context"
	"errors"
	"fmt"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/internal/sim"
	"github.com/rotorwright/rotorwright/store"
)

// Each counted limit (flight hours, flights, calendar days) makes a rule due,
// and warn_at 0.9 splits the statuses: with 9 units used, a limit of 12 is
// ok (0.75), 10 is due_soon (exactly 0.9) and 9 is overdue (exactly 1). The
// usage is hand-counted from the flights recorded.
func TestCountedLimitsAndWarnAt(t *testing.T) {
	b := newBench(t, false)
	a := b.airframe("LK-01", "LK")
	// Nine 1 h flights, one a day; the first takes off 9 days before now, so
	// a never-done rule counts 9 days from it.
	first := b.ago(9 * day)
	for k := 0; k < 9; k++ {
		b.flight(a, first.Add(time.Duration(k)*day), time.Hour)
	}
	want := map[float64]string{12: fleet.DueOK, 10: fleet.DueSoon, 9: fleet.DueOverdue}
	type made struct {
		r     *fleet.ServiceRule
		limit string
		max   float64
	}
	var rules []made
	for max := range want {
		rules = append(rules,
			made{b.rule(fleet.ServiceRule{AppliesTo: "airframe", Model: sp("LK"), FlightHours: fp(max)}), "flight_hours", max},
			made{b.rule(fleet.ServiceRule{AppliesTo: "airframe", Model: sp("LK"), Flights: ip(int(max))}), "flights", max},
			made{b.rule(fleet.ServiceRule{AppliesTo: "airframe", Model: sp("LK"), Days: ip(int(max))}), "days", max})
	}
	// A rule for another model does not apply.
	other := b.rule(fleet.ServiceRule{AppliesTo: "airframe", Model: sp("OTHER"), Flights: ip(1)})
	b.recompute(a)
	for _, m := range rules {
		it := b.item(m.r, a.ID)
		u := b.usage(it, m.limit)
		if u.Used != 9 || u.Max != m.max || u.Remaining != max(0, m.max-9) {
			t.Errorf("%s max %g: used %g remaining %g, want 9 and %g", m.limit, m.max, u.Used, u.Remaining, max(0, m.max-9))
		}
		b.wantStatus(it, want[m.max])
		if it.LastDoneAt != nil || it.Since == nil || !it.Since.Equal(first) {
			t.Errorf("%s: last done %v since %v, want never and the first flight %v", m.limit, it.LastDoneAt, it.Since, first)
		}
	}
	items, err := b.db.DueItems(b.ctx, store.DueFilter{AirframeID: a.ID})
	if err != nil {
		t.Fatal(err)
	}
	for _, it := range items {
		if it.RuleID != nil && *it.RuleID == other.ID {
			t.Errorf("rule for model OTHER applied to model LK")
		}
	}
	if len(items) != len(rules) {
		t.Errorf("%d items, want %d", len(items), len(rules))
	}
}

// Pack health limits (hand arithmetic): a capacity test of 6800 mAh on an
// 8000 mAh pack is a state of health of 85 % (SoH = capacity / rated, the
// usual definition: common practice); resistance readings of 20, 24, 24 mOhm
// over a 16 mOhm baseline are a 50 % rise (the latest three's median). The
// soh_below_pct limit counts the SoH lost towards the threshold:
// (100 - 85) / (100 - threshold).
func TestPackHealthLimits(t *testing.T) {
	b := newBench(t, false)
	pk := b.pack(4, "")
	checks := []store.PackCheck{
		{Kind: "capacity_test", MahOut: fp(6800), PackIRmOhm: fp(20)},
		{Kind: "storage", PackIRmOhm: fp(24)},
		{Kind: "storage", PackIRmOhm: fp(24)},
	}
	for i, c := range checks {
		c.PartID, c.At = pk.ID, b.ago(time.Duration(3-i)*day)
		if _, err := b.db.CreatePackCheck(b.ctx, &c); err != nil {
			t.Fatal(err)
		}
	}
	if _, err := b.hs.Part(b.ctx, pk.ID); err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		r      fleet.ServiceRule
		limit  string
		used   float64
		status string
	}{
		{fleet.ServiceRule{SoHBelowPct: fp(70)}, "soh_below_pct", 15, fleet.DueOK},      // 15/30
		{fleet.ServiceRule{SoHBelowPct: fp(83.5)}, "soh_below_pct", 15, fleet.DueSoon},  // 15/16.5 = 0.909
		{fleet.ServiceRule{SoHBelowPct: fp(86)}, "soh_below_pct", 15, fleet.DueOverdue}, // 15/14
		{fleet.ServiceRule{IRRisePct: fp(100)}, "ir_rise_pct", 50, fleet.DueOK},         // 50/100
		{fleet.ServiceRule{IRRisePct: fp(55)}, "ir_rise_pct", 50, fleet.DueSoon},        // 50/55 = 0.909
		{fleet.ServiceRule{IRRisePct: fp(40)}, "ir_rise_pct", 50, fleet.DueOverdue},     // 50/40
	}
	rules := make([]*fleet.ServiceRule, len(cases))
	for i, c := range cases {
		c.r.AppliesTo, c.r.Action = "pack", "retire"
		rules[i] = b.rule(c.r)
	}
	if _, err := b.p.RecomputeFleet(b.ctx); err != nil {
		t.Fatal(err)
	}
	for i, c := range cases {
		it := b.item(rules[i], pk.ID)
		near(t, c.limit, b.usage(it, c.limit).Used, c.used, 1e-9)
		b.wantStatus(it, c.status)
	}
}

// Logged limits from simulated flights: revolutions and bearing life on the
// motors, equivalent full cycles on the pack, efficiency and vibration rise
// on the airframe. The usage must match the simulator's truth (revolutions
// and charge within the telemetry acceptance of 0.5 %) or the health view
// the due list reads (bearing life by ISO 281, trends by Theil-Sen, each
// tested against its sources in health and wear); each limit is then set to
// land on each side of warn_at.
func TestLoggedLimits(t *testing.T) {
	b := newBench(t, false)
	a := b.airframe("SIM-LL", "LL")
	motors, _ := b.fullQuad(a, b.ago(20*day), 2000, "PR-10")
	pk := b.pack(4, "")
	var revs, charge float64
	const flights = 6
	for i := 0; i < flights; i++ {
		spec := sim.DefaultSpec(uint64(700 + i))
		spec.Airframe, spec.Start = a.Code, b.ago(time.Duration(10-i)*day)
		spec.SampleHz, spec.DurationS = 5, 300
		spec.Packs[0].Serial = pk.Serial
		// A wearing airframe: more vibration and less lift per watt each flight.
		spec.VibrationLevel = 0.8 * (1 + 0.15*float64(i))
		spec.FigureOfMerit = 0.55 / (1 + 0.06*float64(i))
		tr := b.logged(a, pk, spec)
		revs += tr.Revolutions[0]
		charge += tr.ChargeMah
	}
	cycles := charge / 8000
	raw, err := b.db.PartHealth(b.ctx, motors[0].ID)
	if err != nil {
		t.Fatal(err)
	}
	mv := decode[health.View](t, raw).Motor
	if mv == nil || mv.Flights != flights {
		t.Fatalf("motor view %+v", mv)
	}
	bearing := mv.ConsumedFraction * 100
	raw, err = b.db.AirframeTrends(b.ctx, a.ID)
	if err != nil {
		t.Fatal(err)
	}
	tv := decode[health.TrendsView](t, raw)
	if tv.EfficiencyIndex == nil || tv.Vibration == nil {
		t.Fatalf("trends %+v", tv)
	}
	eff, vib := tv.EfficiencyIndex.RisePct, tv.Vibration.RisePct
	t.Logf("m1 revolutions %.0f, bearing %.4g %%, cycles %.4f, efficiency rise %.1f %%, vibration rise %.1f %%",
		revs, bearing, cycles, eff, vib)
	// The simulated wear must show as a rise (the exact figure is the view's).
	if eff < 10 || vib < 20 {
		t.Errorf("efficiency rise %.1f %% and vibration rise %.1f %%: the simulated wear does not show", eff, vib)
	}
	type limit struct {
		name, subject string
		want, tol     float64
		set           func(r *fleet.ServiceRule, max float64)
	}
	limits := []limit{
		{"revolutions", motors[0].ID, revs, 0.005, func(r *fleet.ServiceRule, m float64) { r.AppliesTo, r.Revolutions = "motor", &m }},
		{"bearing_pct", motors[0].ID, bearing, 1e-9, func(r *fleet.ServiceRule, m float64) { r.AppliesTo, r.BearingPct = "motor", &m }},
		{"cycles", pk.ID, cycles, 0.005, func(r *fleet.ServiceRule, m float64) { r.AppliesTo, r.Cycles = "pack", &m }},
		{"efficiency_rise_pct", a.ID, eff, 1e-9, func(r *fleet.ServiceRule, m float64) { r.AppliesTo, r.EfficiencyRisePct = "airframe", &m }},
		{"vibration_rise_pct", a.ID, vib, 1e-9, func(r *fleet.ServiceRule, m float64) { r.AppliesTo, r.VibrationRisePct = "airframe", &m }},
	}
	// Fractions 0.5, 0.95 and 1/0.9: clear of the 0.9 and 1 boundaries by
	// more than the 0.5 % tolerance.
	sides := []struct {
		max    func(u float64) float64
		status string
	}{{func(u float64) float64 { return u / 0.5 }, fleet.DueOK}, {func(u float64) float64 { return u / 0.95 }, fleet.DueSoon},
		{func(u float64) float64 { return u * 0.9 }, fleet.DueOverdue}}
	made := map[string][]*fleet.ServiceRule{}
	for _, l := range limits {
		for _, s := range sides {
			r := fleet.ServiceRule{Name: fmt.Sprintf("%s %s", l.name, s.status)}
			l.set(&r, s.max(l.want))
			made[l.name] = append(made[l.name], b.rule(r))
		}
	}
	b.recompute(a, pk)
	for _, l := range limits {
		for i, r := range made[l.name] {
			it := b.item(r, l.subject)
			near(t, l.name+" used", b.usage(it, l.name).Used, l.want, l.tol)
			b.wantStatus(it, sides[i].status)
		}
	}
}

// on_events: an open event of a listed kind makes the rule overdue at once
// (an airframe's hard landing, a pack's swelling); an unlisted kind does not;
// resolving the event clears it.
func TestOnEvents(t *testing.T) {
	b := newBench(t, false)
	a := b.airframe("EV-01", "EV")
	pk := b.pack(4, "")
	b.flight(a, b.ago(2*day), 30*time.Minute, pk)
	landing := b.rule(fleet.ServiceRule{AppliesTo: "airframe", Model: sp("EV"), OnEvents: []string{"hard_landing", "crash"},
		Grounding: true})
	swell := b.rule(fleet.ServiceRule{AppliesTo: "pack", OnEvents: []string{"pack_swelling"}, Action: "retire", Grounding: true})
	b.event("prop_strike", a, nil, b.ago(day))
	b.recompute(a, pk)
	b.wantStatus(b.item(landing, a.ID), fleet.DueOK)
	b.wantStatus(b.item(swell, pk.ID), fleet.DueOK)

	ev := b.event("hard_landing", a, nil, b.ago(time.Hour))
	sw := b.event("pack_swelling", nil, pk, b.ago(30*time.Minute))
	b.recompute(a, pk)
	for _, c := range []struct {
		r       *fleet.ServiceRule
		subject string
		at      time.Time
	}{{landing, a.ID, ev.At}, {swell, pk.ID, sw.At}} {
		it := b.item(c.r, c.subject)
		b.wantStatus(it, fleet.DueOverdue)
		if it.Fraction != 1 || it.ForecastDate == nil || !it.ForecastDate.Equal(c.at) {
			t.Errorf("%s: fraction %g forecast %v, want 1 and the event's time %v", it.RuleName, it.Fraction, it.ForecastDate, c.at)
		}
	}

	// Grounding events are resolved by a technician's work record.
	b.work(fleet.WorkRecord{Action: "inspect", Work: "inspected, no damage", AirframeID: &a.ID, Resolves: []string{ev.ID, sw.ID}})
	b.recompute(a, pk)
	b.wantStatus(b.item(landing, a.ID), fleet.DueOK)
	b.wantStatus(b.item(swell, pk.ID), fleet.DueOK)
}

// Forecast dates with a known utilisation (hand arithmetic): the airframe
// flew exactly 1 h a day for the trailing 30 days; the 25 h rule was last done
// 10 days ago, so 10 h are used, 15 h remain, and at 1 h/day the forecast is
// now + 15 days to the second. A 20-day rule done at the same time forecasts
// since + 20 days. Flights older than the window do not count.
func TestForecastDates(t *testing.T) {
	b := newBench(t, false)
	a := b.airframe("FC-01", "FC")
	for k := 1; k <= 35; k++ {
		b.flight(a, b.ago(time.Duration(k)*day).Add(time.Hour), time.Hour)
	}
	hours := b.rule(fleet.ServiceRule{AppliesTo: "airframe", Model: sp("FC"), FlightHours: fp(25)})
	days := b.rule(fleet.ServiceRule{AppliesTo: "airframe", Model: sp("FC"), Days: ip(20)})
	done := b.ago(10 * day)
	for _, r := range []*fleet.ServiceRule{hours, days} {
		b.work(fleet.WorkRecord{At: done, AirframeID: &a.ID, RuleID: &r.ID, Action: "inspect"})
	}
	b.recompute(a)
	it := b.item(hours, a.ID)
	u := b.usage(it, "flight_hours")
	if u.Used != 10 || u.Remaining != 15 {
		t.Errorf("flight hours used %g remaining %g, want 10 and 15", u.Used, u.Remaining)
	}
	if want := b.now.Add(15 * day); it.ForecastDate == nil || !it.ForecastDate.Equal(want) {
		t.Errorf("25 h rule forecast %v, want now + 15 days = %v", it.ForecastDate, want)
	}
	it = b.item(days, a.ID)
	if want := done.Add(20 * day); it.ForecastDate == nil || !it.ForecastDate.Equal(want) {
		t.Errorf("20-day rule forecast %v, want since + 20 days = %v", it.ForecastDate, want)
	}
	if it.LastDoneAt == nil || !it.LastDoneAt.Equal(done) {
		t.Errorf("last done %v, want %v", it.LastDoneAt, done)
	}
}

// Notify hears exactly the items whose status changed, inside the
// transaction that writes them: ok -> due_soon -> overdue across recomputes
// and back to ok after a work record; an unchanged recompute is silent.
func TestNotifyOnTransitions(t *testing.T) {
	b := newBench(t, false)
	a := b.airframe("NT-01", "NT")
	r := b.rule(fleet.ServiceRule{AppliesTo: "airframe", Model: sp("NT"), Flights: ip(10)})
	steady := b.rule(fleet.ServiceRule{AppliesTo: "airframe", Model: sp("NT"), Flights: ip(1000)})
	var got []transition
	b.p.Notify = func(ctx context.Context, tx pgx.Tx, previous string, it *fleet.DueItem) error {
		// Inside the writing transaction the new status is already visible.
		var st string
		if err := tx.QueryRow(ctx, `SELECT status FROM due_items WHERE rule_id = $1 AND subject_id = $2`,
			it.RuleID, it.SubjectID).Scan(&st); err != nil {
			return err
		}
		if st != it.Status {
			return fmt.Errorf("due_items holds %s, notified %s", st, it.Status)
		}
		got = append(got, transition{previous, it.Status, it.Source(), it.SubjectID})
		return nil
	}
	at := b.ago(20 * day)
	fly := func(n int) {
		for range n {
			b.flight(a, at, 30*time.Minute)
			at = at.Add(day)
		}
	}
	step := func(name string, want ...transition) {
		t.Helper()
		got = nil
		b.recompute(a)
		if fmt.Sprint(got) != fmt.Sprint(want) {
			t.Errorf("%s: notified %v, want %v", name, got, want)
		}
	}
	fly(8)
	step("8 of 10 flights (new ok items)")
	fly(1)
	step("9 of 10", transition{fleet.DueOK, fleet.DueSoon, r.ID, a.ID})
	step("unchanged")
	fly(1)
	step("10 of 10", transition{fleet.DueSoon, fleet.DueOverdue, r.ID, a.ID})
	step("unchanged overdue")
	b.work(fleet.WorkRecord{At: at, AirframeID: &a.ID, RuleID: &r.ID, Action: "inspect"})
	step("after the work record", transition{fleet.DueOverdue, fleet.DueOK, r.ID, a.ID})
	b.wantStatus(b.item(steady, a.ID), fleet.DueOK)
}

// PartsForecast (hand arithmetic): four propellers of PR-50 fitted 40 days
// ago on an airframe flying 1 h a day for the trailing 30 days, against a
// 50 h replace rule: each has 30 h used, 20 h left, so the first replacement
// falls at day 20 and a fresh propeller lasts 50 days. Over 90 days that is
// 1 + floor((90 - 20) / 50) = 2 each, 8 in all; with 3 in stock the
// shortfall is 5. Over 30 days it is 4 (shortfall 1); over 15 days none.
func TestPartsForecast(t *testing.T) {
	b := newBench(t, false)
	a := b.airframe("PF-01", "PF")
	b.fullQuad(a, b.ago(40*day), 0, "PR-50")
	for k := 1; k <= 30; k++ {
		b.flight(a, b.ago(time.Duration(k)*day).Add(time.Hour), time.Hour)
	}
	for range 3 {
		b.prop(fleet.CW, "PR-50")
	}
	b.prop(fleet.CW, "PR-OTHER")
	b.rule(fleet.ServiceRule{AppliesTo: "propeller", PartNumber: sp("PR-50"), FlightHours: fp(50), Action: "replace"})
	// An inspection rule is not a replacement and adds no demand.
	b.rule(fleet.ServiceRule{AppliesTo: "propeller", FlightHours: fp(40), Action: "inspect"})
	b.recompute(a)
	for _, c := range []struct{ days, expected, shortfall int }{{90, 8, 5}, {30, 4, 1}, {15, 0, 0}} {
		f, err := b.p.PartsForecast(b.ctx, c.days)
		if err != nil {
			t.Fatal(err)
		}
		if c.expected == 0 {
			if len(f.PartNumbers) != 0 {
				t.Errorf("%d days: demand %+v, want none", c.days, f.PartNumbers)
			}
			continue
		}
		if len(f.PartNumbers) != 1 {
			t.Fatalf("%d days: demand %+v, want PR-50 only", c.days, f.PartNumbers)
		}
		d := f.PartNumbers[0]
		if d.PartNumber != "PR-50" || d.Kind != "propeller" || d.Expected != c.expected || d.InStock != 3 ||
			d.Shortfall != c.shortfall || len(d.Subjects) != 4 {
			t.Errorf("%d days: %+v, want PR-50 expected %d in stock 3 shortfall %d over 4 propellers", c.days, d,
				c.expected, c.shortfall)
		}
	}
}

// Work records: a record against a rule resets that rule's counters for its
// subject (usage counts from the record's time, other rules keep counting);
// a replacement swaps the part at its position in one transaction and the
// new part starts fresh; a record resolving an event closes it; records
// refuse UPDATE and DELETE, and a correction is a new record that stands in
// for the one it corrects.
func TestWorkRecords(t *testing.T) {
	b := newBench(t, false)
	a := b.airframe("WR-01", "WR")
	_, props := b.fullQuad(a, b.ago(30*day), 0, "PR-R")
	hours := b.rule(fleet.ServiceRule{AppliesTo: "airframe", Model: sp("WR"), FlightHours: fp(10)})
	other := b.rule(fleet.ServiceRule{AppliesTo: "airframe", Model: sp("WR"), FlightHours: fp(100)})
	days := b.rule(fleet.ServiceRule{AppliesTo: "airframe", Model: sp("WR"), Days: ip(30)})
	propRule := b.rule(fleet.ServiceRule{AppliesTo: "propeller", PartNumber: sp("PR-R"), FlightHours: fp(10), Action: "replace"})
	for k := 8; k >= 3; k-- {
		b.flight(a, b.ago(time.Duration(k)*day), time.Hour)
	}
	b.recompute(a)
	if u := b.usage(b.item(hours, a.ID), "flight_hours"); u.Used != 6 {
		t.Fatalf("before the record: %g h used, want 6", u.Used)
	}

	// Reset: two more flights after the record count; the six before do not.
	rec := b.work(fleet.WorkRecord{At: b.ago(60 * time.Hour), AirframeID: &a.ID, RuleID: &hours.ID, Action: "inspect"})
	if rec.AirframeHours == nil || *rec.AirframeHours != 6 {
		t.Errorf("record's airframe hours %v, want 6 (time in service at the entry)", rec.AirframeHours)
	}
	b.flight(a, b.ago(2*day), time.Hour)
	old := props[0]
	fresh := b.prop(fleet.CCW, "PR-R")
	swap := b.ago(36 * time.Hour)
	repl := b.work(fleet.WorkRecord{At: swap, AirframeID: &a.ID, RuleID: &propRule.ID, Action: "replace",
		RemovedPartID: &old.ID, FittedPartID: &fresh.ID})
	b.flight(a, b.ago(day), time.Hour)
	b.recompute(a)
	it := b.item(hours, a.ID)
	if u := b.usage(it, "flight_hours"); u.Used != 2 || it.LastDoneAt == nil || !it.LastDoneAt.Equal(rec.At) ||
		!it.Since.Equal(rec.At) {
		t.Errorf("after the record: used %g last done %v since %v, want 2 h from %v", u.Used, it.LastDoneAt, it.Since, rec.At)
	}
	if u := b.usage(b.item(other, a.ID), "flight_hours"); u.Used != 8 {
		t.Errorf("a rule the record does not name: %g h used, want 8", u.Used)
	}

	// Replacement: the record names the position and the removed part; the
	// fitment at the swap shows the new part, just before it the old one.
	if repl.Position == nil || *repl.Position != "m1" || repl.PartID == nil || *repl.PartID != old.ID {
		t.Errorf("replacement record position %v part %v, want m1 and the removed part", repl.Position, repl.PartID)
	}
	for _, c := range []struct {
		at   time.Time
		want string
	}{{swap.Add(-time.Second), old.ID}, {swap, fresh.ID}} {
		fm, err := b.db.Fitment(b.ctx, a.ID, c.at)
		if err != nil {
			t.Fatal(err)
		}
		n := 0
		for _, p := range fm.Parts {
			if p.Kind == fleet.KindPropeller && p.Position == "m1" {
				n++
				if p.PartID != c.want {
					t.Errorf("propeller at m1 at %v is %s, want %s", c.at, p.Serial, c.want)
				}
			}
		}
		if n != 1 || len(fm.Empty) != 0 {
			t.Errorf("fitment at %v: %d propellers at m1, empty %v", c.at, n, fm.Empty)
		}
	}
	if got, _ := b.db.Part(b.ctx, old.ID); got.Status != fleet.PartStock {
		t.Errorf("removed propeller status %s, want stock", got.Status)
	}
	// The new propeller counts only the flight after the swap; the old one has
	// no item any more; the others count all eight flights.
	if it := b.item(propRule, fresh.ID); b.usage(it, "flight_hours").Used != 1 || !it.Since.Equal(swap) || it.LastDoneAt != nil {
		t.Errorf("new propeller: %+v, want 1 h since the swap, never done", it)
	}
	if items, _ := b.db.DueItems(b.ctx, store.DueFilter{SubjectID: old.ID}); len(items) != 0 {
		t.Errorf("removed propeller still has %d due items", len(items))
	}
	if u := b.usage(b.item(propRule, props[1].ID), "flight_hours"); u.Used != 8 {
		t.Errorf("propeller at m2: %g h, want 8", u.Used)
	}
	// A replacement that cannot fit (wrong rotation) changes nothing.
	wrong := b.prop(fleet.CW, "PR-R")
	if _, err := b.db.CreateWorkRecord(b.ctx, &fleet.WorkRecord{At: b.ago(time.Hour), Action: "replace", Work: "swap",
		PerformedBy: "x", RemovedPartID: &fresh.ID, FittedPartID: &wrong.ID}); err == nil {
		t.Error("a cw propeller replaced one at ccw m1")
	}
	if got, _ := b.db.Part(b.ctx, fresh.ID); got.Status != fleet.PartFitted {
		t.Errorf("after a refused replacement the fitted propeller is %s", got.Status)
	}

	// Resolving an event; an event already resolved cannot be resolved again
	// and the refused record is not written.
	ev := b.event("hard_landing", a, nil, b.ago(20*time.Hour))
	res := b.work(fleet.WorkRecord{At: b.ago(10 * time.Hour), AirframeID: &a.ID, Action: "inspect", Resolves: []string{ev.ID}})
	if e, _ := b.db.Event(b.ctx, ev.ID); e.ResolvedAt == nil || !e.ResolvedAt.Equal(res.At) || e.ResolvedBy == nil {
		t.Errorf("event after the record: %+v", e)
	}
	before, _, _ := b.db.WorkRecords(b.ctx, store.WorkFilter{AirframeID: a.ID}, store.Page{Limit: 100})
	if _, err := b.db.CreateWorkRecord(b.ctx, &fleet.WorkRecord{At: b.ago(time.Hour), AirframeID: &a.ID, Action: "inspect",
		Work: "again", PerformedBy: "x", Resolves: []string{ev.ID}}); fleet.ErrorCode(err) != fleet.EUNPROCESSABLE {
		t.Errorf("resolving a resolved event: %v", err)
	}
	after, _, _ := b.db.WorkRecords(b.ctx, store.WorkFilter{AirframeID: a.ID}, store.Page{Limit: 100})
	if len(after) != len(before) {
		t.Errorf("a refused record was written: %d records, then %d", len(before), len(after))
	}

	// Append-only: the trigger refuses with insufficient_privilege (42501).
	for _, sql := range []string{`UPDATE work_records SET work = 'edited' WHERE id = $1`, `DELETE FROM work_records WHERE id = $1`} {
		_, err := b.db.Pool().Exec(b.ctx, sql, rec.ID)
		var pe *pgconn.PgError
		if !errors.As(err, &pe) || pe.Code != "42501" {
			t.Errorf("%s: %v, want SQLSTATE 42501", sql, err)
		}
	}

	// Correction: an inspection entered a day ago was done six days ago; the
	// correction stands in for it.
	wrongDate := b.work(fleet.WorkRecord{At: b.ago(day), AirframeID: &a.ID, RuleID: &days.ID, Action: "inspect"})
	corr := b.work(fleet.WorkRecord{At: b.ago(6 * day), AirframeID: &a.ID, RuleID: &days.ID, Action: "inspect",
		CorrectsID: &wrongDate.ID, Work: "correction: inspected six days ago"})
	b.recompute(a)
	it = b.item(days, a.ID)
	if it.LastDoneAt == nil || !it.LastDoneAt.Equal(corr.At) || b.usage(it, "days").Used != 6 {
		t.Errorf("after the correction: last done %v, %g days, want %v and 6", it.LastDoneAt, b.usage(it, "days").Used, corr.At)
	}
	list, _, _ := b.db.WorkRecords(b.ctx, store.WorkFilter{RuleID: days.ID}, store.Page{Limit: 10})
	if len(list) != 2 || list[0].ID != wrongDate.ID || !list[0].At.Equal(wrongDate.At) || list[1].CorrectsID == nil ||
		*list[1].CorrectsID != wrongDate.ID {
		t.Errorf("records against the rule: %+v", list)
	}
}
