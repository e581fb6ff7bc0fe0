package sim

import (
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"time"
)

// Invented clients and sites (coordinates chosen to lie in one region so a
// firm could reach them; no real place is meant).
var demoJobs = []struct {
	code, client, site, notes string
	lat, lon, elev, temp, h   float64
}{
	{"J-101", "Velmora Aggregates", "Velmora north pit", "stockpile volumes", 47.212, 8.113, 480, 12, 70},
	{"J-102", "Tarnfell Water Board", "Upper Tarn dam", "dam face inspection", 46.781, 8.902, 1420, 6, 45},
	{"J-103", "Sorrel Ridge Solar", "Sorrel Ridge array", "thermal survey of panels", 47.402, 7.655, 560, 14, 40},
	{"J-104", "Quenby Rail", "Quenby cutting", "slope monitoring", 46.955, 7.402, 610, 11, 60},
	{"J-105", "Ostrel Forestry", "Ostrel east block", "canopy mapping", 46.602, 9.315, 1180, 7, 90},
	{"J-106", "Brannock Estates", "Brannock farm", "orthophoto for planning", 47.551, 9.012, 420, 13, 80},
	{"J-107", "Halvern Power", "Halvern line 4", "power-line corridor", 46.874, 9.655, 930, 9, 50},
	{"J-108", "Mirefield Council", "Mirefield landfill", "settlement survey", 47.105, 8.721, 510, 12, 60},
	{"J-109", "Corvane Mining", "Corvane open cut", "lidar of benches", 46.433, 8.204, 1650, 4, 70},
	{"J-110", "Tessmoor Wind", "Tessmoor ridge", "turbine pad mapping", 46.998, 9.944, 1890, 3, 60},
	{"J-111", "Dunholt Roads", "Dunholt bypass", "earthworks progress", 47.322, 8.544, 440, 13, 50},
	{"J-112", "Regional Mapping Office", "Lowmere district", "framework orthophoto programme", 47.018, 8.305, 700, 11, 100},
}

var demoPilots = []string{"A. Varga", "M. Okafor", "L. Brandt", "S. Ito", "R. Castell"}

func (b *builder) jobs(days int) [][]string {
	assign := make([][]string, len(demoJobs))
	codes := make([]string, len(b.sc.Airframes))
	for i, af := range b.sc.Airframes {
		codes[i] = af.Code
	}
	for j, d := range demoJobs {
		first := int(float64(j) / float64(len(demoJobs)-1) * 0.8 * float64(days))
		length := 10 + b.rng.IntN(30)
		if j == len(demoJobs)-1 {
			// The framework job runs through the last quarter with every airframe.
			first, length = days*3/4, days-days*3/4
			assign[j] = codes
		} else {
			for _, i := range b.rng.Perm(len(codes))[:1+b.rng.IntN(3)] {
				assign[j] = append(assign[j], codes[i])
			}
		}
		first = min(first, days-1)
		start := b.sc.Start.AddDate(0, 0, first)
		end := start.AddDate(0, 0, min(length, days-first)-1)
		b.sc.Jobs = append(b.sc.Jobs, Job{Code: d.code, Client: d.client, StartsOn: start, EndsOn: end, Notes: d.notes,
			Site: Site{Name: d.site, Lat: d.lat, Lon: d.lon, ElevationM: d.elev, MeanTempC: d.temp, PatternHeight: d.h}})
	}
	// The trace-lot airframes each fly a job of their own as well.
	for i, af := range []string{"KQ-02", "KQ-03", "KQ-05"} {
		j := []int{0, 3, 6}[i]
		if !slices.Contains(assign[j], af) {
			assign[j] = append(assign[j], af)
		}
	}
	return assign
}

// story flights, planned by day; each grounds its airframe afterwards.
type storyPlan struct {
	airframe string
	day      int
	done     bool
	flight   *Flight
}

