package fleet

import (
	"strconv"
	"strings"
	"time"
)

// Notice categories: a mandatory notice past its window grounds what it
// applies to; an advisory one warns.
const (
	NoticeMandatory = "mandatory"
	NoticeAdvisory  = "advisory"
)

// Compliance statuses of a notice on one subject.
const (
	ComplianceOpen          = "open"
	ComplianceComplied      = "complied"
	ComplianceNotApplicable = "not_applicable"
)

// Notice is a maker's or authority's notice (service bulletin, airworthiness
// directive and the like): what it requires, what it applies to, and the
// window within which it must be complied with.
type Notice struct {
	ID            string              `json:"id"`
	Reference     string              `json:"reference"`
	Title         string              `json:"title"`
	IssuedOn      string              `json:"issued_on"` // YYYY-MM-DD
	Revision      string              `json:"revision"`
	Category      string              `json:"category"` // mandatory or advisory
	RequiredWork  string              `json:"required_work"`
	Applicability NoticeApplicability `json:"applicability"`
	Window        NoticeWindow        `json:"window"`
	WithdrawnAt   *time.Time          `json:"withdrawn_at"`
	Version       int                 `json:"version"`
	CreatedAt     time.Time           `json:"created_at"`
	UpdatedAt     time.Time           `json:"updated_at"`
}

// NoticeApplicability says what a notice applies to; every criterion given
// must hold. With PartKind the subjects are parts of that kind (optionally
// only these part numbers); without it, airframes. AirframeModels limits
// airframe subjects by model, and part subjects to parts fitted on an
// airframe of those models. A software range on the subject's own kind is
// checked against its version; a range on another kind holds while the
// airframe carries a part of that kind in range.
type NoticeApplicability struct {
	PartKind       *PartKind       `json:"part_kind"`
	PartNumbers    []string        `json:"part_numbers"`
	AirframeModels []string        `json:"airframe_models"`
	Software       []SoftwareRange `json:"software"`
}

// SoftwareRange is the versions of a part kind a notice applies to:
// from Min (inclusive, none: any) to below Below (exclusive, none: any).
type SoftwareRange struct {
	PartKind PartKind `json:"part_kind"`
	Min      *string  `json:"min"`
	Below    *string  `json:"below"`
}

// Window origins: the notice's issue, or the moment the subject first fell
// under it.
const (
	WindowFromIssue      = "issue"
	WindowFromApplicable = "applicable"
)

// NoticeWindow is when compliance is due: by a date, or within flight
// hours, flights or days (whichever comes first) from the notice's issue or
// from the subject first falling under it. A recurring notice is due again
// within the same interval after each compliance.
type NoticeWindow struct {
	DueOn       *string  `json:"due_on"` // YYYY-MM-DD: due by the end of that day (UTC)
	FlightHours *float64 `json:"flight_hours"`
	Flights     *int     `json:"flights"`
	Days        *int     `json:"days"`
	From        string   `json:"from"` // issue or applicable
	Recurring   bool     `json:"recurring"`
	WarnAt      float64  `json:"warn_at"` // fraction of the window at which it is due soon
}

// Validate checks a notice and normalises its lists.
func (n *Notice) Validate() error {
	for _, f := range []struct {
		name, v  string
		min, max int
	}{{"reference", n.Reference, 1, 64}, {"title", n.Title, 1, 200}, {"revision", n.Revision, 1, 16},
		{"required_work", n.RequiredWork, 1, 8000}} {
		if err := checkText(f.name, f.v, f.min, f.max); err != nil {
			return err
		}
	}
	if _, err := time.Parse(time.DateOnly, n.IssuedOn); err != nil {
		return FieldError("issued_on", "must be a date YYYY-MM-DD")
	}
	if n.Category != NoticeMandatory && n.Category != NoticeAdvisory {
		return FieldError("category", "must be mandatory or advisory")
	}
	if err := n.Applicability.validate(); err != nil {
		return err
	}
	return n.Window.validate()
}

