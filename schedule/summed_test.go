package schedule_test

import (
	"fmt"
	"math"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/sim"
	"github.com/rotorwright/rotorwright/store"
)

// The due list with usage summed by the database (RuleUsage) equals the one
// built the old way, each subject's flights read one row each and summed in
// Go, on a fleet that exercises every usage rule: parts moved between
// airframes and refitted (fits' spans intersected with flights), logged
// flights (revolutions, pack cycles), flights before a work record and
// outside the trailing window, a corrected work record, events, rules by
// model and part number. Checked for the whole fleet and for one airframe
// with a foreign pack (the after-ingest scope).
func TestSetBasedDueMatchesRowByRow(t *testing.T) {
	b := newBench(t, true)
	x, y, idle := b.airframe("SB-X", "X9"), b.airframe("SB-Y", "Y4"), b.airframe("SB-Z", "X9")
	_ = idle // registered, never flown: a subject with no flights
	start := b.ago(200 * day)
	_, xProps := b.fullQuad(x, start, 0, "PR-10")
	yMotors, _ := b.fullQuad(y, start, 2000, "PR-11")
	pk1, pk2 := b.pack(4, ""), b.pack(4, "")
	b.rule(fleet.ServiceRule{AppliesTo: "airframe", Model: sp("X9"), Flights: ip(40), FlightHours: fp(9)})
	b.rule(fleet.ServiceRule{AppliesTo: "motor", PartNumber: sp("MT-2814"), Revolutions: fp(2e6), FlightHours: fp(30)})
	b.rule(fleet.ServiceRule{AppliesTo: "pack", FlightHours: fp(10), Flights: ip(25)})
	b.rule(fleet.ServiceRule{AppliesTo: "propeller", PartNumber: sp("PR-11"), Flights: ip(12), Days: ip(120)})

	// Manual flights of uneven length (not whole seconds of an hour), some
	// long ago, some inside the 30-day window.
	at := b.ago(190 * day)
	for i := 0; i < 24; i++ {
		d := time.Duration(7+i*3)*time.Minute + time.Duration(i*7919)*time.Millisecond
		packs := []*fleet.Part{pk1}
		if i%3 == 0 {
			packs = []*fleet.Part{pk2}
		}
		b.flight(x, at, d, packs...)
		b.flight(y, at.Add(3*time.Hour), d+13*time.Second)
		at = at.Add(time.Duration(6+i%3) * day) // the last about 22 days ago
	}
	// Logged flights on X: revolutions at each position, pack charge.
	for i := 0; i < 3; i++ {
		spec := sim.DefaultSpec(uint64(400 + i))
		spec.Airframe, spec.Start = x.Code, b.ago(time.Duration(9-2*i)*day)
		spec.SampleHz, spec.DurationS = 5, 240
		spec.Packs[0].Serial = pk1.Serial
		b.logged(x, pk1, spec)
	}
	// X's m1 propeller is removed, X flies on without it for a while, and
	// it is refitted: only the flights inside its two fits count.
	moved := xProps[0]
	if _, err := b.db.Remove(b.ctx, x.ID, store.RemovalRequest{PartID: moved.ID, At: b.ago(120 * day), Reason: "inspection"}); err != nil {
		t.Fatal(err)
	}
	b.fit(x, moved, "m1", b.ago(80*day))
	// A motor of Y removed for good: still a subject of none (not fitted).
	if _, err := b.db.Remove(b.ctx, y.ID, store.RemovalRequest{PartID: yMotors[3].ID, At: b.ago(50 * day), Reason: "noise"}); err != nil {
		t.Fatal(err)
	}
	rules, err := b.db.Rules(b.ctx)
	if err != nil {
		t.Fatal(err)
	}
	byName := map[string]*fleet.ServiceRule{}
	for _, r := range rules {
		byName[r.Name] = r
	}
	periodic := byName["airframe periodic inspection"]
	b.work(fleet.WorkRecord{At: b.ago(60 * day), AirframeID: &x.ID, RuleID: &periodic.ID, Action: "inspect"})
	wrong := b.work(fleet.WorkRecord{At: b.ago(2 * day), AirframeID: &y.ID, RuleID: &periodic.ID, Action: "inspect"})
	b.work(fleet.WorkRecord{At: b.ago(70 * day), AirframeID: &y.ID, RuleID: &periodic.ID, Action: "inspect",
		CorrectsID: &wrong.ID, Work: "correction: inspected seventy days ago"})
	// Edges: a flight just before X's record (not counted) and one taking
	// off at the very moment of Y's standing record (counted).
	b.flight(x, b.ago(60*day+2*time.Hour), 25*time.Minute)
	b.flight(y, b.ago(70*day), 10*time.Minute)
	b.event("hard_landing", x, nil, b.ago(4*day))
	b.event("prop_strike", y, nil, b.ago(3*day))
	b.event("pack_swelling", nil, pk2, b.ago(2*day))

	for _, c := range []struct {
		name     string
		airframe string
		packs    []string
	}{{"fleet", "", nil}, {"airframe X", x.ID, nil}, {"airframe Y with a pack of X", y.ID, []string{pk2.ID}}} {
		t.Run(c.name, func(t *testing.T) {
			got, err := b.p.DueSetBased(b.ctx, c.airframe, c.packs)
			if err != nil {
				t.Fatal(err)
			}
			want, err := b.p.DueOneByOne(b.ctx, c.airframe, c.packs)
			if err != nil {
				t.Fatal(err)
			}
			sameDue(t, got, want)
		})
	}
}

