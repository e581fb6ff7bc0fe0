package fleet

import (
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
	// OverrideReason records why the flight went ahead although the airframe
	// was not ready; it is kept with the flight and its audit row.
	OverrideReason *string      `json:"override_reason"`
	Packs          []FlightPack `json:"packs"`
	CreatedAt      time.Time    `json:"created_at"`
}

// FlightPack is a pack flown on a flight, in a numbered slot.
type FlightPack struct {
	PartID     string `json:"part_id"`
	Serial     string `json:"serial"`
	PartNumber string `json:"part_number"`
	Lot        string `json:"lot"`
	Slot       int    `json:"slot"`
}

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
	if len(f.Packs) > 8 {
		return FieldError("packs", "at most 8 packs")
	}
	return checkText("notes", f.Notes, 0, 4000)
}

// Hours returns the flight's time in service in hours.
func (f *Flight) Hours() float64 { return f.LandingAt.Sub(f.TakeoffAt).Hours() }
