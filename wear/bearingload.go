package wear

import (
	"math"
	"sort"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

// Defaults of BearingModel, applied when a field is zero.
const (
	// DefaultBalanceGrade is ISO 21940-11 grade G 6.3 (mm/s); common practice
	// for small rotors such as fans and small propellers. A setting.
	DefaultBalanceGrade = 6.3
	// DefaultReliability is the 90 % reliability of the basic L10 life.
	DefaultReliability = 90.0
	// DefaultBearingCount is the usual pair of ball bearings in an outrunner.
	DefaultBearingCount = 2
	// DefaultUtilisationWindow is the trailing window for duty and utilisation.
	DefaultUtilisationWindow = 30 * 24 * time.Hour
)

// fallbackFaC0 is the Fa/C0 row used when the static rating is not known.
// Our assumption (mid-table); with Y then constant and thrust dominating
// the load of a multirotor motor, load ratios barely depend on it.
const fallbackFaC0 = 0.056

// RatedInterval is the relative-mode rating: the bearings last Hours when
// run at RPM carrying ThrustN (e.g. the hover thrust, weight / rotor count).
type RatedInterval struct {
	Hours   float64
	RPM     float64
	ThrustN float64
}

// BearingModel holds the settings of a motor's bearing-life model.
//
// Mode: absolute when C_N > 0 (ISO 281 life of the rated bearing), else
// relative to Rated. Load model per spectrum bin: the locating bearing
// carries the whole axial thrust (Fa = thrust: one bearing of a pair takes
// the axial load in a locating/floating arrangement), and the residual
// unbalance force F = m e w^2 = m (G/1000) w is shared equally by the Count
// bearings (Fr = F / Count). P follows the deep-groove equivalent-load rule;
// the locating bearing, the most loaded, governs the motor's life. Type
// sets the ISO 281 life exponent (3 ball, 10/3 roller) in both modes; the
// equivalent-load rule stays the deep-groove one for a roller bearing too,
// an approximation (its maker's X and Y apply).
type BearingModel struct {
	Type              BearingType // ball ("" too) or roller: the ISO 281 life exponent 3 or 10/3
	C_N               float64     // dynamic load rating of one bearing, N; 0 selects relative mode
	C0_N              float64     // static load rating, N; 0 holds e, Y at the Fa/C0 = 0.056 row
	Count             int         // bearings per motor; 0 means DefaultBearingCount
	AISO              float64     // ISO 281 a_ISO life modification factor; 0 means 1
	Reliability       float64     // percent, one of the a1 table's; 0 means 90
	BalanceGrade_mm_s float64     // ISO 21940-11 grade G = e w, mm/s; 0 means DefaultBalanceGrade
	RotorMassKg       float64     // rotating mass (bell and propeller), kg; 0 means no unbalance load
	Rated             RatedInterval
}

// SpectrumBin is one rpm bin of a motor's load spectrum in a flight.
type SpectrumBin struct {
	RPM         float64 // bin centre or mean speed, rev/min
	Seconds     float64 // time spent in the bin
	Revolutions float64 // revolutions made in the bin
	ThrustN     float64 // mean thrust of this motor in the bin, N
}

// Mode returns "absolute" or "relative".
func (m BearingModel) Mode() string {
	if m.C_N > 0 {
		return "absolute"
	}
	return "relative"
}

func (m BearingModel) withDefaults() BearingModel {
	if m.Count == 0 {
		m.Count = DefaultBearingCount
	}
	if m.AISO == 0 {
		m.AISO = 1
	}
	if m.Reliability == 0 {
		m.Reliability = DefaultReliability
	}
	if m.BalanceGrade_mm_s == 0 {
		m.BalanceGrade_mm_s = DefaultBalanceGrade
	}
	return m
}

// Validate checks the settings.
func (m BearingModel) Validate() error {
	m = m.withDefaults()
	switch {
	case m.C_N < 0 || !finite(m.C_N):
		return fleet.FieldError("C_N", "dynamic rating must be positive, or 0 for relative mode")
	case m.C0_N < 0 || !finite(m.C0_N):
		return fleet.FieldError("C0_N", "static rating must be positive, or 0 when unknown")
	case m.Count < 1:
		return fleet.FieldError("Count", "bearing count must be at least 1")
	case !(m.AISO > 0) || !finite(m.AISO):
		return fleet.FieldError("AISO", "a_ISO must be positive")
	case !(m.BalanceGrade_mm_s > 0) || !finite(m.BalanceGrade_mm_s):
		return fleet.FieldError("BalanceGrade_mm_s", "balance grade must be positive")
	case m.RotorMassKg < 0 || !finite(m.RotorMassKg):
		return fleet.FieldError("RotorMassKg", "rotor mass must be non-negative")
	}
	if _, err := ReliabilityFactor(m.Reliability); err != nil {
		return err
	}
	if _, err := m.Type.LifeExponent(); err != nil {
		return err
	}
	if m.C_N == 0 {
		r := m.Rated
		if !(r.Hours > 0) || !(r.RPM > 0) || !(r.ThrustN > 0) || !finite(r.Hours+r.RPM+r.ThrustN) {
			return fleet.FieldError("Rated", "relative mode needs a positive interval (hours), reference rpm and reference thrust")
		}
	}
	return nil
}

// UnbalanceForce returns the residual-unbalance force m e w^2 of a rotor of
// mass kg at rpm, for balance grade G = e w in mm/s (ISO 21940-11).
func UnbalanceForce(massKg, gradeMMs, rpm float64) float64 {
	w := 2 * math.Pi * rpm / 60
	return massKg * gradeMMs / 1000 * w
}

// Load returns the radial and axial loads on the governing bearing and its
// equivalent load P for a speed and thrust, under the model's load sharing.
func (m BearingModel) Load(rpm, thrustN float64) (fr, fa, p float64, err error) {
	m = m.withDefaults()
	fr = UnbalanceForce(m.RotorMassKg, m.BalanceGrade_mm_s, rpm) / float64(m.Count)
	fa = thrustN
	if m.C0_N > 0 {
		p, err = EquivalentLoad(fr, fa, m.C0_N)
		return fr, fa, p, err
	}
	// Unknown C0: same rule with e and Y held at the fallback row.
	if fr < 0 || fa < 0 || !finite(fr+fa) {
		return 0, 0, 0, fleet.FieldError("load", "bearing loads must be finite and non-negative")
	}
	e, y := DeepGrooveFactors(fallbackFaC0)
	if fa == 0 || (fr > 0 && fa/fr <= e) {
		return fr, fa, fr, nil
	}
	return fr, fa, DeepGrooveX*fr + y*fa, nil
}

// Damage returns the Palmgren-Miner damage (fraction of bearing life) of a
// load spectrum. Absolute: sum rev_i / (Lnm(P_i) 10^6). Relative: the rated
// life in revolutions is L_ref = Hours 60 RPM at P_ref = P(Rated), and each
// bin counts rev_i (P_i/P_ref)^p / L_ref (p the life exponent), so running Rated.Hours at the
// reference duty gives 1. a1 and a_ISO apply only in absolute mode (a rated
// interval already embodies the operator's reliability and conditions).
func (m BearingModel) Damage(bins []SpectrumBin) (float64, error) {
	if err := m.Validate(); err != nil {
		return 0, err
	}
	dm, err := m.damager()
	if err != nil {
		return 0, err
	}
	return dm.damage(bins)
}

// damager is what Damage works out once per model (Status sums many
// flights with one): the model with its defaults, the life exponent and,
// in relative mode, the reference load and life.
type damager struct {
	m               BearingModel
	exp, pRef, lRef float64
}

// damager returns the model's damager; m must be valid.
func (m BearingModel) damager() (damager, error) {
	m = m.withDefaults()
	exp, _ := m.Type.LifeExponent() // checked by Validate
	var pRef, lRef float64
	if m.C_N == 0 {
		_, _, pr, err := m.Load(m.Rated.RPM, m.Rated.ThrustN)
		if err != nil {
			return damager{}, err
		}
		pRef, lRef = pr, m.Rated.Hours*60*m.Rated.RPM
	}
	return damager{m: m, exp: exp, pRef: pRef, lRef: lRef}, nil
}

// damage is Damage with the model's figures worked out.
func (dm damager) damage(bins []SpectrumBin) (float64, error) {
	m, exp, pRef, lRef := dm.m, dm.exp, dm.pRef, dm.lRef
	d := 0.0
	for i, b := range bins {
		if b.RPM < 0 || b.Seconds < 0 || b.Revolutions < 0 || b.ThrustN < 0 || !finite(b.RPM+b.Seconds+b.Revolutions+b.ThrustN) {
			return 0, fleet.Errorf(fleet.EINVALID, "spectrum bin %d: values must be finite and non-negative", i)
		}
		if b.Revolutions == 0 {
			continue
		}
		_, _, p, err := m.Load(b.RPM, b.ThrustN)
		if err != nil {
			return 0, err
		}
		if p == 0 {
			continue // no load, no rolling-contact fatigue in this model
		}
		if m.C_N > 0 {
			lnm, err := ModifiedLife(m.Type, m.C_N, p, m.Reliability, m.AISO)
			if err != nil {
				return 0, err
			}
			d += b.Revolutions / (lnm * 1e6)
		} else {
			d += b.Revolutions * math.Pow(p/pRef, exp) / lRef
		}
	}
	return d, nil
}

// MotorFlight is one flight's load spectrum for one motor.
type MotorFlight struct {
	At   time.Time
	Bins []SpectrumBin
}

// BearingPoint is the cumulative consumed fraction after a flight.
type BearingPoint struct {
	At       time.Time
	Consumed float64
}

// BearingStatus is the bearing health of one motor since its bearings were
// last renewed (pass only the flights since then).
type BearingStatus struct {
	Mode             string
	ConsumedFraction float64
	RunHours         float64 // total motor run time counted
	// RecentDamagePerHour is the damage per hour of run time over the
	// trailing window, or over all flights when the window has no run time.
	RecentDamagePerHour float64
	RateKnown           bool // false when there is no run time at all
	// RemainingEquivHours is (1 - consumed) / RecentDamagePerHour: run hours
	// left at recent duty; 0 when consumed or when the rate is unknown.
	RemainingEquivHours    float64
	UtilisationHoursPerDay float64 // run hours per day over the trailing window
	// ForecastDate is now + remaining / utilisation (now when used up); nil
	// when there is no utilisation in the window or no known rate
	// (ForecastReason fleet.ForecastNoUse), or when the date is beyond the
	// forecast horizon (fleet.ForecastBeyondHorizon).
	ForecastDate   *time.Time
	ForecastReason string
	Series         []BearingPoint // cumulative consumed fraction per flight, oldest first
}

// Status sums the damage of the flights and forecasts when the bearings are
// used up. window is the trailing utilisation window (0 means 30 days).
func (m BearingModel) Status(flights []MotorFlight, now time.Time, window time.Duration) (BearingStatus, error) {
	if err := m.Validate(); err != nil {
		return BearingStatus{}, err
	}
	if window <= 0 {
		window = DefaultUtilisationWindow
	}
	fl := append([]MotorFlight(nil), flights...)
	sort.SliceStable(fl, func(i, j int) bool { return fl[i].At.Before(fl[j].At) })
	st := BearingStatus{Mode: m.Mode(), Series: make([]BearingPoint, 0, len(fl))}
	from := now.Add(-window)
	var recentD, recentH float64
	dm, err := m.damager()
	if err != nil {
		return BearingStatus{}, err
	}
	for _, f := range fl {
		d, err := dm.damage(f.Bins)
		if err != nil {
			return BearingStatus{}, err
		}
		h := 0.0
		for _, b := range f.Bins {
			h += b.Seconds / 3600
		}
		st.ConsumedFraction += d
		st.RunHours += h
		if f.At.After(from) && !f.At.After(now) {
			recentD += d
			recentH += h
		}
		st.Series = append(st.Series, BearingPoint{At: f.At, Consumed: st.ConsumedFraction})
	}
	switch {
	case recentH > 0:
		st.RecentDamagePerHour, st.RateKnown = recentD/recentH, true
	case st.RunHours > 0:
		st.RecentDamagePerHour, st.RateKnown = st.ConsumedFraction/st.RunHours, true
	}
	left := math.Max(0, 1-st.ConsumedFraction)
	if st.RateKnown && st.RecentDamagePerHour > 0 {
		st.RemainingEquivHours = left / st.RecentDamagePerHour
	}
	st.UtilisationHoursPerDay = recentH / (window.Hours() / 24)
	// The life used a day at recent duty and utilisation; a rate not known
	// is no rate.
	perDay := 0.0
	if st.RateKnown {
		perDay = st.RecentDamagePerHour * st.UtilisationHoursPerDay
	}
	st.ForecastDate, st.ForecastReason = fleet.ForecastAt(now, left, perDay)
	return st, nil
}
