package health_test

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/ingest"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/internal/sim"
	"github.com/rotorwright/rotorwright/schedule"
	"github.com/rotorwright/rotorwright/store"
)

type rig struct {
	// bearingType, when set, is the motors' specs.bearing.type.
	bearingType string
	t           testing.TB
	ctx         context.Context
	db          *store.DB
	in          *ingest.Ingester
	hs          *health.Service
}

func newRig(t *testing.T) *rig {
	t.Parallel()
	return rigOn(t)
}

func rigOn(t testing.TB) *rig {
	db := store.New(pgtest.NewPool(t))
	hs := health.New(db)
	return &rig{t: t, ctx: store.WithActor(context.Background(), store.Actor{Name: "test"}), db: db, hs: hs,
		in: &ingest.Ingester{DB: db}}
}

// quad registers a quad-x matching the simulator's default airframe with
// four motors (bearing rating c, 0 for none) and one pack.
func (r *rig) quad(code string, c float64, pack sim.PackState) (af *fleet.Airframe, motors []*fleet.Part, pk *fleet.Part) {
	r.t.Helper()
	d, empty := 254.0, 1000.0
	af, err := r.db.CreateAirframe(r.ctx, &fleet.Airframe{Code: code, Layout: "quad-x", CellsS: pack.CellsS,
		PacksPerFlight: 1, RotorDiameterMM: &d, EmptyMassG: &empty})
	if err != nil {
		r.t.Fatal(err)
	}
	for i, rot := range []string{"ccw", "cw", "ccw", "cw"} {
		specs := map[string]any{"rotation": rot}
		if c > 0 {
			b := map[string]any{"count": 2, "dynamic_rating_n": c}
			if r.bearingType != "" {
				b["type"] = r.bearingType
			}
			specs["bearing"] = b
		}
		raw, _ := json.Marshal(specs)
		m, err := r.db.CreatePart(r.ctx, &fleet.Part{Kind: fleet.KindMotor, Serial: fmt.Sprintf("%s-M%d", code, i+1),
			PartNumber: "MT-2814", Specs: raw})
		if err != nil {
			r.t.Fatal(err)
		}
		if _, err := r.db.Fit(r.ctx, af.ID, store.FitRequest{PartID: m.ID, Position: fmt.Sprintf("m%d", i+1),
			At: time.Now().AddDate(0, -6, 0)}); err != nil {
			r.t.Fatal(err)
		}
		motors = append(motors, m)
	}
	raw, _ := json.Marshal(map[string]any{"chemistry": "lipo", "cells_s": pack.CellsS, "cells_p": pack.CellsP,
		"rated_mah": pack.RatedMah, "baseline_ir_mohm": pack.BaselineIRmOhm})
	pk, err = r.db.CreatePart(r.ctx, &fleet.Part{Kind: fleet.KindPack, Serial: pack.Serial, Specs: raw})
	if err != nil {
		r.t.Fatal(err)
	}
	return af, motors, pk
}

// fly ingests one simulated flight and returns the simulator's truth.
func (r *rig) fly(af *fleet.Airframe, pk *fleet.Part, spec sim.FlightSpec) sim.Truth {
	r.t.Helper()
	var buf bytes.Buffer
	truth, err := sim.Generate(spec, &buf)
	if err != nil {
		r.t.Fatal(err)
	}
	mass := spec.MassKg * 1000
	_, err = r.in.Ingest(r.ctx, ingest.Request{Flight: fleet.Flight{AirframeID: af.ID, Pilot: "test",
		TakeoffMassG: &mass, Packs: []fleet.FlightPack{{PartID: pk.ID, Slot: 1}}}, Log: buf.Bytes()})
	if err != nil {
		r.t.Fatal(err)
	}
	return truth
}

