package telemetry

import (
	"errors"
	"math"
	"slices"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/selection"
)

// Defaults taken by Params fields left at zero. Each is this package's choice
// (configurable), not a published figure, unless its comment says otherwise.
const (
	DefaultHardLandingG      = 2.5   // landing peak |acc| in g that opens hard_landing (no published figure for small multirotors)
	DefaultIdleRPMFraction   = 0.2   // idle rpm threshold as a fraction of the log's peak mean rotor rpm
	DefaultIdleThrottle      = 0.1   // throttle command at or below which the rotors count as idle
	DefaultRPMBinWidth       = 1000  // rev/min per load-spectrum bin
	DefaultRestCurrentA      = 1.0   // current at or below which the pack counts as at rest
	DefaultEventSustainS     = 0.5   // how long a limit must be exceeded before an event opens
	DefaultIRWindowS         = 0.2   // time between the two samples of a resistance step estimate
	DefaultVibrationCutoffHz = 2.0   // high-pass corner separating vibration from manoeuvres and gravity, at most a tenth of the Nyquist frequency
	DefaultLandingWindowS    = 5.0   // seconds before the end of the airborne span searched for touchdown
	DefaultMaxGapS           = 1.0   // longest time between two readings that blank cells between them are interpolated across
	minIRSteps               = 5     // fewer step estimates than this give no resistance figure
	irMinStepFraction        = 0.1   // current step that counts, as a fraction of the log's current range
	irMinStepA               = 0.5   // and never smaller than this
	landingAfterS            = 2.0   // seconds after the airborne span also searched for touchdown
	severeFactor             = 1.2   // an event exceeding its limit by this factor is critical
	maxBins                  = 10000 // load spectra with more bins than this are refused as nonsense
)

// Span is a time interval in log seconds (t_s).
type Span struct {
	FromS, ToS float64
}

// Params are the facts about the flight that the log does not carry. Zero
// values mean unknown (figures that need them come out null) or, where a
// default is named, take the default.
type Params struct {
	MassKg         float64         // take-off mass
	RotorDiameterM float64         // propeller diameter
	Rotors         int             // motor positions; 0 = number of rpm columns
	CellsS         int             // cells in series; 0 = number of cell columns
	Chemistry      fleet.Chemistry // for the overdischarge floor
	RatedMah       float64         // rated capacity of the pack(s) feeding pack_a, combined
	CRating        float64         // continuous discharge rating, in C
	SiteElevationM float64         // take-off site elevation, for ISA density when baro/temp are absent
	Airborne       *Span           // take-off to landing when known; else found from the rotor level

	HardLandingG      float64 // default DefaultHardLandingG
	IdleRPM           float64 // default DefaultIdleRPMFraction x peak mean rotor rpm
	IdleThrottle      float64 // default DefaultIdleThrottle
	RPMBinWidth       float64 // default DefaultRPMBinWidth
	RestCurrentA      float64 // default DefaultRestCurrentA
	EventSustainS     float64 // default DefaultEventSustainS
	IRWindowS         float64 // default DefaultIRWindowS
	VibrationCutoffHz float64 // default: chosen from the sample rate (vibrationCutoff)
	LandingWindowS    float64 // default DefaultLandingWindowS
	MaxGapS           float64 // default DefaultMaxGapS

	// OnAirborne, when set, hears the airborne span (log seconds) as soon
	// as it is found, before the rest of the analysis runs: what the
	// caller judges by the take-off time can start then. Metrics'
	// AirborneFromS and AirborneToS are the same values.
	OnAirborne func(fromS, toS float64)
}