func (a *NoticeApplicability) validate() error {
	if a.PartKind != nil && !a.PartKind.Valid() {
		return FieldError("applicability.part_kind", "unknown part kind %q", *a.PartKind)
	}
	if a.PartKind == nil && len(a.PartNumbers) > 0 {
		return FieldError("applicability.part_numbers", "part numbers need a part_kind")
	}
	if a.PartKind == nil && len(a.AirframeModels) == 0 && len(a.Software) == 0 {
		return FieldError("applicability", "say what the notice applies to: part_kind, airframe_models or software")
	}
	lists := []struct {
		name string
		l    *[]string
	}{{"part_numbers", &a.PartNumbers}, {"airframe_models", &a.AirframeModels}}
	for _, f := range lists {
		if *f.l == nil {
			*f.l = []string{}
		}
		for i, s := range *f.l {
			s = strings.TrimSpace(s)
			if s == "" || len(s) > 64 {
				return FieldError("applicability."+f.name, "%s[%d] must be 1 to 64 characters", f.name, i)
			}
			(*f.l)[i] = s
		}
	}
	if a.Software == nil {
		a.Software = []SoftwareRange{}
	}
	seen := map[PartKind]bool{}
	for i, r := range a.Software {
		field := "applicability.software[" + strconv.Itoa(i) + "]"
		if !r.PartKind.CarriesSoftware() {
			return FieldError(field+".part_kind", "must be one of %v", SoftwareKinds)
		}
		if seen[r.PartKind] {
			return FieldError(field+".part_kind", "one range per part kind")
		}
		seen[r.PartKind] = true
		if r.Min == nil && r.Below == nil {
			return FieldError(field, "give min, below or both")
		}
		var lo, hi Version
		var err error
		if r.Min != nil {
			if lo, err = ParseVersion(field+".min", *r.Min); err != nil {
				return err
			}
		}
		if r.Below != nil {
			if hi, err = ParseVersion(field+".below", *r.Below); err != nil {
				return err
			}
		}
		if r.Min != nil && r.Below != nil && lo.Compare(hi) >= 0 {
			return FieldError(field+".below", "must be after min")
		}
	}
	return nil
}

func (w *NoticeWindow) validate() error {
	if w.From == "" {
		w.From = WindowFromIssue
	}
	if w.From != WindowFromIssue && w.From != WindowFromApplicable {
		return FieldError("window.from", "must be issue or applicable")
	}
	if w.WarnAt == 0 {
		w.WarnAt = 0.9
	}
	if !(w.WarnAt > 0 && w.WarnAt < 1) {
		return FieldError("window.warn_at", "must be between 0 and 1")
	}
	interval := false
	if w.FlightHours != nil {
		if !(*w.FlightHours > 0 && *w.FlightHours <= 100000) {
			return FieldError("window.flight_hours", "must be in (0, 100000]")
		}
		interval = true
	}
	for _, f := range []struct {
		name string
		v    *int
	}{{"flights", w.Flights}, {"days", w.Days}} {
		if f.v != nil {
			if *f.v <= 0 || *f.v > 100000 {
				return FieldError("window."+f.name, "must be a whole number from 1 to 100000")
			}
			interval = true
		}
	}
	if w.DueOn != nil {
		if _, err := time.Parse(time.DateOnly, *w.DueOn); err != nil {
			return FieldError("window.due_on", "must be a date YYYY-MM-DD")
		}
		if w.Recurring {
			return FieldError("window.recurring", "a recurring notice is due within an interval, not by a date")
		}
	}
	if w.DueOn == nil && !interval {
		return FieldError("window", "give due_on, or flight_hours, flights or days")
	}
	return nil
}

// Subjects says whether the notice's subjects are parts (and of which kind)
// or airframes.
func (a *NoticeApplicability) Subjects() (kind string, partKind PartKind) {
	if a.PartKind != nil {
		return "part", *a.PartKind
	}
	return "airframe", ""
}

// Covers reports whether a version lies in the range (SemVer precedence).
func (r SoftwareRange) Covers(version string) bool {
	v, err := ParseVersion("version", version)
	if err != nil {
		return false // the register only holds parseable versions
	}
	if r.Min != nil {
		lo, err := ParseVersion("min", *r.Min)
		if err != nil || v.Compare(lo) < 0 {
			return false
		}
	}
	if r.Below != nil {
		hi, err := ParseVersion("below", *r.Below)
		if err != nil || v.Compare(hi) >= 0 {
			return false
		}
	}
	return true
}

// IssuedAt is the notice's issue as a moment (the start of its day, UTC).
func (n *Notice) IssuedAt() time.Time {
	t, _ := time.Parse(time.DateOnly, n.IssuedOn)
	return t
}

// ETagVersion is the version an ETag names.
func (n *Notice) ETagVersion() int { return n.Version }
