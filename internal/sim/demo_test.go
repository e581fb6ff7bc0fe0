package sim

import (
	"bytes"
	"math"
	"reflect"
	"slices"
	"testing"
	"time"
)

var demoStart = time.Date(2026, 3, 1, 0, 0, 0, 0, time.UTC)

// demo is built once; DemoFleet takes about a second.
var demoCache *Scenario

func demoScenario(t *testing.T) *Scenario {
	t.Helper()
	if demoCache == nil {
		sc := DemoFleet(7, demoStart, 6)
		demoCache = &sc
	}
	return demoCache
}

func flightEnd(f Flight) time.Time {
	return f.Spec.Start.Add(time.Duration(f.Spec.DurationS * float64(time.Second)))
}

func TestDemoShape(t *testing.T) {
	sc := demoScenario(t)
	if n := len(sc.Flights); n < 600 || n > 1500 {
		t.Errorf("%d flights, want 600..1500", n)
	}
	if len(sc.Airframes) != 12 || len(sc.Jobs) != 12 || len(sc.Models) != 3 {
		t.Errorf("%d airframes, %d jobs, %d models", len(sc.Airframes), len(sc.Jobs), len(sc.Models))
	}
	models := map[string]Model{}
	for _, m := range sc.Models {
		models[m.Name] = m
	}
	afs := map[string]Airframe{}
	for _, af := range sc.Airframes {
		afs[af.Code] = af
		m := models[af.Model]
		if len(af.Positions) != m.Rotors || af.Layout != LayoutName(m.Rotors) {
			t.Errorf("%s: %d positions, layout %s", af.Code, len(af.Positions), af.Layout)
		}
		for i, p := range af.Positions {
			if want := []string{"ccw", "cw"}[i%2]; p.Rotation != want {
				t.Errorf("%s %s rotation %s", af.Code, p.Label, p.Rotation)
			}
		}
	}
	parts := map[string]Part{}
	for _, p := range sc.Parts {
		if _, dup := parts[p.Kind+"/"+p.Serial]; dup {
			t.Errorf("duplicate %s serial %s", p.Kind, p.Serial)
		}
		parts[p.Kind+"/"+p.Serial] = p
	}
	for i, f := range sc.Flights {
		if i > 0 && f.TakeoffAt.Before(sc.Flights[i-1].TakeoffAt) {
			t.Fatalf("flight %d out of order", i)
		}
		af := afs[f.Airframe]
		if len(f.Packs) != af.PacksPerFlight || f.Spec.Packs[0].CellsS != af.CellsS {
			t.Errorf("flight %d: packs %v for %s", i, f.Packs, af.Code)
		}
		if f.TakeoffMassG > af.MTOWG || math.Abs(f.Spec.MassKg*1000-f.TakeoffMassG) > 1e-6 {
			t.Errorf("flight %d: mass %.0f g, MTOW %.0f g", i, f.TakeoffMassG, af.MTOWG)
		}
		to, ld, err := Timeline(f.Spec)
		if err != nil || !f.TakeoffAt.Equal(f.Spec.Start.Add(time.Duration(to*1e9)).Round(time.Millisecond)) ||
			!f.LandingAt.Equal(f.Spec.Start.Add(time.Duration(ld*1e9)).Round(time.Millisecond)) {
			t.Errorf("flight %d: take-off/landing do not match the spec's timeline (%v)", i, err)
		}
		if f.Spec.Start.Before(sc.Start) || flightEnd(f).After(sc.End) {
			t.Errorf("flight %d outside the scenario period", i)
		}
	}
}

func TestDemoNoOverlaps(t *testing.T) {
	sc := demoScenario(t)
	lastByAF := map[string]time.Time{}
	lastByPack := map[string]time.Time{}
	cycles := map[string]float64{}
	for i, f := range sc.Flights {
		if end, ok := lastByAF[f.Airframe]; ok && f.Spec.Start.Before(end) {
			t.Errorf("flight %d: %s still flying until %v", i, f.Airframe, end)
		}
		lastByAF[f.Airframe] = flightEnd(f)
		for j, p := range f.Packs {
			if end, ok := lastByPack[p]; ok && f.Spec.Start.Before(end) {
				t.Errorf("flight %d: pack %s still in use until %v", i, p, end)
			}
			lastByPack[p] = flightEnd(f)
			if c := f.Spec.Packs[j].Cycles; c < cycles[p] {
				t.Errorf("flight %d: pack %s cycles fell from %.2f to %.2f", i, p, cycles[p], c)
			}
			cycles[p] = f.Spec.Packs[j].Cycles
		}
	}
	// Fits: one place per part at a time, one part per position and kind.
	kind := map[string]string{}
	for _, p := range sc.Parts {
		kind[p.Serial] = p.Kind
	}
	overlap := func(a, b Fit) bool {
		aEnd, bEnd := a.To, b.To
		if aEnd.IsZero() {
			aEnd = sc.End.AddDate(10, 0, 0)
		}
		if bEnd.IsZero() {
			bEnd = sc.End.AddDate(10, 0, 0)
		}
		return a.From.Before(bEnd) && b.From.Before(aEnd)
	}
	for i, a := range sc.Fits {
		for _, b := range sc.Fits[i+1:] {
			if !overlap(a, b) {
				continue
			}
			if a.Serial == b.Serial || (a.Airframe == b.Airframe && a.Position == b.Position && kind[a.Serial] == kind[b.Serial]) {
				t.Errorf("overlapping fits %+v and %+v", a, b)
			}
		}
	}
}

