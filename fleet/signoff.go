package fleet

import (
	"fmt"
	"time"
)

// Discrepancy is an open item a work record found on an airframe or part
// (14 CFR 43.11(a)(5)): it stays open until a later record clears it, and a
// grounding one keeps the airframe from being ready.
type Discrepancy struct {
	ID           string     `json:"id"`
	WorkRecordID string     `json:"work_record_id"`
	AirframeID   *string    `json:"airframe_id"`
	PartID       *string    `json:"part_id"`
	FoundAt      time.Time  `json:"found_at"`
	Description  string     `json:"description"`
	Grounding    bool       `json:"grounding"`
	ClearedAt    *time.Time `json:"cleared_at"`
	ClearedBy    *string    `json:"cleared_by"` // the work record that cleared it
	CreatedAt    time.Time  `json:"created_at"`
}

// validateSignOff checks the sign-off members: a certificate belongs to an
// approver; a return to service statement names the approver and their
// certificate (43.9(a)(4)); a record states either that or discrepancies.
func (w *WorkRecord) validateSignOff() error {
	for _, f := range []struct {
		name string
		v    *string
		max  int
	}{{"certificate_number", w.CertificateNumber, 64}, {"certificate_kind", w.CertificateKind, 64},
		{"return_to_service", w.ReturnToService, 4000}} {
		if f.v != nil {
			if err := checkText(f.name, *f.v, 1, f.max); err != nil {
				return err
			}
		}
	}
	if (w.CertificateNumber != nil || w.CertificateKind != nil) && w.ApprovedBy == nil {
		return FieldError("approved_by", "name the approver whose certificate is given")
	}
	if w.ReturnToService != nil {
		switch {
		case w.ApprovedBy == nil:
			return FieldError("approved_by", "a return to service statement names who approved it")
		case w.CertificateNumber == nil || w.CertificateKind == nil:
			return FieldError("certificate_number", "a return to service statement carries the approver's certificate number and kind")
		case len(w.Discrepancies) > 0:
			return FieldError("return_to_service", "a record states either a return to service or discrepancies, not both")
		}
	}
	for i, d := range w.Discrepancies {
		if d == nil {
			return FieldError("discrepancies", "discrepancies[%d] is empty", i)
		}
		if err := checkText(fmt.Sprintf("discrepancies[%d].description", i), d.Description, 1, 4000); err != nil {
			return err
		}
	}
	return nil
}

// validateUpdate checks a software update record.
func (w *WorkRecord) validateUpdate() error {
	if w.Action != "update" {
		if w.SoftwareFrom != nil || w.SoftwareTo != nil {
			return FieldError("software_to", "software versions belong to a record with action update")
		}
		return nil
	}
	if w.PartID == nil {
		return FieldError("part_id", "an update names the part whose software changed")
	}
	if w.SoftwareTo == nil {
		return FieldError("software_to", "an update names the version installed")
	}
	if _, err := ParseVersion("software_to", *w.SoftwareTo); err != nil {
		return err
	}
	if w.SoftwareFrom != nil {
		if _, err := ParseVersion("software_from", *w.SoftwareFrom); err != nil {
			return err
		}
	}
	return nil
}
