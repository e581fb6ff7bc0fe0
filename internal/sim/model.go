package sim

import (
	"errors"
	"math"
	"math/rand/v2"
)

// model is a validated spec with its derived physics constants.
type model struct {
	s                *FlightSpec
	p                *plan
	n                int
	k                float64 // N per (rev/min)^2
	rho, area        float64
	powerPerT15      float64 // electrical W per motor per N^1.5
	weight           float64
	rpmHover         float64
	rpmIdle          float64
	bias             []float64
	sinA, cosA, rotS []float64
	ctlPhase         [6]float64
	packs            []packModel
	tImpact          float64 // centre of the touchdown load pulse
}

// instant is the noise-free state at one time.
type instant struct {
	thrust   float64
	rpm      []float64
	rpmMean  float64
	power    float64
	v, i     float64
	ip       []float64 // per-pack current, A
	minSoC   float64
	h, accZ  float64
	airborne bool
}

func newModel(s *FlightSpec, rng *rand.Rand) (*model, error) {
	p, err := newPlan(s, rng)
	if err != nil {
		return nil, err
	}
	n := s.Rotors
	m := &model{s: s, p: p, n: n}
	m.rho = airDensity(isaPressure(s.SiteElevationM), s.TempC)
	// T = C_T rho n^2 D^4 with n = rpm/60 (propeller-coefficient convention).
	m.k = s.ThrustCoeff * m.rho * math.Pow(s.RotorDiameterM, 4) / 3600
	m.area = math.Pi * s.RotorDiameterM * s.RotorDiameterM / 4
	// Momentum theory: P_ideal = T^1.5 / sqrt(2 rho A), then / (FM eta).
	m.powerPerT15 = 1 / (math.Sqrt(2*m.rho*m.area) * s.FigureOfMerit * s.MotorEfficiency)
	m.weight = s.MassKg * g0
	m.rpmHover = math.Sqrt(m.weight / (float64(n) * m.k))
	m.rpmIdle = idleFrac * m.rpmHover
	m.bias = make([]float64, n)
	if s.MotorBias != nil {
		var mean float64
		for _, b := range s.MotorBias {
			mean += b / float64(n)
		}
		for i, b := range s.MotorBias {
			m.bias[i] = b - mean
		}
	}
	for _, pos := range Layout(n) {
		a := pos.ArmDeg * math.Pi / 180
		m.sinA = append(m.sinA, math.Sin(a))
		m.cosA = append(m.cosA, math.Cos(a))
		r := 1.0
		if pos.Rotation == "ccw" {
			r = -1
		}
		m.rotS = append(m.rotS, r)
	}
	for i := range m.ctlPhase {
		m.ctlPhase[i] = 2 * math.Pi * rng.Float64()
	}
	for _, ps := range s.Packs {
		m.packs = append(m.packs, newPackModel(ps))
	}
	res := timeRes(s.SampleHz)
	m.tImpact = math.Round((p.tTD+impactS/2)/res) * res
	return m, nil
}

func newInstant(n, packs int) *instant {
	return &instant{rpm: make([]float64, n), ip: make([]float64, packs)}
}

var errExhausted = errors.New("sim: a pack is exhausted (a cell below 0 % state of charge): shorten the flight or add capacity")

// eval fills in with the noise-free state at t after drawing q[j] (A s) from
// pack j.
func (m *model) eval(t float64, q []float64, in *instant) error {
	p := m.p
	idleT := float64(m.n) * m.k * m.rpmIdle * m.rpmIdle
	var thrust, ub float64 // total thrust; share of the bias applied (0..1)
	fixedRPM := -1.0       // >= 0: every motor at this rpm
	ctl := false
	in.airborne = false
	switch {
	case t < p.tIdle || t >= p.tSpinEnd:
		fixedRPM = 0
	case t < p.tSpin:
		fixedRPM = m.rpmIdle
	case t < p.tTO:
		u := (t - p.tSpin) / spinUpS
		thrust, ub = idleT+(m.weight-idleT)*u, u
	case t < p.tTD:
		_, _, a := p.vertical(t)
		thrust, ub, ctl, in.airborne = m.s.MassKg*(g0+a), 1, true, true
	case t < p.tRampEnd:
		u := (t - p.tTD) / rampDownS
		thrust, ub = m.weight+(idleT-m.weight)*u, 1-u
	case t < p.tIdleEnd:
		fixedRPM = m.rpmIdle
	default:
		fixedRPM = m.rpmIdle * (1 - (t-p.tIdleEnd)/spinDownS)
	}
	var t15, rpmSum float64
	if fixedRPM >= 0 {
		ti := m.k * fixedRPM * fixedRPM
		for i := range in.rpm {
			in.rpm[i] = fixedRPM
		}
		thrust = ti * float64(m.n)
		t15 = float64(m.n) * ti * math.Sqrt(ti)
		rpmSum = fixedRPM * float64(m.n)
	} else {
		var r, pi, y float64
		if ctl && m.s.ControlActivity > 0 {
			ph := &m.ctlPhase
			r = math.Sin(2.32*t+ph[0]) + 0.6*math.Sin(7.1*t+ph[1])
			pi = math.Sin(1.95*t+ph[2]) + 0.6*math.Sin(6.3*t+ph[3])
			y = 0.5 * (math.Sin(1.32*t+ph[4]) + 0.5*math.Sin(5.2*t+ph[5]))
		}
		amp := m.s.ControlActivity / 1.6
		tm := thrust / float64(m.n)
		for i := range in.rpm {
			share := 1 + ub*m.bias[i] + amp*(r*m.sinA[i]+pi*m.cosA[i]+y*m.rotS[i])
			ti := tm * share
			in.rpm[i] = math.Sqrt(ti / m.k)
			t15 += ti * math.Sqrt(ti)
			rpmSum += in.rpm[i]
		}
	}
	in.thrust = thrust
	in.rpmMean = rpmSum / float64(m.n)
	in.power = m.s.AvionicsW + t15*m.powerPerT15

	// Packs in parallel: Thevenin sum E = sum(E_j/R_j)/G, R = 1/G.
	in.minSoC = 1
	var g, eg float64
	var ocvs [maxPacks]float64
	for j := range m.packs {
		pk := &m.packs[j]
		e, ms := pk.ocv(q[j])
		ocvs[j] = e
		in.minSoC = math.Min(in.minSoC, ms)
		g += 1 / pk.rPack
		eg += e / pk.rPack
	}
	if in.minSoC < 0 {
		return errExhausted
	}
	var err error
	if in.v, in.i, err = terminal(eg/g, 1/g, in.power); err != nil {
		return err
	}
	for j := range m.packs {
		in.ip[j] = (ocvs[j] - in.v) / m.packs[j].rPack
	}
	in.h, _, _ = p.vertical(t)
	in.accZ = g0
	if in.airborne {
		in.accZ = thrust / m.s.MassKg
	}
	if d := t - m.tImpact; math.Abs(d) < impactS/2 {
		in.accZ += (m.s.LandingG - 1) * g0 * math.Cos(math.Pi*d/impactS)
	}
	return nil
}

// terminal solves P = V I with V = E - I R for the smaller root,
// I = 2P / (E + sqrt(E^2 - 4 R P)) (the form that stays exact as R -> 0).
func terminal(e, r, p float64) (v, i float64, err error) {
	disc := e*e - 4*r*p
	if disc < 0 {
		return 0, 0, errors.New("sim: the packs cannot deliver the power asked (voltage collapse)")
	}
	i = 2 * p / (e + math.Sqrt(disc))
	return e - i*r, i, nil
}