func TestDemoDeterministic(t *testing.T) {
	a := DemoFleet(3, demoStart, 2)
	b := DemoFleet(3, demoStart, 2)
	if !reflect.DeepEqual(a, b) {
		t.Fatal("same seed gave different scenarios")
	}
	var la, lb bytes.Buffer
	if _, err := Generate(a.Flights[5].Spec, &la); err != nil {
		t.Fatal(err)
	}
	if _, err := Generate(b.Flights[5].Spec, &lb); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(la.Bytes(), lb.Bytes()) {
		t.Fatal("same demo flight gave different logs")
	}
}

func TestDemoStories(t *testing.T) {
	sc := demoScenario(t)
	st := sc.Stories
	fitAt := func(serial string, at time.Time) (Fit, bool) {
		for _, f := range sc.Fits {
			if f.Serial == serial && !at.Before(f.From) && (f.To.IsZero() || at.Before(f.To)) {
				return f, true
			}
		}
		return Fit{}, false
	}
	later := func(af string, after time.Time) int {
		n := 0
		for _, f := range sc.Flights {
			if f.Airframe == af && f.TakeoffAt.After(after) {
				n++
			}
		}
		return n
	}

	// Hard duty: the motor at CX-01 m3 carries the largest thrust share, so it
	// spins fastest on every flight of the heaviest airframe.
	if f, ok := fitAt(st.HardDutyMotor, sc.End); !ok || f.Airframe != st.HardDutyAirframe || f.Position != "m3" {
		t.Errorf("hard-duty motor %s not at %s m3", st.HardDutyMotor, st.HardDutyAirframe)
	}
	heaviest := ""
	var maxMass float64
	for _, af := range sc.Airframes {
		if af.EmptyMassG > maxMass {
			maxMass, heaviest = af.EmptyMassG, af.Code
		}
		if af.Code == st.HardDutyAirframe && slices.Index(af.MotorBias, slices.Max(af.MotorBias)) != 2 {
			t.Errorf("m3 of %s does not carry the largest share: %v", af.Code, af.MotorBias)
		}
	}
	if heaviest != st.HardDutyAirframe {
		t.Errorf("heaviest airframe is %s, hard duty on %s", heaviest, st.HardDutyAirframe)
	}

	// Climbing resistance: growth well above the other packs'.
	growth := map[string]float64{}
	for _, f := range sc.Flights {
		for _, p := range f.Spec.Packs {
			growth[p.Serial] = p.IRGrowth
		}
	}
	for s, g := range growth {
		if s != st.ClimbingPack && g*5 > growth[st.ClimbingPack] {
			t.Errorf("pack %s grows at %.4f/cycle, the planted pack at %.4f", s, g, growth[st.ClimbingPack])
		}
	}

	// Propeller strike: an event on a real flight, naming a propeller fitted
	// to that airframe at the time; the airframe has not flown since.
	ev := sc.Events[st.PropStrikeEvent]
	sf := sc.Flights[st.PropStrikeFlight]
	fit, ok := fitAt(ev.PartSerial, sf.TakeoffAt)
	if ev.Kind != "prop_strike" || ev.Flight != st.PropStrikeFlight || ev.Airframe != sf.Airframe ||
		!ok || fit.Airframe != sf.Airframe {
		t.Errorf("prop strike event %+v does not match flight %d", ev, st.PropStrikeFlight)
	}
	if ev.At.Before(sf.TakeoffAt) || ev.At.After(sf.LandingAt) || sf.Spec.VibrationStepFactor <= 1 {
		t.Errorf("prop strike at %v outside flight %v..%v, or no vibration step", ev.At, sf.TakeoffAt, sf.LandingAt)
	}
	if n := later(sf.Airframe, sf.TakeoffAt); n != 0 {
		t.Errorf("%s flew %d times after its prop strike", sf.Airframe, n)
	}

	// Hard landing: late, 3.5 g, not yet inspected (no later flight, no event
	// recorded by hand: the ingest detects it).
	hl := sc.Flights[st.HardLandingFlight]
	if hl.Spec.LandingG != 3.5 || later(hl.Airframe, hl.TakeoffAt) != 0 ||
		hl.TakeoffAt.Before(sc.Start.Add(sc.End.Sub(sc.Start)*3/4)) {
		t.Errorf("hard landing flight %d: %s, %.1f g, at %v", st.HardLandingFlight, hl.Airframe, hl.Spec.LandingG, hl.TakeoffAt)
	}
	for _, e := range sc.Events {
		if e.Kind == "hard_landing" {
			t.Error("a hard_landing event was recorded by hand")
		}
	}

	// Pack left full: a charge record at 4.2 V/cell, then 7+ days without flying.
	pc := sc.PackChecks[st.StorageCheck]
	if pc.Serial != st.StoragePack || pc.Kind != "charge" || math.Abs(pc.RestV/float64(len(pc.CellV))-4.2) > 0.005 ||
		sc.End.Sub(pc.At) < 7*24*time.Hour {
		t.Errorf("storage check %+v", pc)
	}
	flown := false
	for _, f := range sc.Flights {
		if slices.Contains(f.Packs, st.StoragePack) {
			flown = true
			if !f.TakeoffAt.Before(pc.At) {
				t.Errorf("storage pack flew at %v after its charge record", f.TakeoffAt)
			}
		}
	}
	if !flown {
		t.Error("storage pack never flew")
	}

	// Trace lot: motors of one lot on several airframes flying several jobs.
	lotAF, lotJobs := map[string]bool{}, map[string]bool{}
	for _, p := range sc.Parts {
		if p.Kind == KindMotor && p.Lot == st.TraceLot {
			for _, f := range sc.Fits {
				if f.Serial == p.Serial {
					lotAF[f.Airframe] = true
				}
			}
		}
	}
	for _, f := range sc.Flights {
		if lotAF[f.Airframe] {
			lotJobs[f.Job] = true
		}
	}
	if len(lotAF) < 3 || len(lotJobs) < 3 {
		t.Errorf("lot %s on %d airframes, %d jobs", st.TraceLot, len(lotAF), len(lotJobs))
	}

	// Motor swap mid-period: the old fit ends and the spare's begins at the
	// work record's time; the spare was in stock before.
	wr := sc.WorkRecords[st.SwapRecord]
	var ended, began bool
	for _, f := range sc.Fits {
		ended = ended || (f.Serial == st.SwapRemoved && f.To.Equal(wr.At) && f.Position == st.SwapPosition)
		began = began || (f.Serial == st.SwapFitted && f.From.Equal(wr.At) && f.Position == st.SwapPosition)
		if f.Serial == st.SwapFitted && f.From.Before(wr.At) {
			t.Error("the spare was fitted before the swap")
		}
	}
	mid := sc.Start.Add(sc.End.Sub(sc.Start) / 2)
	if !ended || !began || wr.RemovedSerial != st.SwapRemoved || wr.FittedSerial != st.SwapFitted ||
		wr.At.Sub(mid).Abs() > 72*time.Hour || later(st.SwapAirframe, wr.At) == 0 {
		t.Errorf("motor swap %+v not consistent", wr)
	}
	for _, p := range sc.Parts {
		if p.Serial == st.SwapRemoved && p.Status != "quarantine" {
			t.Errorf("removed motor status %s", p.Status)
		}
	}
}

// A demo flight log is the size the brief asks for (10 Hz, 15-25 min).
func TestDemoFlightLog(t *testing.T) {
	sc := demoScenario(t)
	f := sc.Flights[len(sc.Flights)/2]
	var buf bytes.Buffer
	tr, err := Generate(f.Spec, &buf)
	if err != nil {
		t.Fatal(err)
	}
	if f.Spec.DurationS > 1500 || f.Spec.SampleHz != 10 || tr.Samples < 5000 {
		t.Errorf("demo flight: %.0f s, %g Hz, %d samples", f.Spec.DurationS, f.Spec.SampleHz, tr.Samples)
	}
	if tr.ChargeMah > 0.8*f.Spec.Packs[0].CapacityMah()*float64(len(f.Packs)) {
		t.Errorf("demo flight drew %.0f mAh", tr.ChargeMah)
	}
}
