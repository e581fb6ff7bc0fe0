package sim

import (
	"errors"
	"fmt"
	"math"
	"time"
)

// Columns selects which log columns Generate writes.
type Columns int

const (
	// ColumnsFull writes every column, rpm per motor.
	ColumnsFull Columns = iota
	// ColumnsThrottle writes every column but a mean `throttle` instead of rpm.
	ColumnsThrottle
	// ColumnsRequired writes only t_s, pack_v and pack_a.
	ColumnsRequired
)

// Noise holds the standard deviations of white sensor noise. The zero value
// is a noise-free log.
type Noise struct {
	PackV   float64 // V
	PackA   float64 // A
	CellV   float64 // V
	RPM     float64 // rev/min
	BaroPa  float64 // Pa
	TempC   float64 // deg C
	AccMS2  float64 // m/s^2 per axis
	LatLonM float64 // m, horizontal position
}

// DefaultNoise is a plausible small-logger noise level (common practice
// orders of magnitude, not a particular sensor).
func DefaultNoise() Noise {
	return Noise{PackV: 0.01, PackA: 0.1, CellV: 0.002, RPM: 10, BaroPa: 2, TempC: 0.05, AccMS2: 0.1, LatLonM: 0}
}

// Sampling describes the logger's irregular sample clock.
type Sampling struct {
	// JitterFrac is the uniform timing jitter as a fraction of the nominal
	// period (kept below 0.45 so times stay increasing).
	JitterFrac float64
	// DropoutProb is the chance, per sample, that a gap starts.
	DropoutProb float64
	// MaxDropoutS is the longest gap.
	MaxDropoutS float64
}

// DefaultSampling: 20 % jitter, a gap of up to 0.5 s every ~500 samples.
func DefaultSampling() Sampling {
	return Sampling{JitterFrac: 0.2, DropoutProb: 0.002, MaxDropoutS: 0.5}
}

// FlightSpec describes one flight to simulate. DefaultSpec fills every field;
// zero values of the optional profile fields take the defaults noted.
type FlightSpec struct {
	Seed     uint64
	Start    time.Time // wall time of t_s = 0
	Airframe string    // code written to the metadata
	// Packs in parallel on one bus; the cell columns are those of Packs[0].
	Packs []PackState

	MassKg         float64 // take-off mass
	Rotors         int     // even, 4..16; positions m1..mN
	RotorDiameterM float64
	// ThrustCoeff C_T in T = C_T rho n^2 D^4 (n in rev/s); 0 = 0.1.
	ThrustCoeff float64
	// FigureOfMerit and MotorEfficiency turn ideal induced power into
	// electrical power; 0 = 0.55 and 0.8.
	FigureOfMerit   float64
	MotorEfficiency float64
	// AvionicsW is the constant flight controller, radio and camera load; 0 = 10 W.
	AvionicsW float64

	DurationS float64 // whole log, rest to rest
	SampleHz  float64 // nominal; 0 = 50
	Sampling  Sampling

	SiteElevationM float64
	TempC          float64 // outside air temperature at the site
	Lat, Lon       float64 // take-off point, WGS 84 degrees

	CruiseHeightM float64 // above take-off; 0 = 60 m
	CruiseSpeedMS float64 // ground speed on the survey legs; 0 = 8 m/s
	LegSpacingM   float64 // distance between survey legs; 0 = 40 m
	LandingG      float64 // peak |acc| at touchdown, in g; 0 = 1.4

	// MotorBias is each motor's thrust-share offset (e.g. +0.1 = 10 % more
	// than the mean, from an off-centre mass); the mean is removed. nil = 0.
	MotorBias []float64
	// ControlActivity is the amplitude of zero-sum attitude-control thrust
	// variations between motors (fraction of mean thrust); 0 = none.
	ControlActivity float64
	// VibrationLevel is the rotor-frequency acceleration amplitude at hover, m/s^2.
	VibrationLevel float64
	// From VibrationStepAtS on (if > 0) the vibration is VibrationStepFactor
	// times stronger, as after a propeller strike chips a blade.
	VibrationStepAtS    float64
	VibrationStepFactor float64
	// HoverThrottle is the throttle at hover for the throttle column; 0 = 0.5.
	HoverThrottle float64

	Columns Columns
	Noise   Noise
}

