package fleet

import "time"

// Event kinds.
var EventKinds = []string{"hard_landing", "crash", "prop_strike", "overdischarge",
	"overcurrent", "pack_swelling", "overtemp", "firmware_change", "note", EventFlownNotReady}

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
	Detected   bool       `json:"detected"` // opened by the log analysis, not a person
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