// validate refuses parameters that are negative or not finite (EINVALID).
func (p Params) validate() error {
	fields := []struct {
		name string
		v    float64
	}{
		{"mass_kg", p.MassKg}, {"rotor_diameter_m", p.RotorDiameterM}, {"rotors", float64(p.Rotors)},
		{"cells_s", float64(p.CellsS)}, {"rated_mah", p.RatedMah}, {"c_rating", p.CRating},
		{"hard_landing_g", p.HardLandingG}, {"idle_rpm", p.IdleRPM}, {"idle_throttle", p.IdleThrottle},
		{"rpm_bin_width", p.RPMBinWidth}, {"rest_current_a", p.RestCurrentA}, {"event_sustain_s", p.EventSustainS},
		{"ir_window_s", p.IRWindowS}, {"vibration_cutoff_hz", p.VibrationCutoffHz}, {"landing_window_s", p.LandingWindowS},
		{"max_gap_s", p.MaxGapS},
	}
	for _, f := range fields {
		if !(f.v >= 0) || math.IsInf(f.v, 0) {
			return fleet.FieldError(f.name, "%s must be a finite number, zero or more", f.name)
		}
	}
	// The standard atmosphere formulas hold from the Dead Sea to the tropopause.
	if !(p.SiteElevationM >= -500 && p.SiteElevationM <= 11000) {
		return fleet.FieldError("site_elevation_m", "site elevation must be between -500 and 11000 m")
	}
	if s := p.Airborne; s != nil && !(s.ToS >= s.FromS) {
		return fleet.FieldError("airborne", "airborne span must end at or after it starts")
	}
	return nil
}

func (p Params) withDefaults() Params {
	def := func(v *float64, d float64) {
		if !(*v > 0) {
			*v = d
		}
	}
	def(&p.HardLandingG, DefaultHardLandingG)
	def(&p.IdleThrottle, DefaultIdleThrottle)
	def(&p.RPMBinWidth, DefaultRPMBinWidth)
	def(&p.RestCurrentA, DefaultRestCurrentA)
	def(&p.EventSustainS, DefaultEventSustainS)
	def(&p.IRWindowS, DefaultIRWindowS)
	def(&p.LandingWindowS, DefaultLandingWindowS)
	def(&p.MaxGapS, DefaultMaxGapS)
	return p
}

// Metrics are the per-flight figures. Pointer fields are null when the log
// lacks the columns (or Params lack the facts) they need; Notes say why.
type Metrics struct {
	Samples int     `json:"samples"`
	LogS    float64 `json:"log_s"` // last minus first t_s
	// RunS is the time with the rotors (mean rpm, else throttle) above idle.
	RunS *float64 `json:"run_s"`
	// The airborne span is Params.Airborne, else first to last sample at or
	// above LiftFraction of the run's median rotor level (a log holding two
	// flights gives one span across both).
	AirborneFromS *float64 `json:"airborne_from_s"`
	AirborneToS   *float64 `json:"airborne_to_s"`

	ChargeMah float64 `json:"charge_mah"`
	EnergyWh  float64 `json:"energy_wh"`
	// MeanPowerW is the mean electrical power while airborne, as a
	// technician means it; over the run span (rotors above idle) when there
	// is no airborne span, over the whole log when there is neither (no rpm
	// or throttle column). MeanPowerSource says which: "airborne", "run" or
	// "log". LogMeanPowerW is the mean over the whole log, minutes at rest on
	// the ground included.
	MeanPowerW      float64 `json:"mean_power_w"`
	MeanPowerSource string  `json:"mean_power_source"`
	LogMeanPowerW   float64 `json:"log_mean_power_w"`
	PeakPowerW      float64 `json:"peak_power_w"`
	PeakA           float64 `json:"peak_a"`
	MinPackV        float64 `json:"min_pack_v"`
	// MinCellV is from cell columns, else pack_v / cells_s (MinCellSource says which).
	MinCellV      *float64 `json:"min_cell_v"`
	MinCellSource string   `json:"min_cell_source,omitempty"`
	// MinCellsV is the minimum reading of each cell column (cell_1_v
	// first), null for a column blank in every row; empty without cell
	// columns.
	MinCellsV []*float64 `json:"min_cells_v"`
	// RestVStart is the median pack voltage at or below RestCurrentA before the
	// first load; RestVEnd the median over the later half of the final rest.
	RestVStart *float64 `json:"rest_v_start"`
	RestVEnd   *float64 `json:"rest_v_end"`
	// IRMohm is the pack DC resistance, the median of step estimates -dV/dI.
	IRMohm *float64 `json:"ir_mohm"`
	// IRCellMohm is IRMohm / cells_s, and IRCellsMohm is per cell column. With
	// packs in parallel both are bus figures: the cell columns belong to one
	// pack but the current is the bus's, so they read low by that pack's share.
	IRCellMohm  *float64   `json:"ir_cell_mohm"`
	IRCellsMohm []*float64 `json:"ir_cells_mohm"`
	IRSteps     int        `json:"ir_steps"`

	HoverRPM *float64 `json:"hover_rpm"` // mean rotor rpm over the airborne span
	// ThrustK is k in T = k rpm^2 (N per (rev/min)^2), from mean thrust = weight aloft.
	ThrustK        *float64 `json:"thrust_k"`
	AirbornePowerW *float64 `json:"airborne_power_w"`
	IdealPowerW    *float64 `json:"ideal_power_w"` // all rotors, momentum theory, T = m g / N each
	// EfficiencyIndex = AirbornePowerW / IdealPowerW: at least 1, rising means lost efficiency.
	EfficiencyIndex  *float64 `json:"efficiency_index"`
	AirDensity       float64  `json:"air_density"`
	AirDensitySource string   `json:"air_density_source"` // "baro_temp" or "isa_site_elevation"

	MaxAltM   *float64   `json:"max_alt_m"`
	Vibration *Vibration `json:"vibration_rms"`
	LandingG  *float64   `json:"landing_g"`
	LandingAt *float64   `json:"landing_at_s"`
	DistanceM *float64   `json:"distance_m"`
	MaxRangeM *float64   `json:"max_range_m"`

	Motors []MotorRun `json:"motors"`
	Events []Event    `json:"events"`
	Notes  []string   `json:"notes"`
	// Warnings name the figures that rest on a column blank in more than
	// half the log's samples.
	Warnings []Warning `json:"warnings"`
}