// DefaultSpec is a 1.5 kg quad with 10-inch rotors on one 4S 8000 mAh LiPo,
// 15 minutes at 50 Hz with default noise and sampling.
func DefaultSpec(seed uint64) FlightSpec {
	return FlightSpec{
		Seed:     seed,
		Start:    time.Date(2026, 5, 4, 9, 30, 0, 0, time.UTC),
		Airframe: "SIM-01",
		Packs: []PackState{{Serial: "SIM-P1", Chemistry: LiPo, CellsS: 4, CellsP: 1, RatedMah: 8000,
			BaselineIRmOhm: 16, FadeLaw: FadeSqrt, FadeCoeff: 0.008, IRGrowth: 0.001, StartSoC: 1,
			CellSpread: 0.01}},
		MassKg: 1.5, Rotors: 4, RotorDiameterM: 0.254,
		ThrustCoeff: 0.1, FigureOfMerit: 0.55, MotorEfficiency: 0.8, AvionicsW: 10,
		DurationS: 900, SampleHz: 50, Sampling: DefaultSampling(),
		SiteElevationM: 120, TempC: 15, Lat: 47.1, Lon: 8.4,
		CruiseHeightM: 60, CruiseSpeedMS: 8, LegSpacingM: 40, LandingG: 1.4,
		ControlActivity: 0.03, VibrationLevel: 0.8, HoverThrottle: 0.5,
		Noise: DefaultNoise(),
	}
}

// Fixed parts of the timeline, seconds (common practice for a ground arm,
// spin-up and a disarm after touchdown).
const (
	restBeforeS = 6.0
	idleS       = 2.0
	spinUpS     = 1.5
	rampDownS   = 1.0
	idleAfterS  = 1.5
	spinDownS   = 0.5
	restAfterS  = 6.0
	idleFrac    = 0.3  // idle rpm as a fraction of hover rpm
	impactS     = 0.08 // touchdown load pulse length
	maxPacks    = 4    // packs in parallel on one bus
)

func (s *FlightSpec) applyDefaults() {
	def := func(v *float64, d float64) {
		if *v == 0 {
			*v = d
		}
	}
	def(&s.ThrustCoeff, 0.1)
	def(&s.FigureOfMerit, 0.55)
	def(&s.MotorEfficiency, 0.8)
	def(&s.AvionicsW, 10)
	def(&s.SampleHz, 50)
	def(&s.CruiseHeightM, 60)
	def(&s.CruiseSpeedMS, 8)
	def(&s.LegSpacingM, 40)
	def(&s.LandingG, 1.4)
	def(&s.HoverThrottle, 0.5)
}

func finite(v ...float64) bool {
	for _, x := range v {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return false
		}
	}
	return true
}

