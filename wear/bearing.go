package wear

import (
	"math"

	"github.com/rotorwright/rotorwright/fleet"
)

// BearingType is a rolling bearing's kind; its ISO 281 load-life exponent
// differs.
type BearingType string

// Bearing types; the zero value is a ball bearing, the usual kind in a
// multirotor motor.
const (
	Ball   BearingType = "ball"
	Roller BearingType = "roller"
)

// ISO 281 load-life exponents p of L10 = (C/P)^p.
const (
	BallLifeExponent   = 3.0
	RollerLifeExponent = 10.0 / 3
)

// LifeExponent returns the ISO 281 exponent of the bearing type: 3 for ball
// bearings, 10/3 for roller bearings ("" is ball).
func (t BearingType) LifeExponent() (float64, error) {
	switch t {
	case "", Ball:
		return BallLifeExponent, nil
	case Roller:
		return RollerLifeExponent, nil
	}
	return 0, fleet.FieldError("type", "bearing type %q is neither ball nor roller", t)
}

// L10 returns the ISO 281 basic rating life in millions of revolutions,
// (C/P)^p with p the type's exponent, for dynamic rating c and equivalent
// load p (same unit).
func L10(t BearingType, c, p float64) (float64, error) {
	exp, err := t.LifeExponent()
	if err != nil {
		return 0, err
	}
	if !(c > 0) || !finite(c) {
		return 0, fleet.FieldError("C_N", "dynamic rating must be positive")
	}
	if !(p > 0) || !finite(p) {
		return 0, fleet.FieldError("P", "equivalent load must be positive")
	}
	return math.Pow(c/p, exp), nil
}

// L10Hours returns the ISO 281 basic rating life in hours at a constant speed
// rpm: 10^6 / (60 n) (C/P)^p.
func L10Hours(t BearingType, c, p, rpm float64) (float64, error) {
	l, err := L10(t, c, p)
	if err != nil {
		return 0, err
	}
	if !(rpm > 0) || !finite(rpm) {
		return 0, fleet.FieldError("rpm", "speed must be positive")
	}
	return 1e6 / (60 * rpm) * l, nil
}

// a1Table is the life adjustment factor for reliability, ISO 281:2007
// (the 1990 edition's table differs: 0.62, 0.53, 0.44, 0.33, 0.21).
var a1Table = []struct{ reliability, a1 float64 }{
	{90, 1}, {95, 0.64}, {96, 0.55}, {97, 0.47}, {98, 0.37}, {99, 0.25},
}

// ReliabilityFactor returns a1 (ISO 281:2007) for a reliability in percent.
// Only the tabulated reliabilities are accepted: the standard gives the
// factor at those points, and a straight line between 90 and 95 % would not
// follow its Weibull-shaped curve, so other values are refused.
func ReliabilityFactor(reliabilityPct float64) (float64, error) {
	for _, r := range a1Table {
		if math.Abs(reliabilityPct-r.reliability) < 1e-9 {
			return r.a1, nil
		}
	}
	return 0, fleet.FieldError("Reliability", "reliability %g %% is not in the ISO 281:2007 a1 table (90, 95, 96, 97, 98, 99)", reliabilityPct)
}

// ModifiedLife returns Lnm = a1 a_ISO L10 in millions of revolutions.
func ModifiedLife(t BearingType, c, p, reliabilityPct, aISO float64) (float64, error) {
	a1, err := ReliabilityFactor(reliabilityPct)
	if err != nil {
		return 0, err
	}
	if !(aISO > 0) || !finite(aISO) {
		return 0, fleet.FieldError("AISO", "a_ISO must be positive")
	}
	l, err := L10(t, c, p)
	if err != nil {
		return 0, err
	}
	return a1 * aISO * l, nil
}

// deepGrooveTable gives e and Y against Fa/C0 for deep-groove ball bearings
// (Shigley, Mechanical Engineering Design, Table 11-1; same values as ISO 281).
var deepGrooveTable = []struct{ faC0, e, y float64 }{
	{0.014, 0.19, 2.30}, {0.028, 0.22, 1.99}, {0.056, 0.26, 1.71},
	{0.084, 0.28, 1.55}, {0.11, 0.30, 1.45}, {0.17, 0.34, 1.31},
	{0.28, 0.38, 1.15}, {0.42, 0.42, 1.04}, {0.56, 0.44, 1.00},
}

// DeepGrooveX is the radial factor X used when Fa/Fr > e.
const DeepGrooveX = 0.56