// sameDue fails unless the rule items of got and want are the same, floats
// to 1e-12 relative: the database adds float8 hours in its own order and
// divides the epoch in float8, where the old path divided in numeric and
// added in take-off order; each term differs by at most an ulp or so, and a
// sum of n terms by about n ulps (n is at most a few dozen here, 1e-12 is
// far above that and far below any difference in what is counted, which
// moves a sum by a whole flight).
func sameDue(t *testing.T, got, want []*fleet.DueItem) {
	t.Helper()
	key := func(it *fleet.DueItem) string { return *it.RuleID + "/" + it.SubjectID }
	g := map[string]*fleet.DueItem{}
	for _, it := range got {
		if it.RuleID != nil {
			g[key(it)] = it
		}
	}
	n := 0
	for _, w := range want {
		n++
		it := g[key(w)]
		if it == nil {
			t.Errorf("%s on %s: missing from the set-based list", w.RuleName, w.Subject)
			continue
		}
		delete(g, key(w))
		what := fmt.Sprintf("%s on %s", w.RuleName, w.Subject)
		if it.Status != w.Status || it.Reason != w.Reason || it.Grounding != w.Grounding || it.SubjectKind != w.SubjectKind ||
			!sameStr(it.AirframeID, w.AirframeID) || !sameStr(it.PartNumber, w.PartNumber) || !sameStr(it.ForecastReason, w.ForecastReason) {
			t.Errorf("%s: got %+v\nwant %+v", what, it, w)
		}
		sameTime(t, what+" last done", it.LastDoneAt, w.LastDoneAt)
		sameTime(t, what+" since", it.Since, w.Since)
		sameTime(t, what+" forecast", it.ForecastDate, w.ForecastDate)
		closeTo(t, what+" fraction", it.Fraction, w.Fraction)
		if len(it.Usage) != len(w.Usage) {
			t.Errorf("%s: %d limits, want %d", what, len(it.Usage), len(w.Usage))
			continue
		}
		for i, u := range w.Usage {
			v := it.Usage[i]
			lw := what + " " + u.Limit
			if v.Limit != u.Limit || !sameStr(v.ForecastReason, u.ForecastReason) || (v.RatePerDay == nil) != (u.RatePerDay == nil) {
				t.Errorf("%s: got %+v, want %+v", lw, v, u)
				continue
			}
			closeTo(t, lw+" used", v.Used, u.Used)
			closeTo(t, lw+" remaining", v.Remaining, u.Remaining)
			if u.RatePerDay != nil {
				closeTo(t, lw+" rate", *v.RatePerDay, *u.RatePerDay)
			}
			sameTime(t, lw+" forecast", v.Forecast, u.Forecast)
		}
	}
	for _, it := range g {
		t.Errorf("%s on %s: only in the set-based list", it.RuleName, it.Subject)
	}
	if n < 20 {
		t.Fatalf("only %d items compared: the fixture lost its subjects", n)
	}
}

func sameStr(a, b *string) bool { return a == nil && b == nil || a != nil && b != nil && *a == *b }

// sameTime allows a millisecond: a forecast date is now plus remaining over
// rate, so an ulp in either moves it by nanoseconds.
func sameTime(t *testing.T, what string, a, b *time.Time) {
	t.Helper()
	if (a == nil) != (b == nil) || a != nil && a.Sub(*b).Abs() > time.Millisecond {
		t.Errorf("%s: %v, want %v", what, a, b)
	}
}

func closeTo(t *testing.T, what string, got, want float64) {
	t.Helper()
	if math.Abs(got-want) > 1e-12*math.Max(1, math.Abs(want)) {
		t.Errorf("%s = %.17g, want %.17g", what, got, want)
	}
}
