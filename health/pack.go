package health

import (
	"context"
	"fmt"
	"math"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
	"github.com/rotorwright/rotorwright/wear"
)

// PackView is a pack's health.
type PackView struct {
	Chemistry    fleet.Chemistry     `json:"chemistry"`
	CellsS       int                 `json:"cells_s"`
	RatedMah     float64             `json:"rated_mah"`
	Flights      int                 `json:"flights"`
	Cycles       float64             `json:"cycles"` // equivalent full cycles
	CapacityMah  *float64            `json:"capacity_mah"`
	SoH          *float64            `json:"soh"`
	Capacity     []CapacityPoint     `json:"capacity_series"`
	Fade         *FadeView           `json:"fade"`
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

// FadeView is the chosen capacity-fade model.
type FadeView struct {
	Model      string              `json:"model"`
	Coef       []float64           `json:"coef"`
	Terms      []string            `json:"terms"`
	ResidualSD float64             `json:"residual_sd_mah"`
	RSquared   float64             `json:"r_squared"`
	Criterion  string              `json:"criterion"`
	Candidates []wear.CandidateFit `json:"candidates"`
}

// ForecastView is the end-of-life forecast: where the fitted capacity falls
// below the threshold and stays there (sustained), the first fitted and
// observed crossings, and the cycles over which the 95 % prediction interval
// brackets the threshold.
type ForecastView struct {
	ThresholdMah      float64    `json:"threshold_mah"`
	FittedFirst       *float64   `json:"fitted_first_cycle"`
	FittedSustained   *float64   `json:"fitted_sustained_cycle"`
	ObservedFirst     *float64   `json:"observed_first_cycle"`
	ObservedSustained *float64   `json:"observed_sustained_cycle"`
	IntervalFrom      *float64   `json:"interval_from_cycle"`
	IntervalTo        *float64   `json:"interval_to_cycle"`
	CyclesPerDay      float64    `json:"cycles_per_day"`
	Date              *time.Time `json:"date"` // of the sustained crossing at the recent usage rate
}

// ResistanceView is the resistance trend.
type ResistanceView struct {
	BaselineMOhm     float64      `json:"baseline_mohm"`
	CurrentMOhm      float64      `json:"current_mohm"`
	RisePct          float64      `json:"rise_pct"`
	SlopePctPerCycle float64      `json:"slope_pct_per_cycle"`
	Series           []CyclePoint `json:"series"`
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

func (s *Service) pack(ctx context.Context, p *fleet.Part, now time.Time, v *View) error {
	specs, err := fleet.PackSpecsOf(p)
	if err != nil {
		return err
	}
	flights, err := s.DB.PackFlights(ctx, p.ID)
	if err != nil {
		return err
	}
	checks, err := s.DB.PackChecks(ctx, p.ID)
	if err != nil {
		return err
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
		if f.ChargeMah == nil {
			continue // a manual entry: no figures
		}
		used := *f.ChargeMah / specs.RatedMah
		cycles += used
		if f.TakeoffAt.After(recent) {
			recentCycles += used
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

	// Capacity: the fitted fade model when there are enough estimates, else
	// the median of the latest three.
	if n := len(pv.Capacity); n >= 5 {
		pts := make([]wear.FadePoint, n)
		for i, c := range pv.Capacity {
			pts[i] = wear.FadePoint{Cycle: c.Cycle, Capacity: c.CapacityMah}
		}
		fit, err := wear.FitFade(pts)
		if err == nil {
			pv.Fade = &FadeView{Model: fit.Model, Coef: fit.Coef, Terms: fit.Terms, ResidualSD: fit.ResidualSD,
				RSquared: fit.RSquared, Criterion: fit.Criterion, Candidates: fit.Candidates}
			pv.CapacityMah = ptr(fit.Predict(cycles))
			fc, err := fit.ForecastFraction(specs.RatedMah, s.Settings.EOLFraction, 0.95, 0)
			if err == nil {
				perDay := recentCycles / (s.Settings.UtilisationWindow.Hours() / 24)
				pv.Forecast = &ForecastView{ThresholdMah: fc.Threshold, FittedFirst: fc.FittedFirst,
					FittedSustained: fc.FittedSustained, ObservedFirst: fc.ObservedFirst,
					ObservedSustained: fc.ObservedSustained, IntervalFrom: fc.IntervalFrom, IntervalTo: fc.IntervalTo,
					CyclesPerDay: perDay}
				if fc.FittedSustained != nil {
					pv.Forecast.Date = wear.CycleDate(now, cycles, *fc.FittedSustained, perDay)
					readings.CyclesToEOL = ptr(*fc.FittedSustained - cycles)
				}
			}
		}
	} else if n > 0 {
		last := make([]float64, 0, 3)
		for i := max(0, n-3); i < n; i++ {
			last = append(last, pv.Capacity[i].CapacityMah)
		}
		pv.CapacityMah = ptr(median(last))
		v.Notes = append(v.Notes, fmt.Sprintf("%d capacity estimates: a fade model needs at least 5", n))
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
	open := true
	swelling, _, err := s.DB.Events(ctx, store.EventFilter{PartID: p.ID, Kind: "pack_swelling", Open: &open}, store.Page{Limit: 1})
	if err != nil {
		return err
	}
	readings.Swollen = len(swelling) > 0
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
