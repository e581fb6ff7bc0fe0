package web

import (
	"encoding/json"
	"fmt"
	"math"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/store"
)

// AirframeData is the airframe page.
type AirframeData struct {
	Airframe   *fleet.Airframe
	Layout     *fleet.Layout
	Readiness  *fleet.Readiness
	Positions  []PositionView
	Others     []fleet.FittedPart // fitted parts that are not rotors
	TopView    Chart
	Due        []*fleet.DueItem
	Flights    []store.RecentFlight
	Trends     *health.TrendsView
	Efficiency Chart
	Vibration  Chart
}

// AirframeInput is what the handler loaded for the airframe page.
type AirframeInput struct {
	Airframe  *fleet.Airframe
	Layout    *fleet.Layout
	Readiness *fleet.Readiness
	Fitment   *store.Fitment
	Health    map[string]json.RawMessage // stored health views of the fitted parts
	Due       []*fleet.DueItem
	Flights   []store.RecentFlight
	Trends    *health.TrendsView
}

// AirframePage builds the airframe page: the top view with each position's
// motor and propeller and their wear, readiness, due items, recent flights
// and the trend charts.
func AirframePage(in AirframeInput) (AirframeData, error) {
	d := AirframeData{Airframe: in.Airframe, Layout: in.Layout, Readiness: in.Readiness, Due: in.Due,
		Flights: in.Flights, Trends: in.Trends}
	dueFraction := map[string]*fleet.DueItem{} // subject -> its most used item
	for _, it := range in.Due {
		if cur := dueFraction[it.SubjectID]; cur == nil || it.Fraction > cur.Fraction {
			dueFraction[it.SubjectID] = it
		}
	}
	fitted := map[string]fleet.FittedPart{}
	for _, p := range in.Fitment.Parts {
		switch p.Kind {
		case fleet.KindMotor, fleet.KindPropeller:
			fitted[string(p.Kind)+"/"+p.Position] = p
		default:
			d.Others = append(d.Others, p)
		}
	}
	for _, pos := range in.Layout.Positions {
		pv := PositionView{Label: pos.Label, Rotation: pos.Rotation, ArmDeg: pos.ArmDeg}
		if m, ok := fitted["motor/"+pos.Label]; ok {
			pv.Motor = motorGauge(m, in.Health[m.PartID])
		}
		if p, ok := fitted["propeller/"+pos.Label]; ok {
			pv.Prop = propGauge(p, in.Health[p.PartID], dueFraction[p.PartID])
		}
		d.Positions = append(d.Positions, pv)
	}
	var err error
	d.TopView, err = TopView("topview", fmt.Sprintf("%s seen from above (%s)", in.Airframe.Code, in.Layout.Name), d.Positions)
	if err != nil {
		return d, err
	}
	if t := in.Trends; t != nil {
		d.Efficiency, err = TrendChart("efficiency", "Hover efficiency index", "efficiency index (measured / ideal power)",
			t.Series, func(p store.TrendPoint) *float64 { return p.EfficiencyIndex }, t.EfficiencyIndex, t.LimitPct)
		if err != nil {
			return d, err
		}
		// Only the flights of the trend's band: RMS over another band is
		// another measure (the page says how many are left out).
		d.Vibration, err = TrendChart("vibration", "Vibration", "vibration RMS (m/s²)",
			t.Series, func(p store.TrendPoint) *float64 {
				if !health.SameBand(p.VibrationBandHz, t.VibrationBandHz) {
					return nil
				}
				return p.VibrationRMS
			}, t.Vibration, t.LimitPct)
	}
	return d, err
}

func level(frac, soon float64) string {
	switch {
	case frac >= 1:
		return "stop"
	case frac >= soon:
		return "soon"
	}
	return "go"
}

func motorGauge(p fleet.FittedPart, raw json.RawMessage) *Gauge {
	g := &Gauge{PartID: p.PartID, Serial: p.Serial, Fraction: -1, Text: "bearing: no estimate"}
	var v health.View
	if raw != nil && json.Unmarshal(raw, &v) == nil && v.Motor != nil && v.Status != "unknown" {
		g.Fraction = v.Motor.ConsumedFraction
		g.Text = fmt.Sprintf("bearing %.0f %%", 100*v.Motor.ConsumedFraction)
		g.Level = level(v.Motor.ConsumedFraction, 0.9)
	}
	return g
}

func propGauge(p fleet.FittedPart, raw json.RawMessage, due *fleet.DueItem) *Gauge {
	g := &Gauge{PartID: p.PartID, Serial: p.Serial, Fraction: -1, Text: "no figures"}
	var v health.View
	hours := math.NaN()
	if raw != nil && json.Unmarshal(raw, &v) == nil && v.Propeller != nil {
		hours = v.Propeller.Hours
		g.Text = fmt.Sprintf("%.1f h", hours)
		if v.Propeller.ReplaceNow {
			g.Level, g.Fraction, g.Text = "stop", 1, g.Text+", replace"
		}
	}
	if due != nil && g.Level != "stop" {
		g.Fraction = due.Fraction
		g.Level = level(due.Fraction, 0.9)
		if due.Status == fleet.DueOverdue {
			g.Level = "stop"
		}
		if math.IsNaN(hours) {
			g.Text = fmt.Sprintf("%.0f %% of limit", 100*due.Fraction)
		} else {
			g.Text = fmt.Sprintf("%.1f h · %.0f %% of limit", hours, 100*due.Fraction)
		}
	}
	return g
}