// flights simulates the months day by day: an airframe on an active job
// flies on about 40 % of days, 1-4 flights, each with the pool packs that
// have rested longest (recharged at least 75 minutes).
func (b *builder) flights(days int, assign [][]string) {
	strike := &storyPlan{airframe: "OH-03", day: days * 88 / 100}
	landing := &storyPlan{airframe: "KQ-04", day: days * 94 / 100}
	stories := map[string]*storyPlan{strike.airframe: strike, landing.airframe: landing}
	swapDay := days / 2
	holdSerial := b.pools["Kestrel Q4"][2]
	b.packHold[holdSerial] = b.sc.End.AddDate(0, 0, -10)
	grounded := map[string]bool{}
	type rec struct {
		f   Flight
		key *storyPlan
	}
	var out []rec
	for d := range days {
		date := b.sc.Start.AddDate(0, 0, d)
		if d == swapDay {
			b.swap(date.Add(5 * time.Hour))
		}
		for _, af := range b.sc.Airframes {
			if grounded[af.Code] {
				continue
			}
			var active []int
			for j, codes := range assign {
				if jb := b.sc.Jobs[j]; !date.Before(jb.StartsOn) && !date.After(jb.EndsOn) && slices.Contains(codes, af.Code) {
					active = append(active, j)
				}
			}
			sp := stories[af.Code]
			force := sp != nil && !sp.done && d >= sp.day
			if len(active) == 0 || (!force && b.rng.Float64() > 0.4) {
				continue
			}
			job := b.sc.Jobs[active[b.rng.IntN(len(active))]]
			pilot := demoPilots[b.rng.IntN(len(demoPilots))]
			t := date.Add(7*time.Hour + time.Duration(b.rng.IntN(90))*time.Minute)
			for range 1 + b.rng.IntN(4) {
				f, ok := b.flight(af, job, pilot, t, force)
				if !ok {
					break
				}
				r := rec{f: f}
				if force {
					sp.done, r.key = true, sp
				}
				out = append(out, r)
				t = f.Spec.Start.Add(time.Duration(f.Spec.DurationS*float64(time.Second)) +
					time.Duration(20+b.rng.IntN(25))*time.Minute)
				if force {
					grounded[af.Code] = true
					break
				}
			}
		}
	}
	sort.SliceStable(out, func(i, j int) bool { return out[i].f.TakeoffAt.Before(out[j].f.TakeoffAt) })
	for i, r := range out {
		b.sc.Flights = append(b.sc.Flights, r.f)
		switch r.key {
		case strike:
			b.sc.Stories.PropStrikeFlight = i
		case landing:
			b.sc.Stories.HardLandingFlight = i
		}
	}
	b.strikeEvent()
	b.storageCheck(holdSerial)
}

