package demo

import (
	"fmt"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/sim"
)

// periodicRule names the default programme's periodic airframe inspection.
const periodicRule = "airframe periodic inspection"

// keepUnder is the share of the rule's hours or days at which the demo firm
// inspects: well before the limit, as a firm keeping its programme would,
// so the demo's flights take off ready (the stories' own blockers aside).
const keepUnder = 0.8

// dueSoonShare is where the due-soon story's airframe stands on the days
// limit at the scenario's end: inside the default warning (warn_at 0.9) and
// short of the limit even a day later.
const dueSoonShare = 0.95

// Limits is a periodic rule's hours and days (zero: no such limit).
type Limits struct {
	Hours float64
	Days  int
}

// InspectionPlan is when each airframe was inspected, oldest first, and the
// airframe of the due-soon story ("" when none could carry it).
type InspectionPlan struct {
	At      map[string][]time.Time
	DueSoon string
}

// PlanInspections plans the periodic inspections of every airframe: the
// last a few days to a few weeks before the scenario's end, and before it
// one between flights whenever the next flight would take off past
// keepUnder of the hours or days since the previous one (counted from the
// first flight). One airframe, the least flown over the last weeks among
// those no other story uses, was last inspected dueSoonShare of the days
// limit before the end: its inspection is due soon (a story).
func PlanInspections(sc *sim.Scenario, lim Limits) InspectionPlan {
	plan := InspectionPlan{At: map[string][]time.Time{}}
	last := map[string]time.Time{}
	for i, a := range sc.Airframes {
		last[a.Code] = sc.End.Add(-time.Duration(6+5*i)*24*time.Hour - 9*time.Hour)
	}
	if lim.Days > 0 {
		soonAt := sc.End.Add(-time.Duration(dueSoonShare * float64(lim.Days) * 24 * float64(time.Hour)))
		if code := leastFlownSince(sc, soonAt, lim); code != "" {
			plan.DueSoon, last[code] = code, soonAt
		}
	}
	for _, a := range sc.Airframes {
		plan.At[a.Code] = planAirframe(sc.Flights, a.Code, last[a.Code], lim)
	}
	return plan
}

// storyAirframes are those other stories need as they are.
func storyAirframes(sc *sim.Scenario) map[string]bool {
	st := sc.Stories
	used := map[string]bool{st.HardDutyAirframe: true, st.SwapAirframe: true}
	for _, i := range []int{st.HardLandingFlight, st.PropStrikeFlight} {
		if i >= 0 && i < len(sc.Flights) {
			used[sc.Flights[i].Airframe] = true
		}
	}
	return used
}

// leastFlownSince is the airframe outside the stories with the fewest hours
// from since to the end, if they stay under keepUnder of the hours limit.
func leastFlownSince(sc *sim.Scenario, since time.Time, lim Limits) string {
	hours := map[string]float64{}
	for _, f := range sc.Flights {
		if !f.TakeoffAt.Before(since) {
			hours[f.Airframe] += f.LandingAt.Sub(f.TakeoffAt).Hours()
		}
	}
	used := storyAirframes(sc)
	best, bestH := "", 0.0
	for _, a := range sc.Airframes {
		if h := hours[a.Code]; !used[a.Code] && (best == "" || h < bestH) {
			best, bestH = a.Code, h
		}
	}
	if best == "" || (lim.Hours > 0 && bestH >= keepUnder*lim.Hours) {
		return ""
	}
	return best
}

// planAirframe walks one airframe's flights up to its last inspection and
// inspects between two flights when the next would take off past keepUnder
// of a limit.
func planAirframe(flights []sim.Flight, code string, last time.Time, lim Limits) []time.Time {
	var at []time.Time
	var since, prevLanding time.Time
	used := 0.0
	for _, f := range flights {
		if f.Airframe != code || !f.TakeoffAt.Before(last) {
			continue
		}
		if since.IsZero() {
			since = f.TakeoffAt // counting starts at the first flight
		}
		h := f.LandingAt.Sub(f.TakeoffAt).Hours()
		overHours := lim.Hours > 0 && used+h > keepUnder*lim.Hours
		overDays := lim.Days > 0 && f.TakeoffAt.Sub(since).Hours()/24 > keepUnder*float64(lim.Days)
		if (overHours || overDays) && !prevLanding.IsZero() {
			// Halfway between the previous landing and this take-off.
			t := prevLanding.Add(f.TakeoffAt.Sub(prevLanding) / 2).Truncate(time.Second)
			at = append(at, t)
			since, used = t, 0
		}
		used += h
		prevLanding = f.LandingAt
	}
	return append(at, last)
}

// loadInspections records the planned periodic inspections.
func (l *loader) loadInspections(sc *sim.Scenario) error {
	rules, err := l.db.Rules(l.ctx)
	if err != nil {
		return err
	}
	var rule *fleet.ServiceRule
	for _, r := range rules {
		if r.Name == periodicRule {
			rule = r
		}
	}
	if rule == nil {
		return nil // the firm edited the default programme away
	}
	var lim Limits
	if rule.FlightHours != nil {
		lim.Hours = *rule.FlightHours
	}
	if rule.Days != nil {
		lim.Days = *rule.Days
	}
	approver := "J. Marsh"
	plan := PlanInspections(sc, lim)
	for _, a := range sc.Airframes {
		id := l.airframes[a.Code]
		for _, at := range plan.At[a.Code] {
			_, err := l.db.CreateWorkRecord(l.ctx, &fleet.WorkRecord{At: at, AirframeID: &id, RuleID: &rule.ID, Action: "inspect",
				Work:        "periodic inspection: arms, mounts, fasteners, wiring, connectors; no discrepancies",
				PerformedBy: "R. Castell", ApprovedBy: &approver})
			if err != nil {
				return fmt.Errorf("%s: %w", a.Code, err)
			}
		}
	}
	return nil
}
