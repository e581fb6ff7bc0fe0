package fleet

import (
	"time"
)

// ServiceRule is one rule of the maintenance programme: what it applies to,
// the limits any of which makes it due, and what to do.
type ServiceRule struct {
	ID                string    `json:"id"`
	Name              string    `json:"name"`
	Description       string    `json:"description"`
	AppliesTo         string    `json:"applies_to"` // "airframe" or a part kind
	PartNumber        *string   `json:"part_number"`
	Model             *string   `json:"model"`
	FlightHours       *float64  `json:"flight_hours"`
	Flights           *int      `json:"flights"`
	Days              *int      `json:"days"`
	Revolutions       *float64  `json:"revolutions"`
	BearingPct        *float64  `json:"bearing_pct"`
	Cycles            *float64  `json:"cycles"`
	SoHBelowPct       *float64  `json:"soh_below_pct"`
	IRRisePct         *float64  `json:"ir_rise_pct"`
	EfficiencyRisePct *float64  `json:"efficiency_rise_pct"`
	VibrationRisePct  *float64  `json:"vibration_rise_pct"`
	OnEvents          []string  `json:"on_events"`
	WarnAt            float64   `json:"warn_at"`
	Grounding         bool      `json:"grounding"`
	Action            string    `json:"action"`
	Enabled           bool      `json:"enabled"`
	Version           int       `json:"version"`
	CreatedAt         time.Time `json:"created_at"`
	UpdatedAt         time.Time `json:"updated_at"`
}

// Validate checks a rule: its subject, that each limit fits the subject, and
// that it has at least one limit.
func (r *ServiceRule) Validate() error {
	if err := checkText("name", r.Name, 1, 120); err != nil {
		return err
	}
	if err := checkText("description", r.Description, 0, 4000); err != nil {
		return err
	}
	part := r.AppliesTo != "airframe"
	if part && !PartKind(r.AppliesTo).Valid() {
		return FieldError("applies_to", "must be airframe or a part kind")
	}
	if r.Model != nil && part {
		return FieldError("model", "applies to airframe rules; use part_number for parts")
	}
	if r.PartNumber != nil && !part {
		return FieldError("part_number", "applies to part rules; use model for airframes")
	}
	kind := PartKind(r.AppliesTo)
	only := func(field string, ok bool, set bool, what string) error {
		if set && !ok {
			return FieldError(field, "applies only to %s", what)
		}
		return nil
	}
	checks := []error{
		only("revolutions", kind == KindMotor || kind == KindPropeller, r.Revolutions != nil, "motors and propellers"),
		only("bearing_pct", kind == KindMotor, r.BearingPct != nil, "motors"),
		only("cycles", kind == KindPack, r.Cycles != nil, "packs"),
		only("soh_below_pct", kind == KindPack, r.SoHBelowPct != nil, "packs"),
		only("ir_rise_pct", kind == KindPack, r.IRRisePct != nil, "packs"),
		only("efficiency_rise_pct", !part, r.EfficiencyRisePct != nil, "airframes"),
		only("vibration_rise_pct", !part, r.VibrationRisePct != nil, "airframes"),
	}
	for _, err := range checks {
		if err != nil {
			return err
		}
	}
	// Upper bounds are generous plausibility limits (common practice, not
	// from any standard): a limit beyond them is a typing error, and 1e308
	// would overflow the arithmetic of the due list.
	positive := []struct {
		f   string
		v   *float64
		max float64
	}{{"flight_hours", r.FlightHours, 100_000}, {"revolutions", r.Revolutions, 1e13},
		{"bearing_pct", r.BearingPct, 1000}, {"cycles", r.Cycles, 100_000}, {"ir_rise_pct", r.IRRisePct, 1000},
		{"efficiency_rise_pct", r.EfficiencyRisePct, 1000}, {"vibration_rise_pct", r.VibrationRisePct, 1000}}
	limits := 0
	for _, p := range positive {
		if p.v != nil {
			if !(*p.v > 0 && *p.v <= p.max) {
				return FieldError(p.f, "must be in (0, %g]", p.max)
			}
			limits++
		}
	}
	for _, p := range []struct {
		f   string
		v   *int
		max int
	}{{"flights", r.Flights, 1_000_000}, {"days", r.Days, 36_500}} {
		if p.v != nil {
			if *p.v <= 0 || *p.v > p.max {
				return FieldError(p.f, "must be a whole number from 1 to %d", p.max)
			}
			limits++
		}
	}
	if r.SoHBelowPct != nil {
		if !(*r.SoHBelowPct > 0 && *r.SoHBelowPct < 100) {
			return FieldError("soh_below_pct", "must be between 0 and 100")
		}
		limits++
	}
	for i, e := range r.OnEvents {
		if !oneOf(e, EventKinds) {
			return FieldError("on_events", "on_events[%d]: unknown event kind %q", i, e)
		}
	}
	if limits == 0 && len(r.OnEvents) == 0 {
		return FieldError("flight_hours", "a rule needs at least one limit or on_events")
	}
	if !(r.WarnAt > 0 && r.WarnAt < 1) {
		return FieldError("warn_at", "must be between 0 and 1 (e.g. 0.9)")
	}
	if !oneOf(r.Action, []string{"inspect", "replace", "service", "retire"}) {
		return FieldError("action", "must be inspect, replace, service or retire")
	}
	return nil
}

