package schedule_test

import (
	"fmt"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// Forecast dates from extreme usage rates, through the due list and the
// spares forecast: three packs whose equivalent full cycles over the
// trailing 30 days give exactly 0, 1e-12 and 1e12 cycles a day, each with
// its 300-cycle retire rule just reset by a work record (300 cycles left).
// At 1e-12 a day the limit is 3e14 days away: beyond the 50-year horizon,
// no date and the reason, never a wrapped date (the old arithmetic turned
// it into a date about three centuries back, listed it first and counted it
// in the 90-day spares). At 1e12 a day it is due at once and comes round
// more often than any count could hold: the count saturates. At 0 there is
// no rate: no date, and that reason.
func TestForecastRates(t *testing.T) {
	b := newBench(t, false)
	a := b.airframe("FR-01", "FR")
	b.fullQuad(a, b.ago(60*day), 0, "PR-FR")
	rule := b.rule(fleet.ServiceRule{AppliesTo: "pack", Cycles: fp(300), Action: "retire"})
	rates := []float64{0, 1e-12, 1e12}
	packs := make([]*fleet.Part, len(rates))
	for i, rate := range rates {
		pk := b.pack(4, "")
		pn := fmt.Sprintf("PK-RATE-%d", i)
		if _, err := b.db.UpdatePart(b.ctx, pk.ID, partVersion(b, pk), func(p *fleet.Part) error {
			p.PartNumber = pn
			return nil
		}); err != nil {
			t.Fatal(err)
		}
		f := b.flight(a, b.ago(10*day+time.Duration(i)*time.Hour), 20*time.Minute, pk)
		// The flight's share of the pack: 30 days x rate cycles of 8000 mAh,
		// so the trailing 30-day rate is exactly rate cycles a day.
		if _, err := b.db.Pool().Exec(b.ctx, `UPDATE flight_packs SET charge_mah = $1 WHERE flight_id = $2`,
			30*rate*8000, f.ID); err != nil {
			t.Fatal(err)
		}
		b.work(fleet.WorkRecord{At: b.ago(5 * day), PartID: &pk.ID, RuleID: &rule.ID, Action: "inspect"})
		packs[i] = pk
	}
	b.recompute(a, packs...)

	reason := func(s *string) string {
		if s == nil {
			return ""
		}
		return *s
	}
	for i, want := range []struct {
		date   bool
		reason string
	}{{false, fleet.ForecastNoUse}, {false, fleet.ForecastBeyondHorizon}, {true, ""}} {
		it := b.item(rule, packs[i].ID)
		u := b.usage(it, "cycles")
		if u.Remaining != 300 || u.RatePerDay == nil || *u.RatePerDay != rates[i] {
			t.Errorf("rate %g: remaining %g rate %v, want 300 and the rate", rates[i], u.Remaining, u.RatePerDay)
		}
		if (u.Forecast != nil) != want.date || reason(u.ForecastReason) != want.reason ||
			(it.ForecastDate != nil) != want.date || reason(it.ForecastReason) != want.reason {
			t.Errorf("rate %g: limit forecast %v (%s), item forecast %v (%s); want a date %v, reason %q",
				rates[i], u.Forecast, reason(u.ForecastReason), it.ForecastDate, reason(it.ForecastReason), want.date, want.reason)
		}
		if want.date && (u.Forecast.Before(b.now) || u.Forecast.After(b.now.Add(time.Millisecond))) {
			t.Errorf("rate %g: due %v, want at once (%v)", rates[i], u.Forecast, b.now)
		}
		b.wantStatus(it, fleet.DueOK)
	}
	// The due list puts the dated item first; undated items sort last.
	items, err := b.db.DueItems(b.ctx, store.DueFilter{})
	if err != nil {
		t.Fatal(err)
	}
	if len(items) != 3 || items[0].SubjectID != packs[2].ID {
		t.Errorf("due list order %v, want the pack due at once first", items)
	}
	// Spares over 90 days: the pack at 1e12 a day would come round 3e11
	// times (90 x 1e12 / 300): saturated at a million repeats after the
	// first; the others none.
	f, err := b.p.PartsForecast(b.ctx, 90)
	if err != nil {
		t.Fatal(err)
	}
	if len(f.PartNumbers) != 1 || f.PartNumbers[0].PartNumber != "PK-RATE-2" || f.PartNumbers[0].Expected != 1+1_000_000 {
		t.Errorf("spares %+v, want only PK-RATE-2, saturated at 1 + 1000000", f.PartNumbers)
	}
}
