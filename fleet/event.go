package fleet

import (
	"fmt"
	"time"
)

// Event kinds.
var EventKinds = []string{"hard_landing", "crash", "prop_strike", "overdischarge",
	"overcurrent", "pack_swelling", "overtemp", "firmware_change", "note", EventFlownNotReady,
	"software_mismatch"}

// GroundingEventKinds are the events after which the airframe (or pack)
// must not fly until a technician's work record resolves them. The kind
// flown_not_ready records a flight made while not ready.
var GroundingEventKinds = []string{"hard_landing", "crash", "prop_strike", "flown_not_ready", "pack_swelling"}

// Grounds reports whether an event of this kind needs a technician's work
// record to be resolved.
func Grounds(kind string) bool { return oneOf(kind, GroundingEventKinds) }

// CheckEventEdit applies who may change an event: pilots only events they
// recorded themselves (not ones the log analysis detected); nobody resolves
// a grounding event by editing it — a technician's work record does. role
// is empty for the command line (the operator at the console).
func CheckEventEdit(e *Event, role Role, keyID string, resolving bool) error {
	if role != "" && !role.AtLeast(RoleTechnician) && (e.Detected || e.CreatedBy == nil || *e.CreatedBy != keyID) {
		return Errorf(EFORBIDDEN, "pilots edit only events they recorded; ask a technician")
	}
	if resolving && Grounds(e.Kind) {
		if role != "" && !role.AtLeast(RoleTechnician) {
			return &Error{Code: EFORBIDDEN, Field: "resolved",
				Message: fmt.Sprintf("a %s grounds the airframe: a technician resolves it with a work record; pilots may add notes", e.Kind)}
		}
		return &Error{Code: EUNPROCESSABLE, Field: "resolved",
			Message: fmt.Sprintf("a %s grounds the airframe: resolve it with a work record (POST /v1/work-records with resolves)", e.Kind)}
	}
	return nil
}

// Event severities.
var Severities = []string{"info", "warning", "critical"}

// Event is something that happened to an airframe or part.
type Event struct {
	ID         string     `json:"id"`
	At         time.Time  `json:"at"`
	Kind       string     `json:"kind"`
	Severity   string     `json:"severity"`
	AirframeID *string    `json:"airframe_id"`
	PartID     *string    `json:"part_id"`
	FlightID   *string    `json:"flight_id"`
	Detail     string     `json:"detail"`
	ResolvedAt *time.Time `json:"resolved_at"`
	Resolution *string    `json:"resolution"`
	ResolvedBy *string    `json:"resolved_by"`
	Detected   bool       `json:"detected"`   // opened by the log analysis, not a person
	CreatedBy  *string    `json:"created_by"` // the key that recorded it (null from the command line)
	Version    int        `json:"version"`
	CreatedAt  time.Time  `json:"created_at"`
}

func oneOf(s string, set []string) bool {
	for _, x := range set {
		if s == x {
			return true
		}
	}
	return false
}

// Validate checks an event.
func (e *Event) Validate() error {
	if !oneOf(e.Kind, EventKinds) {
		return FieldError("kind", "unknown event kind %q", e.Kind)
	}
	if !oneOf(e.Severity, Severities) {
		return FieldError("severity", "must be info, warning or critical")
	}
	if e.At.IsZero() {
		return FieldError("at", "is required")
	}
	if e.AirframeID == nil && e.PartID == nil && e.FlightID == nil {
		return FieldError("airframe_id", "an event needs an airframe, part or flight")
	}
	return checkText("detail", e.Detail, 0, 4000)
}

// DefaultSeverity is the severity an event kind gets when none is given.
func DefaultSeverity(kind string) string {
	switch kind {
	case "crash", "prop_strike", "pack_swelling", "hard_landing", EventFlownNotReady:
		return "critical"
	case "note", "firmware_change":
		return "info"
	}
	return "warning"
}

// ETagVersion is the version an ETag names.
func (e *Event) ETagVersion() int { return e.Version }