// WorkRecord is an entry of maintenance work (14 CFR 43.9 model). A
// replace record swaps the part at its position in the same transaction.
type WorkRecord struct {
	ID            string    `json:"id"`
	At            time.Time `json:"at"`
	AirframeID    *string   `json:"airframe_id"`
	PartID        *string   `json:"part_id"`
	RuleID        *string   `json:"rule_id"`
	Action        string    `json:"action"`
	Work          string    `json:"work"`
	PerformedBy   string    `json:"performed_by"`
	ApprovedBy    *string   `json:"approved_by"`
	Position      *string   `json:"position"`
	RemovedPartID *string   `json:"removed_part_id"`
	FittedPartID  *string   `json:"fitted_part_id"`
	Resolves      []string  `json:"resolves"`
	CorrectsID    *string   `json:"corrects_id"`
	AirframeHours *float64  `json:"airframe_hours"`
	// The approver's certificate and either a return to service statement or
	// the discrepancies found (14 CFR 43.9(a)(4), 43.11(a)(4)-(5)).
	CertificateNumber *string        `json:"certificate_number"`
	CertificateKind   *string        `json:"certificate_kind"`
	ReturnToService   *string        `json:"return_to_service"`
	Discrepancies     []*Discrepancy `json:"discrepancies"`
	Clears            []string       `json:"clears"`
	// A software update (action update): the version before and after.
	// NoticeID names the notice this work complies with, for its subject.
	NoticeID     *string   `json:"notice_id"`
	SoftwareFrom *string   `json:"software_from"`
	SoftwareTo   *string   `json:"software_to"`
	CreatedAt    time.Time `json:"created_at"`
}

// Validate checks a work record's own fields.
func (w *WorkRecord) Validate() error {
	if !oneOf(w.Action, []string{"inspect", "service", "repair", "replace", "retire", "update"}) {
		return FieldError("action", "must be inspect, service, repair, replace, retire or update")
	}
	if w.At.IsZero() {
		return FieldError("at", "is required")
	}
	if err := checkText("work", w.Work, 1, 4000); err != nil {
		return err
	}
	if err := checkText("performed_by", w.PerformedBy, 1, 120); err != nil {
		return err
	}
	if w.ApprovedBy != nil {
		if err := checkText("approved_by", *w.ApprovedBy, 1, 120); err != nil {
			return err
		}
	}
	if w.AirframeID == nil && w.PartID == nil && w.RemovedPartID == nil {
		return FieldError("airframe_id", "a work record needs an airframe or a part")
	}
	if err := w.validateSignOff(); err != nil {
		return err
	}
	if err := w.validateUpdate(); err != nil {
		return err
	}
	if w.Action == "replace" {
		if w.RemovedPartID == nil || w.FittedPartID == nil {
			return FieldError("fitted_part_id", "a replacement names the removed and the fitted part")
		}
		if *w.RemovedPartID == *w.FittedPartID {
			return FieldError("fitted_part_id", "must differ from removed_part_id")
		}
	}
	return nil
}

// Due statuses.
const (
	DueOK      = "ok"
	DueSoon    = "due_soon"
	DueOverdue = "overdue"
)