// flight plans one flight at t, or reports false when no packs are free.
func (b *builder) flight(af Airframe, job Job, pilot string, t time.Time, story bool) (Flight, bool) {
	m := b.models[af.Model]
	var free []string
	for _, s := range b.pools[af.Model] {
		if hold, ok := b.packHold[s]; ok && !t.Before(hold) {
			continue
		}
		if !b.packAvail[s].After(t) {
			free = append(free, s)
		}
	}
	if len(free) < m.PacksPerFlight || t.Hour() >= 18 {
		return Flight{}, false
	}
	sort.SliceStable(free, func(i, j int) bool { return b.packAvail[free[i]].Before(b.packAvail[free[j]]) })
	free = free[:m.PacksPerFlight]
	mass := af.EmptyMassG
	var packs []PackState
	for _, s := range free {
		ps := *b.pack[s]
		ps.StartSoC = 0.97 + 0.03*b.rng.Float64()
		packs = append(packs, ps)
		mass += b.packMassG[s]
	}
	season := math.Sin(2 * math.Pi * float64(t.YearDay()-110) / 365)
	spec := FlightSpec{Seed: b.rng.Uint64(), Start: t, Airframe: af.Code, Packs: packs,
		MassKg: mass / 1000, Rotors: m.Rotors, RotorDiameterM: af.RotorDiameterMM / 1000,
		ThrustCoeff: 0.1, FigureOfMerit: 0.55, MotorEfficiency: 0.8, AvionicsW: 6 + 2*float64(m.Rotors),
		DurationS: 900 + 600*b.rng.Float64(), SampleHz: 10, Sampling: DefaultSampling(),
		SiteElevationM: job.Site.ElevationM, TempC: job.Site.MeanTempC + 8*season + 3*b.rng.NormFloat64(),
		Lat: job.Site.Lat + 0.004*(b.rng.Float64()-0.5), Lon: job.Site.Lon + 0.004*(b.rng.Float64()-0.5),
		CruiseHeightM: job.Site.PatternHeight, CruiseSpeedMS: 6 + 4*b.rng.Float64(), LegSpacingM: 30 + 30*b.rng.Float64(),
		LandingG: 1.2 + 0.6*b.rng.Float64(), MotorBias: slices.Clone(af.MotorBias), ControlActivity: 0.03,
		VibrationLevel: m.VibrationLevel * (0.9 + 0.2*b.rng.Float64()), HoverThrottle: 0.5, Noise: DefaultNoise()}
	if story && af.Code == "KQ-04" {
		spec.LandingG = 3.5
		b.sc.Stories.HardLandingG = 3.5
	}
	tr, err := Estimate(spec)
	// Keep the planned discharge to 75 % of the weakest pack's capacity.
	capMah := math.Inf(1)
	for _, p := range packs {
		capMah = math.Min(capMah, p.CapacityMah())
	}
	if err == nil && tr.ChargeMah > 0.75*capMah*float64(len(packs)) {
		air := spec.DurationS - 60
		spec.DurationS = 60 + air*0.75*capMah*float64(len(packs))/tr.ChargeMah
		tr, err = Estimate(spec)
	}
	if err != nil {
		return Flight{}, false
	}
	if story && af.Code == "OH-03" {
		// The strike chips a blade three quarters into the airborne time.
		spec.VibrationStepAtS, spec.VibrationStepFactor = math.Round(tr.TakeoffOffsetS+0.75*tr.AirborneS), 3
	}
	for j, s := range free {
		b.pack[s].Cycles += tr.Packs[j].ChargeMah / b.pack[s].RatedMah
		b.packAvail[s] = t.Add(time.Duration((spec.DurationS + 75*60) * float64(time.Second)))
	}
	sec := func(s float64) time.Duration { return time.Duration(s * float64(time.Second)) }
	return Flight{Airframe: af.Code, Job: job.Code, Pilot: pilot, Packs: free,
		TakeoffAt: t.Add(sec(tr.TakeoffOffsetS)).Round(time.Millisecond), LandingAt: t.Add(sec(tr.LandingOffsetS)).Round(time.Millisecond),
		TakeoffMassG: mass, Spec: spec}, true
}

// swap replaces one motor of OH-02 with a stock spare of the same rotation.
func (b *builder) swap(at time.Time) {
	const af, pos = "OH-02", "m4"
	old := b.fittedKind(af, pos, KindMotor)
	var rotation, spare string
	for _, p := range b.sc.Parts {
		if p.Serial == old {
			rotation = p.Motor.Rotation
		}
	}
	for _, p := range b.sc.Parts {
		if p.Kind == KindMotor && p.PartNumber == "HD-5010-320" && p.Motor.Rotation == rotation {
			if _, isFitted := b.fitIdx[p.Serial]; !isFitted && p.Serial != old && p.AcquiredOn.Before(at) {
				spare = p.Serial
			}
		}
	}
	b.unfit(old, at)
	b.fit(spare, af, pos, at)
	st := &b.sc.Stories
	st.SwapAirframe, st.SwapPosition, st.SwapRemoved, st.SwapFitted, st.SwapAt = af, pos, old, spare, at
	st.SwapRecord = len(b.sc.WorkRecords)
	b.sc.WorkRecords = append(b.sc.WorkRecords, WorkRecord{At: at, Airframe: af, Position: pos, Action: "replace",
		PerformedBy: "J. Marsh", Notes: "rough rotation felt at pre-flight check; motor quarantined for bearing inspection",
		RemovedSerial: old, FittedSerial: spare})
}

