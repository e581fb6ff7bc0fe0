package sim

import (
	"io"
	"math"
	"math/rand/v2"
)

// Truth is what the simulated flight really did, integrated from the
// noise-free signal on a fine grid (steps of at most 50 ms, split at every
// profile breakpoint, trapezoidal rule), so a log analyser can be tested
// against it.
type Truth struct {
	ThrustK       float64   // N per (rev/min)^2, T = k rpm^2 per rotor
	HoverRPM      float64   // rpm with N k rpm^2 = m g
	MotorHoverRPM []float64 // per motor, with its thrust-share bias
	WeightN       float64   // m g
	MeanThrustN   float64   // mean total thrust over the airborne time
	AirDensity    float64   // kg/m^3 at the site (used for thrust and power)

	ChargeMah        float64 // drawn from the pack terminals, all packs
	EnergyWh         float64 // integral of V I
	MeanPowerW       float64 // mean electrical power over the airborne time
	HoverIdealPowerW float64 // N P_ideal at hover thrust, momentum theory
	EfficiencyIndex  float64 // MeanPowerW / HoverIdealPowerW
	PeakA            float64
	MinPackV         float64
	MinCellV         float64 // of Packs[0], whose cells are logged
	RestVStart       float64 // terminal volts at the end of the rest before arming
	RestVEnd         float64 // terminal volts at the end of the log
	IRmOhm           float64 // terminal DC resistance of the packs in parallel
	CapacityMah      float64 // sum of the packs' capacities at this cycle count

	Packs []PackTruth

	Revolutions []float64 // per motor, m1..mN
	MotorRunS   float64   // time with the rotors turning

	TakeoffOffsetS float64 // seconds after log start
	LandingOffsetS float64
	AirborneS      float64
	LandingG       float64 // peak |acc| at touchdown, g
	DistanceM      float64 // along the survey path, local ENU approximation
	MaxHeightM     float64 // above take-off
	Samples        int     // rows written
}

// PackTruth is one pack's share of a flight.
type PackTruth struct {
	Serial      string
	Cycles      float64 // equivalent full cycles before the flight
	CapacityMah float64 // at this cycle count, from the fade law
	IRmOhm      float64 // whole-pack DC resistance at this cycle count
	CellIRmOhm  float64 // IRmOhm / cells_s
	ChargeMah   float64
	EnergyWh    float64
	StartSoC    float64
	EndSoC      float64 // mean cell group
	MinCellV    float64
}

// Generate simulates one flight, writes its CSV log to w and returns the truth.
func Generate(spec FlightSpec, w io.Writer) (Truth, error) {
	return run(spec, w, 0.05)
}

// Estimate returns the truth of a flight without writing a log, integrating
// on a coarse 1 s grid (charge and energy within ~0.1 % of Generate's).
func Estimate(spec FlightSpec) (Truth, error) {
	return run(spec, nil, 1)
}

// Timeline returns the take-off and landing offsets (s after log start)
// that Generate would produce for spec, without simulating it.
func Timeline(spec FlightSpec) (takeoffS, landingS float64, err error) {
	spec.applyDefaults()
	if err := spec.validate(); err != nil {
		return 0, 0, err
	}
	p, err := newPlan(&spec, planRNG(spec.Seed))
	if err != nil {
		return 0, 0, err
	}
	return p.tTO, p.tTD, nil
}

// Separate random streams, so that e.g. changing the noise level leaves the
// flight path and the sample times alone.
func planRNG(seed uint64) *rand.Rand   { return rand.New(rand.NewPCG(seed, 0x706c616e)) }
func sampleRNG(seed uint64) *rand.Rand { return rand.New(rand.NewPCG(seed, 0x73616d70)) }
func noiseRNG(seed uint64) *rand.Rand  { return rand.New(rand.NewPCG(seed, 0x6e6f6973)) }

func timeRes(hz float64) float64 {
	if hz > 200 {
		return 1e-4
	}
	return 1e-3
}

