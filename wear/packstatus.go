package wear

import (
	"fmt"
	"math"
	"sort"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

// Pack statuses, in rising order of concern.
const (
	StatusServiceable = "serviceable"
	StatusWatch       = "watch"
	StatusRetire      = "retire"
)

// Reason explains a status. Code is stable for scripts; Message is for
// people; Level is the status it calls for.
type Reason struct {
	Code    string `json:"code"`
	Message string `json:"message"`
	Level   string `json:"level"`
}

// ResistancePoint is one internal-resistance reading at a cycle count.
type ResistancePoint struct {
	Cycle float64
	MOhm  float64
}

// ResistanceTrend is a pack's resistance rise over its baseline.
type ResistanceTrend struct {
	BaselineMOhm float64
	CurrentMOhm  float64 // median of the latest three readings (noisy in-flight estimates)
	RisePct      float64 // 100 (current - baseline) / baseline
	// SlopePctPerCycle is the Theil-Sen slope of the rise (%) against cycles.
	SlopePctPerCycle float64
	InterceptPct     float64
}

// ResistanceRise compares readings with baselineMOhm (0 means the median of
// the first three readings by cycle) and fits a robust trend against cycles.
func ResistanceRise(baselineMOhm float64, readings []ResistancePoint) (ResistanceTrend, error) {
	if len(readings) == 0 {
		return ResistanceTrend{}, fleet.Errorf(fleet.EUNPROCESSABLE, "no resistance readings")
	}
	pts := append([]ResistancePoint(nil), readings...)
	for i, p := range pts {
		if !(p.MOhm > 0) || !finite(p.MOhm+p.Cycle) {
			return ResistanceTrend{}, fleet.Errorf(fleet.EINVALID, "reading %d: resistance must be positive", i)
		}
	}
	sortByCycle(pts)
	vals := func(ps []ResistancePoint) []float64 {
		v := make([]float64, len(ps))
		for i, p := range ps {
			v[i] = p.MOhm
		}
		return v
	}
	if baselineMOhm == 0 {
		baselineMOhm = median(vals(pts[:min(3, len(pts))]))
	}
	if !(baselineMOhm > 0) || !finite(baselineMOhm) {
		return ResistanceTrend{}, fleet.FieldError("baseline_ir_mohm", "baseline must be positive")
	}
	t := ResistanceTrend{BaselineMOhm: baselineMOhm, CurrentMOhm: median(vals(pts[max(0, len(pts)-3):]))}
	t.RisePct = 100 * (t.CurrentMOhm - baselineMOhm) / baselineMOhm
	x := make([]float64, len(pts))
	y := make([]float64, len(pts))
	for i, p := range pts {
		x[i], y[i] = p.Cycle, 100*(p.MOhm-baselineMOhm)/baselineMOhm
	}
	if s, c, err := TheilSen(x, y); err == nil {
		t.SlopePctPerCycle, t.InterceptPct = s, c
	}
	return t, nil
}

func sortByCycle(p []ResistancePoint) {
	sort.SliceStable(p, func(i, j int) bool { return p[i].Cycle < p[j].Cycle })
}

// CellImbalanceMV returns max - min of rested per-cell voltages, in mV.
func CellImbalanceMV(cellV []float64) (float64, error) {
	if len(cellV) < 2 {
		return 0, fleet.FieldError("cell_v", "need at least two cell voltages")
	}
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range cellV {
		if !(v > 0) || !finite(v) {
			return 0, fleet.FieldError("cell_v", "cell voltages must be positive")
		}
		lo, hi = math.Min(lo, v), math.Max(hi, v)
	}
	return 1000 * (hi - lo), nil
}

// DefaultNearFullMarginV is how far below full charge a rested cell still
// counts as "near full" for the storage warning (common practice).
const DefaultNearFullMarginV = 0.10

// ChargeState is a pack's latest rest voltage and when it was recorded: the
// end of its last charge, storage discharge or flight, whichever is latest.
type ChargeState struct {
	At    time.Time
	CellV float64
}

// DaysHeldFull returns how long the pack has sat near full charge without
// flying: now - latest.At when the rest cell voltage is within marginV
// (0 means DefaultNearFullMarginV) of the chemistry's full voltage, else 0.
func DaysHeldFull(chem fleet.Chemistry, latest ChargeState, now time.Time, marginV float64) (float64, error) {
	lim, ok := chem.Limits()
	if !ok {
		return 0, fleet.FieldError("chemistry", "unknown chemistry %q", chem)
	}
	if marginV == 0 {
		marginV = DefaultNearFullMarginV
	}
	if latest.CellV < lim.FullV-marginV || latest.At.After(now) {
		return 0, nil
	}
	return now.Sub(latest.At).Hours() / 24, nil
}

// PackThresholds set when a pack goes to watch or retire. Zero fields take
// DefaultPackThresholds' values.
type PackThresholds struct {
	RetireSoH         float64 // at or below: retire
	WatchSoH          float64
	WatchIRRisePct    float64
	RetireIRRisePct   float64
	WatchImbalanceMV  float64
	RetireImbalanceMV float64
	StorageDays       float64 // held near full longer than this: watch
	WatchCycles       float64 // equivalent full cycles beyond which to watch
	WatchCyclesToEOL  float64 // forecast end of life closer than this: watch
}

// DefaultPackThresholds returns the defaults. RetireSoH is the usual 80 %
// end of life; the rest are common practice for small lithium packs
// (storage 3 days; typical cycle life 300-500, so watch from 300; watch at
// 85 % SoH) or from memory (resistance doubling as end of life; 30 mV /
// 100 mV imbalance at rest).
func DefaultPackThresholds() PackThresholds {
	return PackThresholds{
		RetireSoH: 0.80, WatchSoH: 0.85,
		WatchIRRisePct: 30, RetireIRRisePct: 100,
		WatchImbalanceMV: 30, RetireImbalanceMV: 100,
		StorageDays: 3, WatchCycles: 300, WatchCyclesToEOL: 20,
	}
}

func (t PackThresholds) withDefaults() PackThresholds {
	d := DefaultPackThresholds()
	set := func(v *float64, def float64) {
		if *v == 0 {
			*v = def
		}
	}
	set(&t.RetireSoH, d.RetireSoH)
	set(&t.WatchSoH, d.WatchSoH)
	set(&t.WatchIRRisePct, d.WatchIRRisePct)
	set(&t.RetireIRRisePct, d.RetireIRRisePct)
	set(&t.WatchImbalanceMV, d.WatchImbalanceMV)
	set(&t.RetireImbalanceMV, d.RetireImbalanceMV)
	set(&t.StorageDays, d.StorageDays)
	set(&t.WatchCycles, d.WatchCycles)
	set(&t.WatchCyclesToEOL, d.WatchCyclesToEOL)
	return t
}

// PackReadings are a pack's latest health figures; nil means not known.
type PackReadings struct {
	SoH          *float64
	IRRisePct    *float64
	ImbalanceMV  *float64
	DaysHeldFull float64
	Swollen      bool
	Cycles       float64  // equivalent full cycles
	CyclesToEOL  *float64 // forecast sustained crossing minus Cycles
}

// PackHealth is a pack's status and every reason behind it.
type PackHealth struct {
	Status  string
	Reasons []Reason
}

// PackStatus grades a pack: retire if any retire reason, else watch if any
// watch reason, else serviceable.
func PackStatus(r PackReadings, th PackThresholds) PackHealth {
	th = th.withDefaults()
	h := PackHealth{Status: StatusServiceable}
	add := func(level, code, msg string) {
		h.Reasons = append(h.Reasons, Reason{Code: code, Message: msg, Level: level})
		if level == StatusRetire || (level == StatusWatch && h.Status == StatusServiceable) {
			h.Status = level
		}
	}
	if r.Swollen {
		add(StatusRetire, "pack_swollen", "pack is swollen: retire it and never charge it again")
	}
	if r.SoH != nil {
		switch soh := *r.SoH; {
		case soh <= th.RetireSoH:
			add(StatusRetire, "soh_end_of_life", fmt.Sprintf("state of health %.0f %% is at or below %.0f %%", 100*soh, 100*th.RetireSoH))
		case soh <= th.WatchSoH:
			add(StatusWatch, "soh_low", fmt.Sprintf("state of health %.0f %% is at or below %.0f %%", 100*soh, 100*th.WatchSoH))
		}
	}
	if r.IRRisePct != nil {
		switch v := *r.IRRisePct; {
		case v >= th.RetireIRRisePct:
			add(StatusRetire, "resistance_rise_high", fmt.Sprintf("internal resistance up %.0f %% over baseline", v))
		case v >= th.WatchIRRisePct:
			add(StatusWatch, "resistance_rise", fmt.Sprintf("internal resistance up %.0f %% over baseline", v))
		}
	}
	if r.ImbalanceMV != nil {
		switch v := *r.ImbalanceMV; {
		case v >= th.RetireImbalanceMV:
			add(StatusRetire, "cell_imbalance_high", fmt.Sprintf("cells differ by %.0f mV at rest", v))
		case v >= th.WatchImbalanceMV:
			add(StatusWatch, "cell_imbalance", fmt.Sprintf("cells differ by %.0f mV at rest", v))
		}
	}
	if r.DaysHeldFull > th.StorageDays {
		add(StatusWatch, "stored_full", fmt.Sprintf("held near full charge for %.1f days without flying: discharge to storage voltage", r.DaysHeldFull))
	}
	if r.Cycles >= th.WatchCycles {
		add(StatusWatch, "cycles_high", fmt.Sprintf("%.0f equivalent full cycles", r.Cycles))
	}
	if r.CyclesToEOL != nil && *r.CyclesToEOL < th.WatchCyclesToEOL {
		add(StatusWatch, "end_of_life_near", fmt.Sprintf("capacity forecast to reach end of life within %.0f cycles", math.Max(0, *r.CyclesToEOL)))
	}
	return h
}