func (b *builder) strikeEvent() {
	st := &b.sc.Stories
	f := b.sc.Flights[st.PropStrikeFlight]
	prop := b.fittedKind(f.Airframe, "m2", KindPropeller)
	st.PropStrikeEvent = len(b.sc.Events)
	at := f.Spec.Start.Add(time.Duration(f.Spec.VibrationStepAtS * float64(time.Second))).Round(time.Millisecond)
	b.sc.Events = append(b.sc.Events, Event{Kind: "prop_strike", At: at, Airframe: f.Airframe,
		PartSerial: prop, Flight: st.PropStrikeFlight, Severity: "critical",
		Detail: "m2 blade clipped a guy wire on the last leg; landed normally"})
}

// storageCheck records the planted pack's full charge 9 days before the end;
// flight planning already kept it on the shelf for the last 10 days.
func (b *builder) storageCheck(serial string) {
	ps := b.pack[serial]
	at := b.sc.End.AddDate(0, 0, -9).Add(17 * time.Hour)
	rng := rand.New(rand.NewPCG(serialSeed(serial), 7))
	cells := make([]float64, ps.CellsS)
	var rest float64
	for i := range cells {
		cells[i] = math.Round((4.2+0.002*(2*rng.Float64()-1))*1000) / 1000
		rest += cells[i]
	}
	st := &b.sc.Stories
	st.StoragePack, st.StorageCheck = serial, len(b.sc.PackChecks)
	b.sc.PackChecks = append(b.sc.PackChecks, PackCheck{Serial: serial, At: at, Kind: "charge",
		MahIn: math.Round(0.6 * ps.CapacityMah()), RestV: math.Round(rest*1000) / 1000, CellV: cells})
}

// DemoFleet builds the demo scenario: a dozen airframes of three models
// flying a dozen jobs over the given months from start, with the planted
// stories named in Stories. Same arguments, same scenario.
func DemoFleet(seed uint64, start time.Time, months int) Scenario {
	start = start.UTC().Truncate(24 * time.Hour)
	months = max(months, 2)
	b := &builder{rng: rand.New(rand.NewPCG(seed, 0x64656d6f)), models: map[string]Model{}, serialN: map[string]int{},
		fitIdx: map[string]int{}, pack: map[string]*PackState{},
		packMassG: map[string]float64{}, packAvail: map[string]time.Time{}, packHold: map[string]time.Time{},
		pools: map[string][]string{}}
	b.sc.Seed, b.sc.Start, b.sc.End, b.sc.Pilots = seed, start, start.AddDate(0, months, 0), demoPilots
	days := int(b.sc.End.Sub(start).Hours() / 24)
	b.airframes()
	b.packs()
	b.flights(days, b.jobs(days))
	b.finish()
	return b.sc
}

// finish sets part statuses at the end and names the hard-duty motor and lot.
func (b *builder) finish() {
	st := &b.sc.Stories
	st.HardDutyAirframe, st.HardDutyMotor = "CX-01", b.fittedKind("CX-01", "m3", KindMotor)
	st.TraceLot, st.TraceAirframes = traceLot, []string{"KQ-02", "KQ-03", "KQ-05"}
	for i := range b.sc.Parts {
		p := &b.sc.Parts[i]
		switch {
		case p.Kind == KindPack:
			p.Status = "stock"
		case p.Serial == st.SwapRemoved:
			p.Status = "quarantine"
		default:
			p.Status = "stock"
			if _, ok := b.fitIdx[p.Serial]; ok {
				p.Status = "fitted"
			}
		}
	}
}

func (b *builder) fittedKind(af, pos, kind string) string {
	for _, f := range b.sc.Fits {
		if f.Airframe == af && f.Position == pos && f.To.IsZero() {
			for _, p := range b.sc.Parts {
				if p.Serial == f.Serial && p.Kind == kind {
					return p.Serial
				}
			}
		}
	}
	return ""
}
