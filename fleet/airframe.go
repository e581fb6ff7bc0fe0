package fleet

import (
	"regexp"
	"time"
)

// Airframe statuses. Grounded is derived: a manual hold or an overdue
// grounding rule grounds an active airframe.
const (
	AirframeActive   = "active"
	AirframeGrounded = "grounded"
	AirframeRetired  = "retired"
)

// Airframe is one aircraft of the fleet.
type Airframe struct {
	ID              string     `json:"id"`
	Code            string     `json:"code"`
	Name            string     `json:"name"`
	Model           string     `json:"model"`
	Layout          string     `json:"layout"`
	CellsS          int        `json:"cells_s"`
	PacksPerFlight  int        `json:"packs_per_flight"`
	EmptyMassG      *float64   `json:"empty_mass_g"`
	MTOWG           *float64   `json:"mtow_g"`
	RotorDiameterMM *float64   `json:"rotor_diameter_mm"`
	HoldReason      *string    `json:"hold_reason"`
	RetiredAt       *time.Time `json:"retired_at"`
	Status          string     `json:"status"`
	// GroundedByRule is set when an overdue grounding rule grounds it.
	GroundedByRule bool      `json:"-"`
	Notes          string    `json:"notes"`
	Version        int       `json:"version"`
	CreatedAt      time.Time `json:"created_at"`
	UpdatedAt      time.Time `json:"updated_at"`
}

var codeRe = regexp.MustCompile(`^[A-Za-z0-9][A-Za-z0-9_.-]{0,31}$`)

// ValidCode reports whether s is a well-formed tail or job code.
func ValidCode(s string) bool { return codeRe.MatchString(s) }

// Validate checks an airframe's own fields (the layout's existence is checked
// by the store).
func (a *Airframe) Validate() error {
	if !codeRe.MatchString(a.Code) {
		return FieldError("code", "must be 1-32 letters, digits, '_', '.' or '-', starting with a letter or digit")
	}
	if err := checkText("name", a.Name, 0, 120); err != nil {
		return err
	}
	if err := checkText("model", a.Model, 0, 120); err != nil {
		return err
	}
	if a.Layout == "" {
		return FieldError("layout", "is required")
	}
	if a.CellsS < 1 || a.CellsS > 24 {
		return FieldError("cells_s", "must be 1 to 24")
	}
	if a.PacksPerFlight < 1 || a.PacksPerFlight > 8 {
		return FieldError("packs_per_flight", "must be 1 to 8")
	}
	for _, m := range []struct {
		f string
		v *float64
	}{{"empty_mass_g", a.EmptyMassG}, {"mtow_g", a.MTOWG}, {"rotor_diameter_mm", a.RotorDiameterMM}} {
		if m.v != nil && (*m.v <= 0 || *m.v > 1e6) {
			return FieldError(m.f, "must be in (0, 1000000]")
		}
	}
	if a.EmptyMassG != nil && a.MTOWG != nil && *a.MTOWG < *a.EmptyMassG {
		return FieldError("mtow_g", "must not be below empty_mass_g")
	}
	if a.HoldReason != nil {
		if err := checkText("hold_reason", *a.HoldReason, 1, 500); err != nil {
			return err
		}
	}
	return checkText("notes", a.Notes, 0, 4000)
}

// DeriveStatus sets Status from the retirement and hold fields.
func (a *Airframe) DeriveStatus() {
	switch {
	case a.RetiredAt != nil:
		a.Status = AirframeRetired
	case a.HoldReason != nil, a.GroundedByRule:
		a.Status = AirframeGrounded
	default:
		a.Status = AirframeActive
	}
}

// Fit is a part's stay at a place on an airframe: [FittedAt, RemovedAt).
type Fit struct {
	ID            string     `json:"id"`
	PartID        string     `json:"part_id"`
	AirframeID    string     `json:"airframe_id"`
	Kind          PartKind   `json:"kind"`
	Position      string     `json:"position"`
	FittedAt      time.Time  `json:"fitted_at"`
	RemovedAt     *time.Time `json:"removed_at"`
	RemovalReason *string    `json:"removal_reason"`
}

// FittedPart is a part as fitted at some time: what the fitment and
// manifest views list.
type FittedPart struct {
	Position   string    `json:"position"`
	Kind       PartKind  `json:"kind"`
	PartID     string    `json:"part_id"`
	Serial     string    `json:"serial"`
	PartNumber string    `json:"part_number"`
	Lot        string    `json:"lot"`
	FittedAt   time.Time `json:"fitted_at"`
}

// ETagVersion is the version an ETag names.
func (a *Airframe) ETagVersion() int { return a.Version }