// DeepGrooveFactors returns e and Y for a ratio Fa/C0, interpolated linearly
// in the table. Ratios outside the table take its end rows (the table covers
// the range in which deep-groove bearings are rated for axial load).
func DeepGrooveFactors(faC0 float64) (e, y float64) {
	t := deepGrooveTable
	if faC0 <= t[0].faC0 {
		return t[0].e, t[0].y
	}
	for i := 1; i < len(t); i++ {
		if faC0 <= t[i].faC0 {
			f := (faC0 - t[i-1].faC0) / (t[i].faC0 - t[i-1].faC0)
			return t[i-1].e + f*(t[i].e-t[i-1].e), t[i-1].y + f*(t[i].y-t[i-1].y)
		}
	}
	last := t[len(t)-1]
	return last.e, last.y
}

// EquivalentLoad returns the dynamic equivalent load of a deep-groove ball
// bearing: P = Fr when Fa/Fr <= e, else X Fr + Y Fa, with e and Y from Fa/C0.
func EquivalentLoad(fr, fa, c0 float64) (float64, error) {
	if fr < 0 || fa < 0 || !finite(fr) || !finite(fa) {
		return 0, fleet.FieldError("load", "bearing loads must be finite and non-negative")
	}
	if !(c0 > 0) || !finite(c0) {
		return 0, fleet.FieldError("C0_N", "static rating must be positive")
	}
	if fa == 0 {
		return fr, nil
	}
	e, y := DeepGrooveFactors(fa / c0)
	if fr > 0 && fa/fr <= e {
		return fr, nil
	}
	return DeepGrooveX*fr + y*fa, nil
}

// DutyStep is one step of a duty cycle: a constant load at a constant speed
// for a share of the running time.
type DutyStep struct {
	LoadN     float64
	RPM       float64
	TimeShare float64 // fraction of running time; shares are normalised by their sum
}

// DutyCycleMean returns the mean equivalent load and mean speed of a duty
// cycle: P_m = (sum P^p n t / sum n t)^(1/p), n_m = sum n t / sum t, p the
// type's life exponent.
func DutyCycleMean(t BearingType, steps []DutyStep) (pm, nm float64, err error) {
	exp, err := t.LifeExponent()
	if err != nil {
		return 0, 0, err
	}
	if err := checkSteps(steps); err != nil {
		return 0, 0, err
	}
	var spnt, snt, st float64
	for _, s := range steps {
		spnt += math.Pow(s.LoadN, exp) * s.RPM * s.TimeShare
		snt += s.RPM * s.TimeShare
		st += s.TimeShare
	}
	return math.Pow(spnt/snt, 1/exp), snt / st, nil
}

// MinerLifeHours returns the L10 life in hours of a duty cycle by
// Palmgren-Miner summation: each running hour uses sum t_i / L10h_i of the
// life, and failure is predicted when the damage reaches 1.
func MinerLifeHours(t BearingType, c float64, steps []DutyStep) (float64, error) {
	if err := checkSteps(steps); err != nil {
		return 0, err
	}
	var st, perHour float64
	for _, s := range steps {
		st += s.TimeShare
	}
	for _, s := range steps {
		if s.TimeShare == 0 {
			continue
		}
		lh, err := L10Hours(t, c, s.LoadN, s.RPM)
		if err != nil {
			return 0, err
		}
		perHour += s.TimeShare / st / lh
	}
	return 1 / perHour, nil
}

// MinerDamage returns the Palmgren-Miner damage sum D = sum n_i / N_i, where
// n_i is the usage at level i and N_i the life at that level (same unit).
func MinerDamage(used, life []float64) (float64, error) {
	if len(used) != len(life) {
		return 0, fleet.Errorf(fleet.EINVALID, "usage and life lists differ in length")
	}
	d := 0.0
	for i := range used {
		if used[i] < 0 || !(life[i] > 0) {
			return 0, fleet.Errorf(fleet.EINVALID, "level %d: usage must be >= 0 and life > 0", i)
		}
		d += used[i] / life[i]
	}
	return d, nil
}

func checkSteps(steps []DutyStep) error {
	if len(steps) == 0 {
		return fleet.Errorf(fleet.EINVALID, "duty cycle has no steps")
	}
	var st float64
	for i, s := range steps {
		if !(s.LoadN > 0) || !(s.RPM > 0) || s.TimeShare < 0 || !finite(s.LoadN+s.RPM+s.TimeShare) {
			return fleet.Errorf(fleet.EINVALID, "duty step %d: load and speed must be positive, share non-negative", i)
		}
		st += s.TimeShare
	}
	if !(st > 0) {
		return fleet.Errorf(fleet.EINVALID, "duty cycle time shares sum to zero")
	}
	return nil
}
