package telemetry

import (
	"fmt"
	"math"
)

// events detects hard landings, overdischarge and overcurrent. A limit must be
// exceeded continuously for EventSustainS (sample to sample) to count, so one
// noisy sample opens nothing; one event per kind and flight, at the first
// sustained excess, carrying the worst value over all sustained excesses.
func (a *analysis) events() {
	l, m, p := a.l, a.m, a.p
	if m.LandingG != nil && *m.LandingG > p.HardLandingG {
		m.Events = append(m.Events, Event{
			Kind: "hard_landing", AtS: *m.LandingAt, Severity: severity(*m.LandingG / p.HardLandingG),
			Value: *m.LandingG, Limit: p.HardLandingG,
			Detail: fmt.Sprintf("peak %.2f g at touchdown, limit %.2f g", *m.LandingG, p.HardLandingG),
		})
	}
	if lim, ok := p.Chemistry.Limits(); !ok {
		a.note("chemistry unknown: overdischarge is not checked")
	} else if cv := a.cellVoltage(); cv == nil {
		a.note("cell voltage unknown: overdischarge is not checked")
	} else if at, worst, dur, ok := sustained(l.T, cv, func(v float64) bool { return v < lim.FloorV }, p.EventSustainS, math.Min); ok {
		m.Events = append(m.Events, Event{
			Kind: "overdischarge", AtS: at, Severity: severity(lim.FloorV / worst),
			Value: worst, Limit: lim.FloorV,
			Detail: fmt.Sprintf("cell voltage down to %.3f V, under the %s floor of %.2f V for %.1f s", worst, p.Chemistry, lim.FloorV, dur),
		})
	}
	if !(p.CRating > 0 && p.RatedMah > 0) {
		a.note("pack rating (C x capacity) unknown: overcurrent is not checked")
		return
	}
	limA := p.CRating * p.RatedMah / 1000
	if at, worst, dur, ok := sustained(l.T, l.PackA, func(v float64) bool { return v > limA }, p.EventSustainS, math.Max); ok {
		m.Events = append(m.Events, Event{
			Kind: "overcurrent", AtS: at, Severity: severity(worst / limA),
			Value: worst, Limit: limA,
			Detail: fmt.Sprintf("current up to %.1f A, over %gC x %g mAh = %.1f A for %.1f s", worst, p.CRating, p.RatedMah, limA, dur),
		})
	}
}

func severity(ratio float64) string {
	if ratio >= severeFactor {
		return "critical"
	}
	return "warning"
}

// sustained finds runs of consecutive samples where bad holds lasting at least
// minS; it returns the first run's start, the worst value over all such runs
// (by pick), and their total duration.
func sustained(t, y []float64, bad func(float64) bool, minS float64, pick func(a, b float64) float64) (at, worst, dur float64, ok bool) {
	for i := 0; i < len(y); {
		if !bad(y[i]) {
			i++
			continue
		}
		j, w := i, y[i]
		for j+1 < len(y) && bad(y[j+1]) {
			j++
			w = pick(w, y[j])
		}
		if d := t[j] - t[i]; d >= minS {
			if !ok {
				at, worst, ok = t[i], w, true
			}
			worst = pick(worst, w)
			dur += d
		}
		i = j + 1
	}
	return at, worst, dur, ok
}