// Packs with known capacity fade (linear, and square root of cycles) and
// resistance growth, flown deep cycles: the health view recovers the growth
// and the fade the simulator was given, and its end-of-life and resistance
// forecasts hold the laws' crossings.
func TestPackTrendsRecoverSimulatorTruth(t *testing.T) {
	for _, c := range []struct {
		name  string
		law   sim.FadeLaw
		coeff float64
		// eol is where the law reaches 80 % of rated (computed): linear
		// 0.2 / 0.003, square root (0.2 / 0.0258)^2.
		eol float64
	}{
		{"linear", sim.FadeLinear, 0.003, 0.2 / 0.003},
		{"sqrt", sim.FadeSqrt, 0.0258, math.Pow(0.2/0.0258, 2)},
	} {
		t.Run(c.name, func(t *testing.T) { packTruth(t, c.law, c.coeff, c.eol) })
	}
}

func packTruth(t *testing.T, law sim.FadeLaw, coeff, truthEOL float64) {
	r := newRig(t)
	pack := sim.PackState{Serial: "FADE-1", Chemistry: sim.LiPo, CellsS: 4, CellsP: 1, RatedMah: 3000,
		BaselineIRmOhm: 20, FadeLaw: law, FadeCoeff: coeff, IRGrowth: 0.01, StartSoC: 1, CellSpread: 0.005}
	af, _, pk := r.quad("FD-01", 0, pack)
	start := time.Now().AddDate(0, 0, -70).UTC().Truncate(time.Hour)
	cycles := 0.0
	const flights = 50
	var lastCap float64
	for i := 0; i < flights; i++ {
		spec := sim.DefaultSpec(uint64(1000 + i))
		spec.Airframe, spec.Start, spec.SampleHz, spec.DurationS = "FD-01", start.Add(time.Duration(i)*24*time.Hour), 5, 560
		p := pack
		p.Cycles = cycles
		spec.Packs = []sim.PackState{p}
		truth := r.fly(af, pk, spec)
		cycles += truth.ChargeMah / pack.RatedMah
		lastCap = p.CapacityMah()
	}
	// A rule with its own limits, beside the default programme's pack
	// retirement (80 % SoH, 100 % rise).
	soh85, rise50 := 85.0, 50.0
	rule, err := r.db.CreateRule(r.ctx, &fleet.ServiceRule{Name: "pack watch", AppliesTo: "pack", SoHBelowPct: &soh85,
		IRRisePct: &rise50, WarnAt: 0.9, Action: "inspect", Enabled: true})
	if err != nil {
		t.Fatal(err)
	}
	v, err := r.hs.Part(r.ctx, pk.ID)
	if err != nil {
		t.Fatal(err)
	}
	pv := v.Pack
	// Equivalent full cycles: the service counts the logged charge; the
	// simulator's truth is the integral of the noise-free current.
	if math.Abs(pv.Cycles/cycles-1) > 0.005 {
		t.Errorf("cycles %.2f, simulator truth %.2f", pv.Cycles, cycles)
	}
	// Resistance growth: truth R = R0 (1 + 0.01 n), i.e. 1 %/cycle; tolerance 15 % of it
	// (in-flight step estimates are noisy: the acceptance for one flight is 10 %).
	if pv.Resistance == nil || math.Abs(pv.Resistance.SlopePctPerCycle-1) > 0.15 {
		t.Fatalf("resistance trend %+v, want about 1 %%/cycle (simulator IRGrowth 0.01)", pv.Resistance)
	}
	// Capacity estimates come from rest voltages through wear's OCV table
	// (from memory), which matches the simulator's (also from memory) only
	// above 15 % charge; the flights land with at least a fifth left (common
	// practice), and the flat middle of the curve makes each estimate
	// sensitive to voltage noise, so the tolerances are 25 % on the slope at
	// the latest cycle and 5 % on the latest capacity.
	fc := pv.Forecast
	if fc == nil || fc.Model == "" {
		t.Fatalf("no fade model; capacity points %d, notes %v", len(pv.Capacity), v.Notes)
	}
	t.Logf("fade model %s %v (backtest MAE %.1f mAh, residual SD %.1f mAh), capacity %.0f vs truth %.0f at %.1f cycles; "+
		"end of life forecast %s cycles, interval [%s, %s], truth %.1f; resistance slope %.3f %%/cycle, %d capacity points",
		fc.Model, fc.Params, fc.BacktestMAE, fc.ResidualSD, *pv.CapacityMah, lastCap, pv.Cycles, cyc(fc.FittedSustained),
		cyc(fc.IntervalFrom), cyc(fc.IntervalTo), truthEOL, pv.Resistance.SlopePctPerCycle, len(pv.Capacity))
	lawCap := func(n float64) float64 { p := pack; p.Cycles = n; return p.CapacityMah() }
	slope, want := fc.Predict(pv.Cycles)-fc.Predict(pv.Cycles-1), lawCap(pv.Cycles)-lawCap(pv.Cycles-1)
	if math.Abs(slope/want-1) > 0.25 {
		t.Errorf("fade %s slope %.2f mAh/cycle at the latest cycle, simulator truth %.2f", fc.Model, slope, want)
	}
	if math.Abs(*pv.CapacityMah/lastCap-1) > 0.05 {
		t.Errorf("capacity %.0f mAh, simulator truth %.0f", *pv.CapacityMah, lastCap)
	}
	// The interval holds the law's end of life.
	if fc.IntervalFrom == nil || *fc.IntervalFrom > math.Ceil(truthEOL) || (fc.IntervalTo != nil && *fc.IntervalTo < math.Floor(truthEOL)) {
		t.Errorf("end-of-life interval [%s, %s] misses the truth %.1f", cyc(fc.IntervalFrom), cyc(fc.IntervalTo), truthEOL)
	}
	// Resistance: truth rise 1 %/cycle, so the 100 % retire threshold at
	// cycle 100 (computed).
	rf := pv.Resistance.Forecast
	t.Logf("resistance rise forecast: %s, %s cycles [%s, %s] (truth 100), reason %q", rf.Model, cyc(rf.FittedSustained),
		cyc(rf.IntervalFrom), cyc(rf.IntervalTo), rf.Reason)
	if rf.FittedSustained == nil || math.Abs(*rf.FittedSustained-100) > 15 || rf.IntervalFrom == nil || *rf.IntervalFrom > 100 ||
		(rf.IntervalTo != nil && *rf.IntervalTo < 100) {
		t.Errorf("resistance forecast %s [%s, %s], truth 100", cyc(rf.FittedSustained), cyc(rf.IntervalFrom), cyc(rf.IntervalTo))
	}
	// Each rule's own limit is forecast by the same machinery: a 50 % rise
	// at cycle 50, and 85 % SoH where the law reaches it (computed).
	sohTruth := 0.15 / coeff
	if law == sim.FadeSqrt {
		sohTruth = math.Pow(0.15/coeff, 2)
	}
	for _, c := range []struct {
		what  string
		l     *health.LimitView
		truth float64
	}{{"rise 50 %", rf.Limit(50), 50}, {"SoH 85 %", fc.Limit(85), sohTruth}, {"SoH 80 %", fc.Limit(80), truthEOL}} {
		if c.l == nil {
			t.Errorf("%s: no crossing in the view (limits %+v)", c.what, fc.Limits)
			continue
		}
		t.Logf("%s: forecast %s [%s, %s], truth %.1f, date %v", c.what, cyc(c.l.FittedSustained), cyc(c.l.IntervalFrom), cyc(c.l.IntervalTo), c.truth, c.l.Date)
		if c.l.FittedSustained == nil || c.l.Date == nil || c.l.IntervalFrom == nil || *c.l.IntervalFrom > math.Ceil(c.truth) ||
			(c.l.IntervalTo != nil && *c.l.IntervalTo < math.Floor(c.truth)) {
			t.Errorf("%s: interval [%s, %s] misses %.1f (or no date)", c.what, cyc(c.l.IntervalFrom), cyc(c.l.IntervalTo), c.truth)
		}
	}
	// The due list dates the rule's resistance limit from the forecast
	// (before, a resistance rise had no forecast date at all).
	prog := schedule.NewProgramme(r.db, r.hs)
	if _, err := prog.RecomputeAirframe(r.ctx, af.ID, []string{pk.ID}); err != nil {
		t.Fatal(err)
	}
	items, err := r.db.DueItems(r.ctx, store.DueFilter{SubjectID: pk.ID})
	if err != nil {
		t.Fatal(err)
	}
	found := false
	for _, it := range items {
		if it.RuleID == nil || *it.RuleID != rule.ID {
			continue
		}
		for _, u := range it.Usage {
			if u.Limit == "ir_rise_pct" {
				found = true
				if u.Forecast == nil || rf.Limit(50).Date == nil || u.Forecast.Sub(*rf.Limit(50).Date).Abs() > time.Hour {
					t.Errorf("ir_rise_pct due forecast %v, health forecast %v", u.Forecast, rf.Limit(50).Date)
				}
			}
		}
	}
	if !found {
		t.Errorf("no ir_rise_pct usage among %d due items", len(items))
	}
}