func run(spec FlightSpec, w io.Writer, hmax float64) (Truth, error) {
	spec.applyDefaults()
	if err := spec.validate(); err != nil {
		return Truth{}, err
	}
	m, err := newModel(&spec, planRNG(spec.Seed))
	if err != nil {
		return Truth{}, err
	}
	n, np := spec.Rotors, len(spec.Packs)
	p := m.p
	tr := Truth{ThrustK: m.k, HoverRPM: m.rpmHover, WeightN: m.weight, AirDensity: m.rho,
		TakeoffOffsetS: p.tTO, LandingOffsetS: p.tTD, AirborneS: p.tTD - p.tTO,
		LandingG: spec.LandingG, DistanceM: p.distance(), MaxHeightM: p.maxH,
		MotorRunS: p.tSpinEnd - p.tIdle, Revolutions: make([]float64, n),
		MinPackV: math.Inf(1), MinCellV: math.Inf(1)}
	for i := range n {
		tr.MotorHoverRPM = append(tr.MotorHoverRPM, m.rpmHover*math.Sqrt(1+m.bias[i]))
	}
	hoverT := m.weight / float64(n)
	tr.HoverIdealPowerW = float64(n) * hoverT * math.Sqrt(hoverT) / math.Sqrt(2*m.rho*m.area)
	var g float64
	for j, ps := range spec.Packs {
		pm := &m.packs[j]
		tr.Packs = append(tr.Packs, PackTruth{Serial: ps.Serial, Cycles: ps.Cycles, CapacityMah: pm.capMah,
			IRmOhm: pm.irMohm, CellIRmOhm: pm.irMohm / float64(ps.CellsS), StartSoC: ps.StartSoC,
			MinCellV: math.Inf(1)})
		g += 1 / pm.irMohm
		tr.CapacityMah += pm.capMah
	}
	tr.IRmOhm = 1 / g

	var out *logWriter
	if w != nil {
		out = newLogWriter(&spec, m, w)
		out.header()
	}
	q := make([]float64, np)
	qs := make([]float64, np)
	revs := make([]float64, n)
	cur, nxt := newInstant(n, np), newInstant(n, np)
	var charge, energy, thrustInt, powerInt float64
	packQ := make([]float64, np)
	packE := make([]float64, np)

	// observe folds one node into the extremes.
	observe := func(in *instant) {
		tr.PeakA = math.Max(tr.PeakA, in.i)
		tr.MinPackV = math.Min(tr.MinPackV, in.v)
		for j := range m.packs {
			pk := &m.packs[j]
			for c, o := range pk.cellsOCV {
				v := o - in.ip[j]*pk.rCell[c]
				tr.Packs[j].MinCellV = math.Min(tr.Packs[j].MinCellV, v)
			}
		}
	}
	for b := 0; b+1 < len(p.breaks); b++ {
		a, z := p.breaks[b], p.breaks[b+1]
		if z <= a {
			continue
		}
		if err := m.eval(a, q, cur); err != nil {
			return Truth{}, err
		}
		observe(cur)
		steps := max(1, int(math.Ceil((z-a)/hmax)))
		dt := (z - a) / float64(steps)
		mid := (a + z) / 2
		air := mid > p.tTO && mid < p.tTD
		t0 := a
		for k := 1; k <= steps; k++ {
			t1 := a + float64(k)*dt
			if k == steps {
				t1 = math.Nextafter(z, a) // left limit at a breakpoint
			}
			if out != nil {
				for out.pending() < t1 {
					if err := out.sample(q, revs, cur, t0); err != nil {
						return Truth{}, err
					}
				}
			}
			for j := range qs {
				qs[j] = q[j] + cur.ip[j]*(t1-t0)
			}
			if err := m.eval(t1, qs, nxt); err != nil {
				return Truth{}, err
			}
			h := t1 - t0
			for j := range q {
				dq := (cur.ip[j] + nxt.ip[j]) / 2 * h
				q[j] += dq
				packQ[j] += dq
				packE[j] += (cur.v*cur.ip[j] + nxt.v*nxt.ip[j]) / 2 * h
			}
			charge += (cur.i + nxt.i) / 2 * h
			energy += (cur.v*cur.i + nxt.v*nxt.i) / 2 * h
			for i := range revs {
				revs[i] += (cur.rpm[i] + nxt.rpm[i]) / 120 * h
			}
			if air {
				thrustInt += (cur.thrust + nxt.thrust) / 2 * h
				powerInt += (cur.power + nxt.power) / 2 * h
			}
			observe(nxt)
			cur, nxt = nxt, cur
			t0 = t1
		}
		if z == p.tIdle {
			tr.RestVStart = cur.v
		}
	}
	tr.RestVEnd = cur.v
	if out != nil {
		// The last breakpoint is the end of the log: samples up to and at it.
		for out.pending() <= p.tEnd {
			if err := out.sample(q, revs, cur, p.tEnd); err != nil {
				return Truth{}, err
			}
		}
		if err := out.flush(); err != nil {
			return Truth{}, err
		}
		tr.Samples = out.rows
	}
	tr.ChargeMah = charge / 3.6
	tr.EnergyWh = energy / 3600
	tr.MeanThrustN = thrustInt / tr.AirborneS
	tr.MeanPowerW = powerInt / tr.AirborneS
	tr.EfficiencyIndex = tr.MeanPowerW / tr.HoverIdealPowerW
	copy(tr.Revolutions, revs)
	tr.MinCellV = tr.Packs[0].MinCellV
	for j := range tr.Packs {
		pk := &m.packs[j]
		tr.Packs[j].ChargeMah = packQ[j] / 3.6
		tr.Packs[j].EnergyWh = packE[j] / 3600
		var soc float64
		for _, c := range pk.capAs {
			soc += (pk.s0 - q[j]/c) / float64(len(pk.capAs))
		}
		tr.Packs[j].EndSoC = soc
	}
	return tr, nil
}