func (s *FlightSpec) validate() error {
	if !finite(s.MassKg, s.RotorDiameterM, s.ThrustCoeff, s.FigureOfMerit, s.MotorEfficiency, s.AvionicsW, s.LegSpacingM, s.DurationS, s.SampleHz, s.SiteElevationM, s.TempC, s.Lat, s.Lon,
		s.CruiseHeightM, s.CruiseSpeedMS, s.LandingG, s.VibrationLevel, s.ControlActivity,
		s.VibrationStepAtS, s.VibrationStepFactor) {
		return errors.New("sim: spec has a NaN or infinite value")
	}
	switch {
	case len(s.Packs) == 0 || len(s.Packs) > maxPacks:
		return fmt.Errorf("sim: packs: 1 to %d packs", maxPacks)
	case !(s.MassKg > 0):
		return errors.New("sim: mass_kg must be > 0")
	case s.Rotors < 4 || s.Rotors > 16 || s.Rotors%2 != 0:
		return errors.New("sim: rotors must be even, 4..16")
	case !(s.RotorDiameterM > 0):
		return errors.New("sim: rotor_diameter_m must be > 0")
	case !(s.ThrustCoeff > 0 && s.ThrustCoeff <= 1) || !(s.FigureOfMerit > 0 && s.FigureOfMerit <= 1) ||
		!(s.MotorEfficiency > 0 && s.MotorEfficiency <= 1) || !(s.HoverThrottle > 0 && s.HoverThrottle <= 1):
		return errors.New("sim: thrust_coeff, figure_of_merit, motor_efficiency and hover_throttle must be in (0, 1]")
	case !(s.AvionicsW >= 0) || !(s.LegSpacingM > 0):
		return errors.New("sim: avionics_w must be >= 0 and leg_spacing_m > 0")
	case s.SampleHz < 1 || s.SampleHz > 1000:
		return errors.New("sim: sample_hz must be 1..1000")
	case s.Sampling.JitterFrac < 0 || s.Sampling.JitterFrac > 0.45:
		return errors.New("sim: sampling.jitter_frac must be 0..0.45")
	case s.Sampling.DropoutProb < 0 || s.Sampling.DropoutProb > 0.5 || s.Sampling.MaxDropoutS < 0:
		return errors.New("sim: sampling dropout settings out of range")
	case s.SiteElevationM < -400 || s.SiteElevationM > 6000:
		return errors.New("sim: site_elevation_m must be -400..6000")
	case s.TempC < -40 || s.TempC > 50:
		return errors.New("sim: temp_c must be -40..50")
	case s.Lat < -85 || s.Lat > 85 || s.Lon < -180 || s.Lon > 180:
		return errors.New("sim: lat/lon out of range")
	case s.CruiseHeightM < 20 || s.CruiseHeightM > 500:
		return errors.New("sim: cruise_height_m must be 20..500")
	case s.CruiseSpeedMS < 0.5 || s.CruiseSpeedMS > 30:
		return errors.New("sim: cruise_speed_ms must be 0.5..30")
	case s.LandingG < 1.05 || s.LandingG > 20:
		return errors.New("sim: landing_g must be 1.05..20")
	case s.ControlActivity < 0 || s.ControlActivity > 0.1 || s.VibrationLevel < 0:
		return errors.New("sim: control_activity must be 0..0.1, vibration_level >= 0")
	case s.VibrationStepAtS < 0 || (s.VibrationStepAtS > 0 && !(s.VibrationStepFactor > 0)):
		return errors.New("sim: a vibration step needs a time >= 0 and a factor > 0")
	case s.MotorBias != nil && len(s.MotorBias) != s.Rotors:
		return fmt.Errorf("sim: motor_bias has %d values for %d rotors", len(s.MotorBias), s.Rotors)
	case s.Columns < ColumnsFull || s.Columns > ColumnsRequired:
		return errors.New("sim: unknown columns option")
	}
	cells := s.Packs[0].CellsS
	for i, p := range s.Packs {
		if err := p.validate(i); err != nil {
			return fmt.Errorf("sim: %w", err)
		}
		if p.CellsS != cells {
			return errors.New("sim: packs in parallel must have the same cells_s")
		}
	}
	// Every motor keeps a positive share: |bias - mean| < 0.5 and the control
	// activity (peak about 2.5 ControlActivity) stays below a quarter.
	var mean float64
	for _, b := range s.MotorBias {
		mean += b / float64(len(s.MotorBias))
	}
	for _, b := range s.MotorBias {
		if !finite(b) || math.Abs(b-mean) >= 0.5 {
			return errors.New("sim: motor_bias values must lie within 0.5 of their mean")
		}
	}
	return nil
}

// Position is one rotor place of a built-in X layout.
type Position struct {
	Label    string  // m1..mN
	Rotation string  // "cw" or "ccw"
	ArmDeg   float64 // clockwise from forward
}

// Layout returns the X layout for n rotors: m1 at 180/n degrees right of
// forward, numbered clockwise, rotations alternating from ccw so that every
// neighbour pair turns opposite ways (common practice for flat X layouts).
// This matches the built-in layouts of migrations/001_register.sql.
func Layout(n int) []Position {
	out := make([]Position, n)
	for i := range n {
		rot := "ccw"
		if i%2 == 1 {
			rot = "cw"
		}
		out[i] = Position{Label: fmt.Sprintf("m%d", i+1), Rotation: rot,
			ArmDeg: 360/float64(n)*float64(i) + 180/float64(n)}
	}
	return out
}

// LayoutName is the built-in layout name for n rotors.
func LayoutName(n int) string {
	switch n {
	case 4:
		return "quad-x"
	case 6:
		return "hex-x"
	case 8:
		return "octo-x"
	}
	return fmt.Sprintf("x%d", n)
}