// Vibration is the RMS of high-passed body acceleration (m/s^2) over the
// airborne span, per axis present, with the dominant vibration frequency.
// The high-pass corner is chosen from the sample rate; the rotor's own
// vibration is resolvable only when the rotor frequency is below half the
// sample rate, and otherwise the figures are broadband (Caveat says so).
type Vibration struct {
	X *float64 `json:"x"`
	Y *float64 `json:"y"`
	Z *float64 `json:"z"`
	// PeakHz is the strongest spectral line of the axes above the cut-off;
	// null when the rotor vibration is not resolvable (the line would be an
	// alias).
	PeakHz  *float64 `json:"peak_hz"`
	RotorHz *float64 `json:"rotor_hz"` // hover_rpm / 60
	// SampleHz is the mean sample rate over the span; CutoffHz the
	// high-pass corner: Params.VibrationCutoffHz, else
	// DefaultVibrationCutoffHz but at most a tenth of SampleHz / 2, so a slow
	// log keeps nine tenths of its band.
	SampleHz float64 `json:"sample_hz"`
	CutoffHz float64 `json:"cutoff_hz"`
	// RotorResolvable is whether RotorHz is below SampleHz / 2; null when no
	// rpm gives the rotor frequency.
	RotorResolvable *bool  `json:"rotor_resolvable"`
	Caveat          string `json:"caveat,omitempty"`
}

// Event is a condition detected in the log that ingest records.
type Event struct {
	Kind     string  `json:"kind"` // hard_landing, overdischarge, overcurrent
	AtS      float64 `json:"at_s"`
	Severity string  `json:"severity"` // warning, or critical beyond 1.2 x the limit
	Value    float64 `json:"value"`
	Limit    float64 `json:"limit"`
	Detail   string  `json:"detail"`
}

// analysis carries what several figures share.
type analysis struct {
	l              *Log
	p              Params
	m              *Metrics
	lo, hi         int  // airborne span sample indices, lo = -1 if unknown
	runLo, runHi   int  // first and last sample above idle, runLo = -1 if none
	cutoffExplicit bool // Params.VibrationCutoffHz was given
	meanRPM        []float64
	idleRPM        float64
	// The optional columns with blank cells within MaxGapS of readings
	// interpolated (see bridge); the log's own series where none is blank.
	rpm        [][]float64 // per l.RPM
	throttle   []float64
	cells      [][]float64 // per l.Cells, nil where the column is absent
	baro, temp []float64
	pw         []float64 // pack power, V x A, at each sample (electrical)
}

