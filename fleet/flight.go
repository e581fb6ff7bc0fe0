package fleet

import (
	"strings"
	"time"
)

// Flight sources.
const (
	SourceManual = "manual"
	SourceLog    = "log"
)

// Flight is one take-off and landing of an airframe. Time in service is
// landing minus take-off (14 CFR 1.1: from leaving the surface to touching it
// at the next landing); each flight is one cycle.
type Flight struct {
	ID             string    `json:"id"`
	AirframeID     string    `json:"airframe_id"`
	JobID          *string   `json:"job_id"`
	Pilot          string    `json:"pilot"`
	TakeoffAt      time.Time `json:"takeoff_at"`
	LandingAt      time.Time `json:"landing_at"`
	TakeoffMassG   *float64  `json:"takeoff_mass_g"`
	SiteElevationM *float64  `json:"site_elevation_m"`
	Source         string    `json:"source"`
	LogSHA256      *string   `json:"log_sha256"`
	Notes          string    `json:"notes"`
	// Software is what the flight ran, as its log's '# software:' line (or
	// the pilot) said; a difference from the register opens an event.
	Software *string `json:"software"`
	// OverrideReason records why the flight went ahead although the airframe
	// was not ready; it is kept with the flight and its audit row.
	OverrideReason *string      `json:"override_reason"`
	Packs          []FlightPack `json:"packs"`
	// ReadinessAtTakeoff is the readiness verdict as of take-off (see
	// TakeoffVerdict); nil until judged.
	ReadinessAtTakeoff *Readiness `json:"readiness_at_takeoff"`
	// Warnings are what the take-off judgement found: its blockers (a flight
	// that happened is recorded all the same) and its warnings.
	Warnings  []ReadinessItem `json:"warnings"`
	CreatedAt time.Time       `json:"created_at"`
}

// SetVerdict keeps the take-off verdict and the warnings it gives.
func (f *Flight) SetVerdict(rd *Readiness) {
	f.ReadinessAtTakeoff, f.Warnings = rd, []ReadinessItem{}
	if rd != nil {
		f.Warnings = append(append(f.Warnings, rd.Blockers...), rd.Warnings...)
	}
}

// EventFlownNotReady is the event kind that flags a flight which took off
// while its airframe was not ready (our name). It names the blockers and is
// resolved like other events, by a work record.
const EventFlownNotReady = "flown_not_ready"

// TakeoffVerdict turns a readiness answer as of a recorded flight's take-off
// into the flight's verdict. A multirotor cannot take off with a rotor
// missing, so on a flight that happened an empty position shows a gap in
// the fit history (common when logs are back-filled from before the
// register): it is a warning, not a blocker.
func TakeoffVerdict(rd *Readiness) *Readiness {
	out := *rd
	out.Blockers, out.Warnings = []ReadinessItem{}, []ReadinessItem{}
	for _, b := range rd.Blockers {
		if b.Code == ReadyEmptyPosition {
			b.Message += " in the register at take-off (the fit history has a gap)"
			out.Warnings = append(out.Warnings, b)
		} else {
			out.Blockers = append(out.Blockers, b)
		}
	}
	out.Warnings = append(out.Warnings, rd.Warnings...)
	out.Ready = len(out.Blockers) == 0
	return &out
}

// FlownNotReadyDetail is the detail of a flight's flown_not_ready event: the
// blockers at take-off and the reason given for flying, if any.
func FlownNotReadyDetail(rd *Readiness, overrideReason *string) string {
	var b strings.Builder
	b.WriteString("took off not ready: ")
	for i, it := range rd.Blockers {
		if i > 0 {
			b.WriteString("; ")
		}
		b.WriteString(it.Message + " [" + it.Code + "]")
	}
	if overrideReason != nil {
		b.WriteString(". Reason given for flying: " + *overrideReason)
	}
	if r := []rune(b.String()); len(r) > 4000 { // an event's detail limit
		return string(r[:3996]) + " ..."
	}
	return b.String()
}

// FlightPack is a pack flown on a flight, in a numbered slot.
type FlightPack struct {
	PartID     string `json:"part_id"`
	Serial     string `json:"serial"`
	PartNumber string `json:"part_number"`
	Lot        string `json:"lot"`
	Slot       int    `json:"slot"`
}

// UnmeasuredPackCycles is what a pack's flight counts towards its
// equivalent full cycles when its charge was not measured (a manual entry,
// a log that gave no figures): one full cycle, about the most one flight
// takes from a pack (common practice: packs are flown down to a reserve and
// recharged between flights). Counting it as nothing would let a cycle
// limit fall due later than the pack's use; one cycle errs early, the safe
// side.
const UnmeasuredPackCycles = 1.0

// MaxFlightDuration bounds one flight; a longer span is almost certainly a
// typing error in a manual entry (common practice: multirotor endurance is
// well under a few hours).
const MaxFlightDuration = 12 * time.Hour

// Validate checks a flight's own fields.
func (f *Flight) Validate() error {
	if f.AirframeID == "" {
		return FieldError("airframe_id", "is required")
	}
	if err := checkText("pilot", f.Pilot, 1, 120); err != nil {
		return err
	}
	if f.TakeoffAt.IsZero() {
		return FieldError("takeoff_at", "is required")
	}
	if f.LandingAt.IsZero() {
		return FieldError("landing_at", "is required")
	}
	if !f.LandingAt.After(f.TakeoffAt) {
		return &Error{Code: EUNPROCESSABLE, Field: "landing_at", Message: "must be after takeoff_at"}
	}
	if f.LandingAt.Sub(f.TakeoffAt) > MaxFlightDuration {
		return &Error{Code: EUNPROCESSABLE, Field: "landing_at", Message: "flight longer than 12 hours"}
	}
	if f.TakeoffMassG != nil && (*f.TakeoffMassG <= 0 || *f.TakeoffMassG > 1e6) {
		return FieldError("takeoff_mass_g", "must be in (0, 1000000]")
	}
	if f.SiteElevationM != nil && (*f.SiteElevationM < -500 || *f.SiteElevationM > 9000) {
		return FieldError("site_elevation_m", "must be in [-500, 9000]")
	}
	if f.OverrideReason != nil {
		if err := checkText("override_reason", *f.OverrideReason, 1, 500); err != nil {
			return err
		}
	}
	if f.Software != nil {
		if err := checkText("software", *f.Software, 1, 200); err != nil {
			return err
		}
		if _, err := ParseSoftwareReport(*f.Software); err != nil {
			return err
		}
	}
	if len(f.Packs) > 8 {
		return FieldError("packs", "at most 8 packs")
	}
	return checkText("notes", f.Notes, 0, 4000)
}

// Hours returns the flight's time in service in hours.
func (f *Flight) Hours() float64 { return f.LandingAt.Sub(f.TakeoffAt).Hours() }
