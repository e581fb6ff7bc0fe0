package web

import (
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/store"
)

// PartData is the part page.
type PartData struct {
	Part       *fleet.Part
	Health     *health.View // nil for kinds without a health view
	History    *store.History
	Current    *store.HistoryFit // the open fit, if fitted
	Flights    []store.HistoryFlight
	MoreFlight int // flights not listed
	Work       []*fleet.WorkRecord
	Checks     []store.PackCheck
	Charts     []Chart
}

// maxPartFlights bounds the flights a part page lists (newest first); the
// totals count them all.
const maxPartFlights = 60

// PartPage builds the part page: health with its charts by kind, and the
// part's whole history.
func PartPage(p *fleet.Part, v *health.View, h *store.History, work []*fleet.WorkRecord, checks []store.PackCheck,
	now time.Time) (PartData, error) {
	d := PartData{Part: p, Health: v, History: h, Work: work, Checks: checks}
	for i := range h.Fits {
		if h.Fits[i].RemovedAt == nil {
			d.Current = &h.Fits[i]
		}
	}
	for i := len(h.Flights) - 1; i >= 0 && len(d.Flights) < maxPartFlights; i-- {
		d.Flights = append(d.Flights, h.Flights[i])
	}
	d.MoreFlight = len(h.Flights) - len(d.Flights)
	if v == nil {
		return d, nil
	}
	add := func(c Chart, err error) error {
		if err == nil {
			d.Charts = append(d.Charts, c)
		}
		return err
	}
	switch {
	case v.Pack != nil:
		if len(v.Pack.Capacity) > 0 {
			if err := add(PackCapacityChart(v.Pack)); err != nil {
				return d, err
			}
		}
		if v.Pack.Resistance != nil && len(v.Pack.Resistance.Series) > 0 {
			if err := add(PackResistanceChart(v.Pack)); err != nil {
				return d, err
			}
		}
	case v.Motor != nil:
		if len(v.Motor.Series) > 0 {
			if err := add(BearingChart(v.Motor, now)); err != nil {
				return d, err
			}
		}
		if len(v.Motor.Spectrum) > 0 {
			if err := add(SpectrumChart(v.Motor)); err != nil {
				return d, err
			}
		}
	}
	return d, nil
}
