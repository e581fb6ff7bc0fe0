package demo

import (
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/internal/sim"
)

// The default programme's periodic inspection: 25 flight hours or 90 days
// (migrations/005_programme.sql), due soon from 0.9 of either.
var defaultLimits = Limits{Hours: 25, Days: 90}

// Every demo flight takes off within the periodic inspection's limits, so
// no flight of the demo is flown not ready on it (a four-month demo used to
// fly airframes past 25 hours or 90 days), and one airframe's inspection is
// due soon at the end — and still a day later — without being overdue.
// Hours and days are counted as the rule counts them: flight time of the
// flights taking off since the last inspection, or since the first flight.
func TestInspectionPlan(t *testing.T) {
	for _, months := range []int{1, 2, 4, 6} {
		end := time.Date(2026, 12, 2, 0, 0, 0, 0, time.UTC)
		sc := sim.DemoFleet(20261202, end.AddDate(0, -months, 0), months)
		plan := PlanInspections(&sc, defaultLimits)
		if plan.DueSoon == "" {
			t.Fatalf("%d months: no airframe carries the due-soon story", months)
		}
		if storyAirframes(&sc)[plan.DueSoon] {
			t.Errorf("%d months: the due-soon airframe %s is another story's", months, plan.DueSoon)
		}
		for _, a := range sc.Airframes {
			insp := plan.At[a.Code]
			var since time.Time
			hours, next := 0.0, 0
			for _, f := range sc.Flights {
				if f.Airframe != a.Code {
					continue
				}
				for next < len(insp) && !insp[next].After(f.TakeoffAt) {
					since, hours = insp[next], 0
					next++
				}
				if since.IsZero() {
					since = f.TakeoffAt
				}
				hours += f.LandingAt.Sub(f.TakeoffAt).Hours()
				days := f.TakeoffAt.Sub(since).Hours() / 24
				if hours >= defaultLimits.Hours || days >= float64(defaultLimits.Days) {
					t.Errorf("%d months: %s flight at %s: %.1f h and %.1f days since the inspection", months, a.Code, f.TakeoffAt, hours, days)
				}
			}
			if a.Code != plan.DueSoon {
				continue
			}
			for _, now := range []time.Time{sc.End, sc.End.Add(24 * time.Hour)} {
				days := now.Sub(insp[len(insp)-1]).Hours() / 24 / float64(defaultLimits.Days)
				if days < 0.9 || days >= 1 || hours/defaultLimits.Hours >= 0.9 {
					t.Errorf("%d months: %s at %s: %.3f of the days, %.3f of the hours; want days in [0.9, 1), hours under 0.9",
						months, a.Code, now, days, hours/defaultLimits.Hours)
				}
			}
		}
	}
}