// Analyze computes the figures of one flight from a parsed log. It is pure.
func Analyze(l *Log, p Params) (*Metrics, error) {
	if l == nil || l.Rows == 0 || len(l.T) != l.Rows {
		return nil, errors.New("telemetry: Analyze needs a parsed log with samples")
	}
	if err := p.validate(); err != nil {
		return nil, err
	}
	a := &analysis{l: l, p: p.withDefaults(), m: &Metrics{Samples: l.Rows}, lo: -1, runLo: -1,
		cutoffExplicit: p.VibrationCutoffHz > 0}
	m := a.m
	m.LogS = l.T[l.Rows-1] - l.T[0]
	a.bridgeAll()
	a.activity()
	if m.AirborneFromS != nil && m.AirborneToS != nil && p.OnAirborne != nil {
		p.OnAirborne(*m.AirborneFromS, *m.AirborneToS)
	}
	a.electrical()
	a.meanPower()
	a.resistance()
	a.air()
	a.rotors()
	a.efficiency()
	a.altitude()
	a.vibration()
	a.landing()
	a.distance()
	a.events()
	a.coverage()
	if err := a.finite(); err != nil {
		return nil, err
	}
	if m.Motors == nil {
		m.Motors = []MotorRun{}
	}
	if m.Events == nil {
		m.Events = []Event{}
	}
	if m.Notes == nil {
		m.Notes = []string{}
	}
	if m.MinCellsV == nil {
		m.MinCellsV = []*float64{}
	}
	if m.Warnings == nil {
		m.Warnings = []Warning{}
	}
	return m, nil
}

func (a *analysis) note(s string) { a.m.Notes = append(a.m.Notes, s) }

// activity finds the run time and the airborne span from rpm, else throttle.
func (a *analysis) activity() {
	l, m := a.l, a.m
	var level []float64
	var idle float64
	switch {
	case len(l.RPM) > 0:
		a.meanRPM = rotorMean(a.rpm, l.Rows)
		peak := 0.0
		for _, v := range a.meanRPM {
			if v > peak {
				peak = v
			}
		}
		a.idleRPM = a.p.IdleRPM
		if !(a.idleRPM > 0) {
			a.idleRPM = DefaultIdleRPMFraction * peak
		}
		level, idle = a.meanRPM, a.idleRPM
	case l.Throttle != nil:
		level, idle = a.throttle, a.p.IdleThrottle
	default:
		a.note("no rpm or throttle column: run time, airborne span and rotor figures are not computed")
	}
	if level != nil {
		// The run time is the integral of on (1 above idle, 0 at or below,
		// NaN without a reading, whose time is left out), taken as integral
		// takes it, without storing on.
		first, last := -1, -1
		run, prev := 0.0, math.NaN()
		for i, v := range level {
			on := 0.0
			switch {
			case v > idle:
				on = 1
				if first < 0 {
					first = i
				}
				last = i
			case v != v:
				on = v // no reading: the time is left out
			}
			if i > 0 && on == on && prev == prev {
				run += (l.T[i] - l.T[i-1]) * (prev + on)
			}
			prev = on
		}
		m.RunS = ptr(run / 2)
		a.runLo, a.runHi = first, last
		if first >= 0 && a.p.Airborne == nil {
			a.lo, a.hi = liftSpan(level, first, last)
		}
	}
	if s := a.p.Airborne; s != nil {
		a.lo, a.hi = -1, -1
		for i, t := range l.T {
			if t >= s.FromS && t <= s.ToS {
				if a.lo < 0 {
					a.lo = i
				}
				a.hi = i
			}
		}
	}
	if a.lo >= 0 {
		m.AirborneFromS, m.AirborneToS = ptr(l.T[a.lo]), ptr(l.T[a.hi])
	} else if level != nil || a.p.Airborne != nil {
		a.note("no sample above idle (or inside the given airborne span): airborne figures are not computed")
	}
}

// LiftFraction is the share of the run's median rotor level (rpm, else
// throttle) above which the aircraft is taken to be airborne when the flight
// does not state its take-off and landing. Thrust goes as rpm^2, so below
// about hover rpm the rotors cannot lift the aircraft, while ground idle sits
// well under it (common practice: idle at a fifth to two fifths of hover rpm).
const LiftFraction = 0.8

// liftSpan narrows the run span [first, last] (both readings) to the
// samples from the first to the last at or above LiftFraction of the run's
// median level, so that idling on the ground before take-off and after
// landing is not airborne. Samples without a reading are passed over.
func liftSpan(level []float64, first, last int) (lo, hi int) {
	run := slices.DeleteFunc(slices.Clone(level[first:last+1]), func(v float64) bool { return v != v })
	selection.Nth(run, len(run)/2) // the sort's middle value, without the sort
	threshold := LiftFraction * run[len(run)/2]
	lo, hi = first, last
	for lo < last && !(level[lo] >= threshold) {
		lo++
	}
	for hi > lo && !(level[hi] >= threshold) {
		hi--
	}
	return lo, hi
}