func cyc(p *float64) string {
	if p == nil {
		return "none"
	}
	return fmt.Sprintf("%.0f", *p)
}

// Two identical quads, one flying 30 % heavier: hover thrust scales with mass
// m and rotor speed with sqrt(m) (T = k rpm^2), so with the ISO 281 load-life
// law L = (C/P)^p revolutions and P dominated by thrust, bearing damage per
// hour scales as rpm P^p ~ m^(p + 0.5): m^3.5 for ball bearings (p = 3),
// m^3.83 for roller bearings (p = 10/3, the motor's specs.bearing.type).
// The heavier quad's motors must age by that ratio.
func TestHardDutyMotorAgesByLoadLifeRatio(t *testing.T) {
	// Absolute mode (bearing rating C given) and relative mode (no rating: the
	// rated interval at the model's median duty) must both follow the law.
	for _, c := range []struct {
		name, mode, bearing string
		rating, p           float64
	}{{"absolute", "absolute", "", 2000, 3}, {"relative", "relative", "", 0, 3}, {"absolute roller", "absolute", "roller", 2000, 10.0 / 3}} {
		t.Run(c.name, func(t *testing.T) { hardDuty(t, c.mode, c.bearing, c.rating, c.p) })
	}
}

func hardDuty(t *testing.T, mode, bearing string, rating, p float64) {
	r := newRig(t)
	r.bearingType = bearing
	pack := sim.PackState{Serial: "DUTY-G", Chemistry: sim.LiPo, CellsS: 4, CellsP: 1, RatedMah: 8000,
		BaselineIRmOhm: 16, StartSoC: 1}
	gentle, gm, gp := r.quad("GD-01", rating, pack)
	pack.Serial = "DUTY-H"
	hard, hm, hp := r.quad("HD-01", rating, pack)
	start := time.Now().AddDate(0, 0, -10).UTC().Truncate(time.Hour)
	const ratio = 1.3
	for i := 0; i < 4; i++ {
		for j, side := range []struct {
			af *fleet.Airframe
			pk *fleet.Part
			m  float64
		}{{gentle, gp, 1.5}, {hard, hp, 1.5 * ratio}} {
			spec := sim.DefaultSpec(uint64(50 + i))
			spec.Airframe = side.af.Code
			spec.Start = start.Add(time.Duration(i)*24*time.Hour + time.Duration(j)*time.Hour)
			spec.MassKg, spec.SampleHz, spec.DurationS = side.m, 10, 300
			spec.Packs[0].Serial = side.pk.Serial
			r.fly(side.af, side.pk, spec)
		}
	}
	damage := func(motors []*fleet.Part) (sum float64) {
		for _, m := range motors {
			v, err := r.hs.Part(r.ctx, m.ID)
			if err != nil {
				t.Fatal(err)
			}
			if v.Motor == nil || v.Motor.Mode != mode || v.Motor.Flights != 4 || (bearing != "" && v.Motor.Model.Type != bearing) {
				t.Fatalf("motor view %+v notes %v", v.Motor, v.Notes)
			}
			sum += v.Motor.ConsumedFraction / v.Motor.RunHours
		}
		return sum
	}
	got := damage(hm) / damage(gm)
	want := math.Pow(ratio, p+0.5)
	t.Logf("%s %s: damage-rate ratio %.4f, load-life law %.4f (p = %.4f)", mode, bearing, got, want, p)
	// 5 %: manoeuvres, the small unbalance load and the e/Y factors make the
	// load not exactly proportional to weight.
	if math.Abs(got/want-1) > 0.05 {
		t.Fatalf("hard/gentle damage-rate ratio %.4f, the load-life law predicts %.4f", got, want)
	}
}
