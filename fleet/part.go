package fleet

import (
	"encoding/json"
	"time"
)

// PartKind is what a part is.
type PartKind string

const (
	KindMotor            PartKind = "motor"
	KindPropeller        PartKind = "propeller"
	KindPack             PartKind = "pack"
	KindESC              PartKind = "esc"
	KindFlightController PartKind = "flight_controller"
	KindCamera           PartKind = "camera"
	KindGimbal           PartKind = "gimbal"
	KindGNSS             PartKind = "gnss"
	KindFrame            PartKind = "frame"
	KindOther            PartKind = "other"
)

// PartKinds lists every kind.
var PartKinds = []PartKind{KindMotor, KindPropeller, KindPack, KindESC, KindFlightController,
	KindCamera, KindGimbal, KindGNSS, KindFrame, KindOther}

// Valid reports whether k is a known kind.
func (k PartKind) Valid() bool {
	for _, x := range PartKinds {
		if k == x {
			return true
		}
	}
	return false
}

// AtRotor reports whether parts of this kind sit at a rotor position of the
// layout (m1..mN) rather than at a free label.
func (k PartKind) AtRotor() bool { return k == KindMotor || k == KindPropeller || k == KindESC }

// Part statuses.
const (
	PartStock      = "stock"
	PartFitted     = "fitted"
	PartQuarantine = "quarantine"
	PartRetired    = "retired"
)

// Part is a serialised component.
type Part struct {
	ID            string          `json:"id"`
	Kind          PartKind        `json:"kind"`
	Serial        string          `json:"serial"`
	PartNumber    string          `json:"part_number"`
	Lot           string          `json:"lot"`
	Maker         string          `json:"maker"`
	AcquiredOn    *string         `json:"acquired_on"`
	MassG         *float64        `json:"mass_g"`
	Status        string          `json:"status"`
	RetiredReason *string         `json:"retired_reason"`
	Specs         json.RawMessage `json:"specs"`
	// SoftwareVersion is the version the part runs now (software kinds only);
	// it changes only by a work record with action update.
	SoftwareVersion *string   `json:"software_version"`
	Notes           string    `json:"notes"`
	Version         int       `json:"version"`
	CreatedAt       time.Time `json:"created_at"`
	UpdatedAt       time.Time `json:"updated_at"`
}

// Validate checks a part's fields and its kind-specific specs.
func (p *Part) Validate() error {
	if !p.Kind.Valid() {
		return FieldError("kind", "unknown part kind %q", p.Kind)
	}
	if err := checkText("serial", p.Serial, 1, 64); err != nil {
		return err
	}
	if err := checkText("part_number", p.PartNumber, 0, 64); err != nil {
		return err
	}
	if err := checkText("lot", p.Lot, 0, 64); err != nil {
		return err
	}
	if err := checkText("maker", p.Maker, 0, 120); err != nil {
		return err
	}
	if err := checkText("notes", p.Notes, 0, 4000); err != nil {
		return err
	}
	if p.AcquiredOn != nil {
		if _, err := time.Parse(time.DateOnly, *p.AcquiredOn); err != nil {
			return FieldError("acquired_on", "must be a date YYYY-MM-DD")
		}
	}
	if p.MassG != nil && (*p.MassG <= 0 || *p.MassG > 100000) {
		return FieldError("mass_g", "must be in (0, 100000]")
	}
	switch p.Status {
	case PartStock, PartFitted, PartQuarantine, PartRetired:
	default:
		return FieldError("status", "must be stock, fitted, quarantine or retired")
	}
	if p.Status == PartRetired && (p.RetiredReason == nil || !Visible(*p.RetiredReason)) {
		return FieldError("retired_reason", "is required when status is retired")
	}
	if p.RetiredReason != nil {
		if err := checkText("retired_reason", *p.RetiredReason, 1, 500); err != nil {
			return err
		}
	}
	if p.SoftwareVersion != nil {
		if !p.Kind.CarriesSoftware() {
			return FieldError("software_version", "only %v parts carry a software version", SoftwareKinds)
		}
		if _, err := ParseVersion("software_version", *p.SoftwareVersion); err != nil {
			return err
		}
	}
	specs, err := ValidateSpecs(p.Kind, p.Specs)
	if err != nil {
		return err
	}
	p.Specs = specs
	return nil
}

// Rotation returns the spin direction in a motor's or propeller's specs.
func (p *Part) Rotation() Rotation {
	var s struct {
		Rotation Rotation `json:"rotation"`
	}
	_ = json.Unmarshal(p.Specs, &s)
	return s.Rotation
}

// ETagVersion is the version an ETag names.
func (p *Part) ETagVersion() int { return p.Version }