// efficiency compares airborne electrical power with momentum-theory ideal power.
func (a *analysis) efficiency() {
	l, m, p := a.l, a.m, a.p
	if a.lo < 0 {
		return
	}
	m.AirbornePowerW = ptr(meanOver(l.T, a.pw, a.lo, a.hi))
	n := p.Rotors
	if n == 0 {
		n = len(l.RPM)
	}
	switch {
	case !(p.MassKg > 0):
		a.note("take-off mass unknown: efficiency index is not computed")
	case !(p.RotorDiameterM > 0):
		a.note("rotor diameter unknown: efficiency index is not computed")
	case n <= 0:
		a.note("number of rotors unknown: efficiency index is not computed")
	default:
		ideal := float64(n) * IdealHoverPower(p.MassKg*G0/float64(n), m.AirDensity, p.RotorDiameterM)
		m.IdealPowerW = ptr(ideal)
		m.EfficiencyIndex = ptr(*m.AirbornePowerW / ideal)
	}
}

func (a *analysis) distance() {
	l := a.l
	if l.Lat == nil {
		return
	}
	d, r, err := track(fixes(l.Lat, l.Lon))
	if err != nil {
		a.note("track has a segment the geodesic solver cannot measure: distance is not computed")
		return
	}
	a.m.DistanceM, a.m.MaxRangeM = ptr(d), ptr(r)
}

// finite nulls any optional figure that came out NaN or infinite (a division
// by a vanishing mean on a degenerate log) rather than report it; a required
// figure that is not finite is an error, since bounded inputs cannot cause it.
func (a *analysis) finite() error {
	m := a.m
	opt := []**float64{&m.MinCellV, &m.RunS, &m.AirborneFromS, &m.AirborneToS, &m.RestVStart, &m.RestVEnd,
		&m.IRMohm, &m.IRCellMohm, &m.HoverRPM, &m.ThrustK, &m.AirbornePowerW, &m.IdealPowerW,
		&m.EfficiencyIndex, &m.MaxAltM, &m.LandingG, &m.LandingAt, &m.DistanceM, &m.MaxRangeM}
	for i := range m.IRCellsMohm {
		opt = append(opt, &m.IRCellsMohm[i])
	}
	for i := range m.MinCellsV {
		opt = append(opt, &m.MinCellsV[i])
	}
	if v := m.Vibration; v != nil {
		opt = append(opt, &v.X, &v.Y, &v.Z, &v.PeakHz, &v.RotorHz)
	}
	for i := range m.Motors {
		mr := &m.Motors[i]
		opt = append(opt, &mr.MeanRPM, &mr.ThrustMeanN)
		for j := range mr.Bins {
			opt = append(opt, &mr.Bins[j].MeanThrustN)
		}
	}
	dropped := false
	if v := m.Vibration; v != nil && !(isFinite(v.SampleHz) && isFinite(v.CutoffHz)) {
		m.Vibration, dropped = nil, true
	}
	for _, p := range opt {
		if *p != nil && !isFinite(**p) {
			*p, dropped = nil, true
		}
	}
	if dropped {
		a.note("some figures came out non-finite on this degenerate log and are left null")
	}
	req := []float64{m.LogS, m.ChargeMah, m.EnergyWh, m.MeanPowerW, m.LogMeanPowerW, m.PeakPowerW, m.PeakA, m.MinPackV, m.AirDensity}
	for _, mr := range m.Motors {
		req = append(req, mr.Revolutions, mr.RunS)
		for _, b := range mr.Bins {
			req = append(req, b.Seconds, b.Revolutions)
		}
	}
	for _, e := range m.Events {
		req = append(req, e.AtS, e.Value, e.Limit)
	}
	for _, v := range req {
		if !isFinite(v) {
			return errors.New("telemetry: a figure came out non-finite; the parameters are out of range")
		}
	}
	return nil
}

func isFinite(v float64) bool { return !math.IsNaN(v) && !math.IsInf(v, 0) }