// DueItem is one rule applied to one subject.
type DueItem struct {
	// RuleID or NoticeID: a service rule's item or an open notice's.
	RuleID       *string      `json:"rule_id"`
	NoticeID     *string      `json:"notice_id"`
	RuleName     string       `json:"rule_name"`
	Action       string       `json:"action"`
	SubjectKind  string       `json:"subject_kind"` // airframe or part
	SubjectID    string       `json:"subject_id"`
	Subject      string       `json:"subject"` // tail code or serial
	AirframeID   *string      `json:"airframe_id"`
	PartNumber   *string      `json:"part_number"`
	LastDoneAt   *time.Time   `json:"last_done_at"`
	Since        *time.Time   `json:"since"`
	Usage        []LimitUsage `json:"usage"`
	Fraction     float64      `json:"fraction"` // the largest used fraction of any limit
	Status       string       `json:"status"`
	Grounding    bool         `json:"grounding"`
	Reason       string       `json:"reason"`
	ForecastDate *time.Time   `json:"forecast_date"`
	// ForecastReason says why there is no forecast date (ForecastBeyondHorizon
	// or ForecastNoUse); nil with a date, or when no limit has a rate.
	ForecastReason *string   `json:"forecast_reason"`
	ComputedAt     time.Time `json:"computed_at"`
}

// Source is the id of the rule or notice the item comes from.
func (d *DueItem) Source() string {
	if d.RuleID != nil {
		return *d.RuleID
	}
	if d.NoticeID != nil {
		return *d.NoticeID
	}
	return ""
}

// LimitUsage is the use of one limit since the rule was last done.
type LimitUsage struct {
	Limit     string  `json:"limit"` // flight_hours, flights, days, ...
	Used      float64 `json:"used"`
	Max       float64 `json:"max"`
	Remaining float64 `json:"remaining"`
	Fraction  float64 `json:"fraction"`
	// RatePerDay is the trailing use rate the forecast rests on (nil for a
	// limit with no rate, such as a trend rise).
	RatePerDay *float64   `json:"rate_per_day"`
	Forecast   *time.Time `json:"forecast_date"`
	// ForecastReason says why there is no forecast date (see DueItem).
	ForecastReason *string `json:"forecast_reason"`
}

// ReadinessItem is one blocker or warning of a readiness answer.
type ReadinessItem struct {
	Code    string `json:"code"`
	Message string `json:"message"`
	Subject string `json:"subject"`
}

// Readiness codes (stable for scripts).
const (
	ReadyOverdueGrounding = "overdue_grounding_rule"
	ReadyUnresolvedEvent  = "unresolved_event"
	ReadyEmptyPosition    = "empty_position"
	ReadyRotationMismatch = "rotation_mismatch"
	ReadyPackRetired      = "pack_retired"
	ReadyPackQuarantined  = "pack_quarantined"
	ReadyPackWrongCells   = "pack_wrong_cell_count"
	ReadyPackFlagged      = "pack_flagged"
	ReadyPackUnknown      = "pack_unknown"
	ReadyPackCount        = "pack_count"
	ReadyAirframeHeld     = "airframe_held"
	ReadyAirframeRetired  = "airframe_retired"
	ReadyDueSoon          = "due_soon"
	ReadyOverdue          = "overdue"
	// ReadyNoMotors warns that the register has no motor fitted at all:
	// usually fit history that starts later than the flights.
	ReadyNoMotors = "no_fitted_motors"
	// ReadyGroundingDiscrepancy: a work record found a grounding
	// discrepancy no later record has cleared; ReadyOpenDiscrepancy: any
	// other open one (a warning).
	ReadyGroundingDiscrepancy = "grounding_discrepancy"
	ReadyOpenDiscrepancy      = "open_discrepancy"
	// ReadyNoticeOverdue: a mandatory notice open past its compliance
	// window; ReadyAdvisoryOverdue: an advisory one (a warning);
	// ReadyNoticeDueSoon: either, near the end of its window (a warning).
	ReadyNoticeOverdue   = "mandatory_notice_overdue"
	ReadyAdvisoryOverdue = "advisory_notice_overdue"
	ReadyNoticeDueSoon   = "notice_due_soon"
)

// Readiness is whether an airframe may fly (or might have flown at a past
// moment), and why not.
type Readiness struct {
	AirframeID string          `json:"airframe_id"`
	At         time.Time       `json:"at"` // the moment judged
	Ready      bool            `json:"ready"`
	Blockers   []ReadinessItem `json:"blockers"`
	Warnings   []ReadinessItem `json:"warnings"`
	CheckedAt  time.Time       `json:"checked_at"` // when the judgement was made
}

// ETagVersion is the version an ETag names.
func (r *ServiceRule) ETagVersion() int { return r.Version }
