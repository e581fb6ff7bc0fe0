package web

import (
	"sort"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/schedule"
)

// PlanItem is one due item on the planner, with its airframe.
type PlanItem struct {
	*fleet.DueItem
	AirframeCode string // the airframe it belongs to ("" for a pack)
	Week         time.Time
}

// PlanWeek is the items falling due in one week (Monday to Sunday, UTC).
type PlanWeek struct {
	Start time.Time
	Items []PlanItem
}

// PlanGroup is the items of one airframe (or of the packs).
type PlanGroup struct {
	AirframeCode string
	Items        []PlanItem
	Grounding    int
}

// PlanData is the planner page.
type PlanData struct {
	Days      int
	Choices   []int
	Overdue   []PlanItem
	Weeks     []PlanWeek
	Airframes []PlanGroup
	Spares    *schedule.Forecast
	Chart     Chart
	Total     int
}

// PlanChoices are the horizons the planner offers.
var PlanChoices = []int{30, 90, 180}

// weekOf is the Monday 00:00 UTC starting t's week.
func weekOf(t time.Time) time.Time {
	t = t.UTC().Truncate(24 * time.Hour)
	return t.AddDate(0, 0, -((int(t.Weekday()) + 6) % 7))
}

// PlanItems lists what is overdue or falls due within days of now, by
// forecast date, each with its airframe's code; items without a forecast
// inside the horizon are left out.
func PlanItems(items []*fleet.DueItem, codes map[string]string, now time.Time, days int) []PlanItem {
	end := now.AddDate(0, 0, days)
	var out []PlanItem
	for _, it := range items {
		if it.Status != fleet.DueOverdue && (it.ForecastDate == nil || it.ForecastDate.After(end)) {
			continue
		}
		pi := PlanItem{DueItem: it}
		if it.AirframeID != nil {
			pi.AirframeCode = codes[*it.AirframeID]
		}
		if it.ForecastDate != nil {
			pi.Week = weekOf(*it.ForecastDate)
		}
		out = append(out, pi)
	}
	sort.SliceStable(out, func(i, j int) bool {
		a, b := out[i].ForecastDate, out[j].ForecastDate
		switch {
		case a == nil || b == nil:
			return a == nil && b != nil
		}
		return a.Before(*b)
	})
	return out
}

// PlanPage builds the planner: overdue items, then what falls due by week
// and by airframe within the horizon, and the spares shortfall.
func PlanPage(items []PlanItem, spares *schedule.Forecast, now time.Time, days int) (PlanData, error) {
	d := PlanData{Days: days, Choices: PlanChoices, Spares: spares, Total: len(items)}
	byWeek := map[time.Time]*PlanWeek{}
	byAirframe := map[string]*PlanGroup{}
	thisWeek := weekOf(now)
	for _, it := range items {
		if it.Status == fleet.DueOverdue && (it.ForecastDate == nil || it.ForecastDate.Before(now)) {
			d.Overdue = append(d.Overdue, it)
		} else {
			w := it.Week
			if w.Before(thisWeek) {
				w = thisWeek
			}
			if byWeek[w] == nil {
				byWeek[w] = &PlanWeek{Start: w}
			}
			byWeek[w].Items = append(byWeek[w].Items, it)
		}
		g := byAirframe[it.AirframeCode]
		if g == nil {
			g = &PlanGroup{AirframeCode: it.AirframeCode}
			byAirframe[it.AirframeCode] = g
		}
		g.Items = append(g.Items, it)
		if it.Grounding {
			g.Grounding++
		}
	}
	for _, w := range byWeek {
		d.Weeks = append(d.Weeks, *w)
	}
	sort.Slice(d.Weeks, func(i, j int) bool { return d.Weeks[i].Start.Before(d.Weeks[j].Start) })
	for _, g := range byAirframe {
		d.Airframes = append(d.Airframes, *g)
	}
	sort.Slice(d.Airframes, func(i, j int) bool {
		a, b := d.Airframes[i].AirframeCode, d.Airframes[j].AirframeCode
		if (a == "") != (b == "") {
			return b == "" // packs last
		}
		return a < b
	})
	var err error
	d.Chart, err = PlanChart(thisWeek, days, d.Overdue, d.Weeks)
	return d, err
}
